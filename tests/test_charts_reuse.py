"""rcdoc.note.charts_reuse against the method it replaces: a new figure for every chart.

Charts of each kind that reuses its figure (Bode chart, phasor diagram, time
response, histogram) are drawn in a mixed order in which each kind's settings
change from chart to chart (log ranges twelve decades or under one apart,
bands on and off, limits on and off-scale, marks, a single-valued histogram,
one or three phasors, PNG and SVG), once on kept figures and once on new
ones (plain matplotlib figures: no background rectangle with a kept transform,
no grid left on the kept ticks); the outputs must be the same bytes. The
curves are textbook formulas (first-order low-pass H = 1/(1 + j f/fc), step
response 1 - exp(-t/tau)).
"""

from __future__ import annotations

import numpy as np
import pytest

from rcdoc.note import charts_freq, charts_reuse, charts_time

pytestmark = pytest.mark.slow      # every chart drawn twice


def _lowpass(f_lo, f_hi, fc):
    f = np.logspace(np.log10(f_lo), np.log10(f_hi), 201)
    h = 1.0 / (1.0 + 1j * f / fc)
    return f, 20.0 * np.log10(np.abs(h)), np.degrees(np.angle(h))


def _bode(i: int, fmt: str = "png"):
    f_lo, f_hi, fc = [(1e-2, 1e10, 1e3), (300.0, 2000.0, 900.0), (1.0, 1e6, 4.7e4)][i % 3]
    f, g, p = _lowpass(f_lo, f_hi, fc)
    band = None if i % 2 else {f"{k}_{s}": (g if k == "gain" else p) + d
                               for k in ("gain", "phase")
                               for s, d in (("min", -2), ("max", 2), ("lo", -1), ("hi", 1))}
    limits = [] if i % 3 else [{"panel": "gain", "f_lo": None, "f_hi": fc / 10, "min": -1.0,
                                "max": None, "label": "passband"}]
    return charts_freq.bode(f"b{i}", f, g, p, band=band, corner_hz=fc if i != 1 else None,
                            marks=[(fc, -3.0, -45.0)] if i % 2 == 0 else (), limits=limits,
                            title="Stage" if i == 2 else "", fmt=fmt)


def _phasor(i: int):
    vr, vc = complex(0.5, 0.5) * 10.0 ** -i, complex(0.5, -0.5) * 10.0 ** -i
    vectors = [{"label": "V_in", "value": vr + vc, "kind": "source"}]
    if i % 2 == 0:
        vectors += [{"label": "V_R", "value": vr, "kind": "R"},
                    {"label": "V_C", "value": vc, "kind": "C", "tail": vr}]
    return charts_freq.phasor(f"p{i}", vectors, reference_label="I", freq_hz=1591.5 * 10 ** i,
                              angle_deg=-45.0 if i % 2 == 0 else None, fmt="png")


def _histogram(i: int):
    rng = np.random.default_rng(i)
    samples = [1e3 + rng.standard_normal(400), np.full(50, 4.7e-6),
               55.9966e-9 + 1e-13 * rng.standard_normal(300)][i % 3]
    nominal = float(np.median(samples))
    lo, hi = [(998.0, None), (None, None), (1e-9, 1e-7)][i % 3]
    return charts_time.histogram(f"h{i}", samples, nominal=nominal, lo=lo, hi=hi, label="Value",
                                 unit=["ohm", "F", "A"][i % 3], fmt="png")


def _time_response(i: int):
    tau = 10.0 ** (-3 - i)
    t = np.linspace(0.0, 5 * tau, 300)
    y = 1.0 - np.exp(-t / tau)
    return charts_time.time_response(
        f"t{i}", t, y, band=(0.95 * y, 1.05 * y) if i % 2 == 0 else None,
        window={"t": 3 * tau, "lo": 0.95, "hi": 1.05} if i != 1 else None,
        series=[{"t": t, "y": np.ones_like(t), "label": "input", "role": "input"}] if i == 2 else (),
        fmt="png")


def _all() -> list:
    out = []
    for i in range(3):
        out += [_bode(i), _histogram(i), _phasor(i), _time_response(i), _histogram(i + 1)]
    out.append(_bode(0, fmt="svg"))       # an SVG on a figure that last drew a PNG
    out.append(_bode(2))
    return out


def test_kept_figures_draw_the_bytes_of_new_ones(monkeypatch):
    monkeypatch.setattr(charts_reuse, "_KEPT", {})
    monkeypatch.setattr(charts_reuse, "ENABLED", True)
    kept = _all()
    assert len(charts_reuse._KEPT) == 4         # one figure per kind was kept and reused
    # Kept axes clip to a background rectangle that keeps its transform; new ones (below,
    # with reuse off) are plain matplotlib.
    assert all(isinstance(ax.patch, charts_reuse._AxesPatch)
               for _, axes, _ in charts_reuse._KEPT.values() for ax in axes)
    monkeypatch.setattr(charts_reuse, "ENABLED", False)
    fresh = _all()
    assert len(kept) == len(fresh)
    for i, (a, b) in enumerate(zip(kept, fresh)):
        assert a == b, f"chart {i} differs on a kept figure"
