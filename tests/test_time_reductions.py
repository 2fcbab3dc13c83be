"""The time march's on-the-fly reductions and the block-wise crossing searches.

A reduced probe (rcdoc.analysis.transient.Reduce) must hold what numpy's own
reductions (max, sum, indexing: a general-purpose library) give on the full
recording of the same probe; the block-wise searches of rise time and
settling must give what a search over the whole array gives (numpy argmax on
the full comparison, the textbook definitions: first time a response reaches
a level, last time it leaves a band). Textbook check: the 10–90 % rise time
of a first-order low-pass is RC·ln 9. (The stresses built on the reductions
are checked against the textbook in test_stresses.py.)
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from rcdoc.analysis import engine
from rcdoc.analysis import timesearch as ts
from rcdoc.analysis.network import Element, Network
from rcdoc.analysis.transient import Reduce


def ladder() -> Network:
    return Network(elements=(Element("r1", "R", "in", "m"), Element("c1", "C", "m", "0"),
                             Element("r2", "R", "m", "out"), Element("c2", "C", "out", "0")),
                   drive="in", output="out")


def ladder_values(n: int) -> dict[str, np.ndarray]:
    rng = np.random.default_rng(3)
    return {"r1": 1e3 * rng.uniform(0.9, 1.1, n), "c1": 1e-7 * rng.uniform(0.8, 1.2, n),
            "r2": 2e3 * rng.uniform(0.9, 1.1, n), "c2": 5e-8 * rng.uniform(0.8, 1.2, n)}


def single_rc() -> Network:
    """One capacitor behind a source resistance: a single marched state (the march's
    shortcut for the extremes of probes affine in it)."""
    return Network(elements=(Element("rs", "R", "src", "in"), Element("r1", "R", "in", "out"),
                             Element("c1", "C", "out", "0")), drive="src", output="out")


def single_rc_values(n: int) -> dict[str, np.ndarray]:
    rng = np.random.default_rng(4)
    return {"rs": np.full(n, 50.0), "r1": 1e3 * rng.uniform(0.9, 1.1, n),
            "c1": 1e-7 * rng.uniform(0.8, 1.2, n)}


@pytest.mark.parametrize("single", [False, True])
@pytest.mark.parametrize("periodic", [False, True])
def test_reduced_probe_equals_numpy_reductions_of_the_full_recording(periodic, single):
    n, T = 7, 700                           # T spans several runs of the march, not a whole one
    t = np.linspace(0.0, 2e-3, T, endpoint=not periodic)
    u = np.where(t < 0.6e-3, 5.0, 0.0)
    red = Reduce(windows=((1, 300), (300, T), (5, 5)), at=(0, 1, 2, 3, 299, T - 1))
    names = ["out", "v:r1", "v:c1"]
    net, vals = (single_rc(), single_rc_values(n)) if single else (ladder(), ladder_values(n))
    if periodic:
        full = engine.periodic_steady_state(net, vals, t, u, names, input_mode="hold")
        part = engine.periodic_steady_state(net, vals, t, u, names,
                                            input_mode="hold", reduce={"v:r1": red, "v:c1": red})
    else:
        full = engine.transient(net, vals, t, u, names, initial="rest", input_mode="hold")
        part = engine.transient(net, vals, t, u, names, initial="rest",
                                input_mode="hold", reduce={"v:r1": red, "v:c1": red})
    np.testing.assert_array_equal(part["out"], full["out"])       # recorded in full, unchanged
    for name in ("v:r1", "v:c1"):
        y, a = full[name], part[name]
        assert a.shape == (n, red.width)                              # no time axis left
        np.testing.assert_array_equal(red.absmax(a), np.abs(y).max(axis=1))
        for lo, hi in red.windows:
            w = y[:, lo:hi] ** 2
            np.testing.assert_allclose(red.sumsq(a, (lo, hi)), w.sum(axis=1), rtol=1e-13)
            np.testing.assert_array_equal(red.maxsq(a, (lo, hi)),
                                          w.max(axis=1) if hi > lo else np.zeros(n))
        for i in red.at:
            np.testing.assert_array_equal(red.value(a, i), y[:, i])


def test_a_capacitor_current_is_not_reduced():
    t = np.linspace(0.0, 1e-3, 50)
    with pytest.raises(ValueError, match="capacitor current"):
        engine.transient(ladder(), ladder_values(2), t, np.ones(50), ["out", "i:c1"],
                         reduce={"i:c1": Reduce()})


def _last_outside_full(y, fin, scale, band):
    """The search over the whole array (numpy argmax on the full comparison)."""
    err = np.abs(y - fin[:, None]) / scale[:, None]
    outside = err > band
    last = y.shape[1] - 1 - np.argmax(outside[:, ::-1], axis=1)
    never = ~outside.any(axis=1) & ~np.isnan(err).any(axis=1)
    return last, never


def test_block_search_of_the_last_exit_equals_the_whole_array_search():
    T = 1000                                # several blocks, the last one partial
    t = np.linspace(0.0, 10.0, T)
    tau = np.array([0.5, 1.0, 2.0, 40.0, 1.0, 1.0, 1.0, 0.01])
    y = 1.0 - np.exp(-t[None, :] / tau[:, None])
    y[4] = np.nan                           # a missing response
    y[5] = 1.0                              # never leaves the band
    y[7, 300:310] = np.nan                  # gaps in a block that leaves the band (the
    y[7, 305] = 1.5                         # blocks' extremes ignore NaN, as the comparisons do)
    y[3] = 1.0 - np.exp(-t / 2.0) * np.cos(9.0 * t)     # ringing: leaves and re-enters
    fin = np.ones(len(tau))
    fin[6] = 0.0                            # a zero final value and scale
    scale = np.abs(fin)
    for band in (1e-2, 2.0 ** -13):
        with np.errstate(divide="ignore", invalid="ignore"):
            last, never = ts.last_outside(y, fin, scale, band)
            ref_last, ref_never = _last_outside_full(y, fin, scale, band)
        np.testing.assert_array_equal(last, ref_last)
        np.testing.assert_array_equal(never, ref_never)


def test_block_search_of_the_first_crossing_equals_the_whole_array_search():
    # The whole-array search (numpy argmax on the full comparison y / fin >= level).
    T = 1000
    t = np.linspace(0.0, 10.0, T)
    tau = np.array([0.5, 1.0, 3.0, 1.0, 1.0, 0.2, 1.0, 1.0])
    y = 1.0 - np.exp(-t[None, :] / tau[:, None])
    y[1] = 1.0 - np.exp(-t / 2.0) * np.cos(9.0 * t)     # ringing: overshoots, comes back
    y[2, 140:150] = np.nan                  # gaps in the block that first reaches the level
    y[3] *= -2.0                            # a negative final value
    y[4] = 0.0                              # never rises
    y[6, 0] = np.nan                        # a missing response
    fin = np.ones(len(tau))
    fin[3] = -2.0
    fin[5] = 0.0                            # a zero final value: y / 0 is inf, level reached
    fin[7] = np.nan
    for level in (0.1, 0.5, 0.9, 1.2):
        with np.errstate(divide="ignore", invalid="ignore"):
            reach = y / fin[:, None] >= level
            need = np.isfinite(fin) & np.isfinite(y[:, 0])
            got = ts._first_reaching(y, fin, level, need, ts.block_extremes(y))
        ref = np.where(reach.any(axis=1), np.argmax(reach, axis=1), -1)
        np.testing.assert_array_equal(got[need], ref[need])


def test_block_search_of_the_first_crossing_gives_rc_ln9_rise_time():
    # Textbook: a first-order step response 1 − exp(−t/RC) rises from 10 % to 90 % in RC·ln 9.
    rc = np.array([1.0, 2.0, 3.0])
    t = np.linspace(0.0, 24.0 * 3.0, 20001)
    y = 2.5 * (1.0 - np.exp(-t[None, :] / rc[:, None]))
    fin = np.full(3, 2.5)
    rise = ts.cross_time(y, fin, t, 0.9) - ts.cross_time(y, fin, t, 0.1)
    np.testing.assert_allclose(rise, rc * math.log(9.0), rtol=1e-5)
    # A level never reached has no crossing.
    assert np.isnan(ts.cross_time(y, fin, t, 1.5)).all()

