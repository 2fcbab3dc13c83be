"""rc-notch (passive twin-T): notch frequency and depth against the textbook
transfer function (scipy.signal.freqs) and an independent nodal analysis."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import signal

from rcdoc.errors import ProjectError
from rcdoc.kinds import analyse_stage, load_project

R, C = 10e3, 100e-9
F0 = 1 / (2 * math.pi * R * C)        # 159.15 Hz: balanced twin-T null, f = 1/(2πRC) (textbook)


def notch_project(tmp_path, *, r3=R / 2, tolerance="1%", samples=400, check="", drop=None):
    values = {"r1": R, "r2": R, "c3": 2 * C, "c1": C, "c2": C, "r3": r3}
    parts = "\n".join(f'parts.{k} = {{ value = "{v:.6g}", tolerance = "{tolerance}" }}'
                      for k, v in values.items() if k != drop)
    text = f"""
[board]
name = "Notch test"
revision = "A"
date = "2026-01-01"
[analysis]
samples = {samples}
[[stage]]
id = "notch"
title = "Twin-T"
kind = "rc-notch"
{parts}
{check}
"""
    f = tmp_path / "notch.toml"
    f.write_text(text)
    return load_project(f)


def analysed(tmp_path, **kw):
    p = notch_project(tmp_path, **kw)
    return analyse_stage(p.stages[0], p.analysis)


def textbook_db(f_hz: np.ndarray) -> np.ndarray:
    # Balanced, unloaded twin-T: H(s) = (1 + s²τ²) / (1 + 4sτ + s²τ²), τ = RC (textbook),
    # evaluated by scipy.signal.freqs.
    tau = R * C
    _, h = signal.freqs([tau ** 2, 0, 1], [tau ** 2, 4 * tau, 1], worN=2 * np.pi * f_hz)
    return 20 * np.log10(np.abs(h))


def nodal_h(f_hz: np.ndarray, r1, r2, r3, c1, c2, c3) -> np.ndarray:
    """Vout/Vin of the unloaded twin-T by nodal analysis (Kirchhoff's current law)
    at the nodes t (r1-r2-c3), u (c1-c2-r3) and out, with 1 V at the input."""
    s = 2j * np.pi * np.asarray(f_hz, dtype=float)
    g1, g2, g3 = 1 / r1, 1 / r2, 1 / r3
    y1, y2, y3 = s * c1, s * c2, s * c3
    z = np.zeros_like(s)
    # rows: KCL at t, u, out; columns: Vt, Vu, Vout
    a = np.stack([np.stack([g1 + g2 + y3, z, -g2 + z], -1),
                  np.stack([z, y1 + y2 + g3, -y2], -1),
                  np.stack([-g2 + z, -y2, g2 + y2], -1)], -2)
    b = np.stack([g1 + z, y1, z], -1)[..., None]
    return np.linalg.solve(a, b)[..., 0][..., 2]


def nodal_db(f_hz: np.ndarray, r1, r2, r3, c1, c2, c3) -> np.ndarray:
    """|Vout/Vin| of the unloaded twin-T in dB (nodal_h)."""
    return 20 * np.log10(np.abs(nodal_h(f_hz, r1, r2, r3, c1, c2, c3)))


def test_phase_band_keeps_samples_within_half_a_turn_of_the_nominal(tmp_path):
    # A twin-T out of balance has its zero pair on one side of the jω axis or the
    # other: unwrapped along the sweep, the phase above the notch ends near 0° for
    # R3 2 % high and near −360° for R3 2 % low (the same angle; independent nodal
    # analysis above). The Bode band shows each sample's phase within half a turn of
    # the nominal's, so it does not span that whole turn.
    f = np.geomspace(F0 / 100, F0 * 100, 2001)
    ends = [np.degrees(np.unwrap(np.angle(nodal_h(f, R, R, k * R / 2, C, C, 2 * C))))[-1]
            for k in (0.98, 1.02)]
    assert abs(ends[1] - ends[0]) == pytest.approx(360, abs=10)
    r = analysed(tmp_path, tolerance="2%", samples=400)
    nominal = np.degrees(np.unwrap(np.angle(r.h_nominal)))
    band = r.band
    for edge in (band.phase_min, band.phase_max, band.phase_lo, band.phase_hi):
        assert np.all(np.abs(edge - nominal) <= 180 + 1e-3)
    # Far above the notch every sample's angle is close to the nominal's.
    assert band.phase_max[-1] - band.phase_min[-1] < 10
    assert band.phase_min[-1] <= nominal[-1] <= band.phase_max[-1]


def test_nodal_solver_matches_the_textbook_balanced_twin_t():
    # The independent solver itself, against scipy.signal.freqs on the textbook H(s).
    f = np.geomspace(F0 / 100, F0 * 100, 201)
    f = f[np.abs(f / F0 - 1) > 1e-3]            # off the null, where both are well conditioned
    assert nodal_db(f, R, R, R / 2, C, C, 2 * C) == pytest.approx(textbook_db(f), abs=1e-6)


def test_balanced_notch_frequency_is_one_over_two_pi_rc(tmp_path):
    r = analysed(tmp_path)
    assert r.passband == "band-stop"
    assert [m.name for m in r.metrics[:2]] == ["notch_frequency", "notch_depth"]
    # f = 1/(2πRC) (textbook), within 0.5 %.
    assert r.metric("notch_frequency").nominal == pytest.approx(F0, rel=0.005)


def test_balanced_nominal_depth_matches_the_textbook_transfer_function(tmp_path):
    r = analysed(tmp_path)
    fn = r.metric("notch_frequency").nominal
    depth = r.metric("notch_depth").nominal
    # The balanced null is a true zero on the jω axis: the depth is limited only by how
    # close the refinement gets. scipy.signal.freqs on the textbook H(s) at the same
    # frequency is as deep (both far below any practical notch).
    assert depth < -120
    assert textbook_db(np.array([fn]))[0] < -120
    # Beside the null, where the numbers are well conditioned, the gain is the
    # textbook one (scipy.signal.freqs).
    f = fn * np.array([0.98, 0.999, 1.001, 1.02])
    ev_gain = _gain_at(tmp_path, f)
    assert ev_gain == pytest.approx(textbook_db(f), abs=1e-6)


def _gain_at(tmp_path, f_hz):
    from rcdoc.analysis.evaluate import Evaluator, sweep_for
    from rcdoc.analysis.spread import build_batch
    from rcdoc.kinds import KINDS
    p = notch_project(tmp_path)
    st = p.stages[0]
    kind = KINDS["rc-notch"]
    vals = build_batch(st, p.analysis).take(slice(0, 1))
    ev = Evaluator(st, kind.build(st), vals, sweep_for(F0, p.analysis), "band-stop", F0)
    return np.array([ev.gain(float(x))[0] for x in f_hz])


def test_unbalanced_depth_matches_nodal_analysis(tmp_path):
    # r3 = 0.55 R instead of R/2: the null lifts off the jω axis and the depth is finite.
    r = analysed(tmp_path, r3=0.55 * R)
    fn = r.metric("notch_frequency").nominal
    depth = r.metric("notch_depth").nominal
    expected = nodal_db(np.array([fn]), R, R, 0.55 * R, C, C, 2 * C)[0] \
        - nodal_db(np.array([1e-6]), R, R, 0.55 * R, C, C, 2 * C)[0]   # relative to DC
    assert depth == pytest.approx(expected, abs=0.01)
    # The refined notch is the minimum of the nodal response (dense grid around it).
    f = np.geomspace(F0 / 2, F0 * 2, 200001)
    g = nodal_db(f, R, R, 0.55 * R, C, C, 2 * C)
    assert fn == pytest.approx(f[np.argmin(g)], rel=1e-4)
    assert depth == pytest.approx(g.min(), abs=0.01)
    assert -40 < depth < -10          # a 10 % mismatch of r3 leaves a shallow notch


@pytest.mark.slow
def test_depth_spread_over_one_percent_parts_is_reported_with_yields(tmp_path):
    check = '[[stage.check]]\nmetric = "notch_depth"\nmax = "-40 dB"\nyield = "50%"\n'
    r = analysed(tmp_path, check=check, samples=600)
    m = r.metric("notch_depth")
    v = r.verdicts[0]
    assert v.metric == "notch_depth" and v.required_yield == pytest.approx(0.5)
    # The yield is the share of Monte Carlo samples meeting the limit.
    assert v.yield_ == pytest.approx(np.mean(m.samples <= -40.0))
    # Matching, not the nominal, sets the depth: 1 % parts leave a notch some tens of dB
    # deep (common practice), far shallower than the balanced nominal's.
    median = float(np.median(m.samples))
    assert -90 < median < -30
    assert m.nominal < median - 50
    assert m.wc[1] > np.max(m.samples) - 1e-9        # the worst case encloses the samples
    assert m.wc[1] < 0


def test_missing_role_is_a_project_error(tmp_path):
    with pytest.raises(ProjectError, match="role 'r3' is missing") as info:
        notch_project(tmp_path, drop="r3")
    assert "stage[1].parts.r3" in str(info.value)
