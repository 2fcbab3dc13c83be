"""Issue 4: the stage kinds (ladder, band-pass, Sallen-Key, MFB) against outside sources.

Stages are written as small TOML files in tmp_path, loaded by rcdoc.input.project
and analysed by the per-stage pipeline, so the kinds' networks, the loader and
the metrics are all exercised. References, named beside each check: the
textbook transfer functions (project-format.md and nodal analysis) evaluated by
scipy.signal.freqs, scipy.signal.butter / bessel, and textbook results for
second-order sections. The engine's own tests cover raw networks.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import signal

from boards import analyse_one, load
from rcdoc.kinds import analyse_stage
from rcdoc.analysis.evaluate import Evaluator
from rcdoc.kinds import KINDS
from rcdoc.analysis.spread import build_batch

TWO_PI = 2 * math.pi


def stage_toml(kind: str, parts: dict[str, str], extra: str = "", sid: str = "s",
               checks: str = "") -> str:
    """One [[stage]] table; ``extra`` holds stage keys, ``checks`` [[stage.check]] tables."""
    lines = [f'[[stage]]\nid = "{sid}"\ntitle = "{kind} under test"\nkind = "{kind}"', extra]
    lines += [f'parts.{role} = {{ value = "{v}", tolerance = "1%" }}' for role, v in parts.items()]
    return "\n".join(lines) + "\n" + checks


def freqs_db(b, a, f_hz):
    """Gain in dB of the textbook transfer function b(s)/a(s) (scipy.signal.freqs)."""
    _, h = signal.freqs(b, a, worN=TWO_PI * np.asarray(f_hz))
    return h


def all_rows(tmp_path, stages, analysis="samples = 200"):
    """Every batch row (nominal, Monte Carlo, probes, corners) of the first stage,
    with the kind's network solved over the stage's sweep."""
    project = load(tmp_path, stages, analysis)
    st = project.stages[0]
    res = analyse_stage(st, project.analysis)
    batch = build_batch(st, project.analysis)
    ev = Evaluator(st, res.network, batch.values, res.freqs_hz, res.passband, res.char_hz)
    return res, batch.values, ev.h


# ---- rc-ladder -----------------------------------------------------------------

def test_equal_two_section_ladder(tmp_path):
    r, c = 10e3, 10e-9
    res = analyse_one(tmp_path, stage_toml("rc-ladder", {"r1": "10k", "c1": "10n",
                                                         "r2": "10k", "c2": "10n"}))
    # Two equal sections, each loading the last: H(s) = 1/(s²τ² + 3sτ + 1)
    # (textbook), −3 dB where x⁴ + 7x² − 1 = 0, x = ωτ: f = 0.0596/(RC).
    x = math.sqrt((-7 + math.sqrt(53)) / 2)
    assert res.metric("corner").nominal == pytest.approx(x / (TWO_PI * r * c), rel=1e-7)
    assert res.metric("corner").nominal * r * c == pytest.approx(0.0596, abs=5e-5)
    # Denominator s²τ² + 3sτ + 1: ω0 = 1/τ and Q = 1/3.
    assert res.metric("f0").nominal == pytest.approx(1 / (TWO_PI * r * c), rel=1e-9)
    assert res.metric("q").nominal == pytest.approx(1 / 3, rel=1e-9)
    h_ref = freqs_db([1.0], [(r * c) ** 2, 3 * r * c, 1.0], res.freqs_hz)
    np.testing.assert_allclose(res.h_nominal, h_ref, rtol=1e-9, atol=1e-12)


def test_unequal_ladder_against_textbook_transfer_function(tmp_path):
    parts = {"r1": "4.7k", "c1": "22n", "r2": "33k", "c2": "2.2n"}
    res, v, h = all_rows(tmp_path, stage_toml("rc-ladder", parts))
    # Two sections: H(s) = 1/(s²R1C1R2C2 + s(R1C1 + R2C2 + R1C2) + 1) (textbook).
    r1, c1, r2, c2 = 4.7e3, 22e-9, 33e3, 2.2e-9
    h_ref = freqs_db([1.0], [r1 * c1 * r2 * c2, r1 * c1 + r2 * c2 + r1 * c2, 1.0], res.freqs_hz)
    np.testing.assert_allclose(res.h_nominal, h_ref, rtol=1e-9, atol=1e-12)
    # Every row of the spread (Monte Carlo, probes, worst-case corners) too.
    s = 2j * math.pi * res.freqs_hz[None, :]
    R1, C1, R2, C2 = (v[k][:, None] for k in ("r1", "c1", "r2", "c2"))
    h_rows = 1 / (s ** 2 * R1 * C1 * R2 * C2 + s * (R1 * C1 + R2 * C2 + R1 * C2) + 1)
    np.testing.assert_allclose(h, h_rows, rtol=1e-9, atol=1e-12)


# ---- Sallen-Key and MFB ----------------------------------------------------------

def sallen_key(r1="10k", r2="10k", c1="20n", c2="10n", extra="", checks=""):
    return stage_toml("sallen-key-lowpass", {"r1": r1, "r2": r2, "c1": c1, "c2": c2}, extra,
                      checks=checks)


def test_sallen_key_against_its_transfer_function(tmp_path):
    res, v, h = all_rows(tmp_path, sallen_key(r1="8.2k", r2="15k", c1="33n", c2="4.7n"))
    # Unity-gain Sallen-Key (project-format.md, nodal analysis):
    # H(s) = 1/(s² r1 r2 c1 c2 + s c2 (r1 + r2) + 1).
    r1, r2, c1, c2 = 8.2e3, 15e3, 33e-9, 4.7e-9
    h_ref = freqs_db([1.0], [r1 * r2 * c1 * c2, c2 * (r1 + r2), 1.0], res.freqs_hz)
    np.testing.assert_allclose(res.h_nominal, h_ref, rtol=1e-8, atol=1e-12)
    s = 2j * math.pi * res.freqs_hz[None, :]
    R1, R2, C1, C2 = (v[k][:, None] for k in ("r1", "r2", "c1", "c2"))
    np.testing.assert_allclose(h, 1 / (s ** 2 * R1 * R2 * C1 * C2 + s * C2 * (R1 + R2) + 1),
                               rtol=1e-8, atol=1e-12)
    # Textbook second-order section: f0 = 1/(2π√(r1r2c1c2)), Q = √(r1r2c1c2)/(c2(r1 + r2)).
    assert res.metric("f0").nominal == pytest.approx(
        1 / (TWO_PI * math.sqrt(r1 * r2 * c1 * c2)), rel=1e-9)
    assert res.metric("q").nominal == pytest.approx(
        math.sqrt(r1 * r2 * c1 * c2) / (c2 * (r1 + r2)), rel=1e-9)


def test_sallen_key_with_gain_resistors(tmp_path):
    # Non-unity gain K = 1 + rf/rg (follower with gain, nodal analysis):
    # H(s) = K / (s² r1r2c1c2 + s(c2(r1 + r2) + r1c1(1 − K)) + 1).
    stage = stage_toml("sallen-key-lowpass", {"r1": "10k", "r2": "10k", "c1": "10n",
                                              "c2": "10n", "rf": "5.6k", "rg": "10k"})
    res = analyse_one(tmp_path, stage)
    r, c, k = 10e3, 10e-9, 1 + 5.6e3 / 10e3
    h_ref = freqs_db([k], [r * r * c * c, c * 2 * r + r * c * (1 - k), 1.0], res.freqs_hz)
    np.testing.assert_allclose(res.h_nominal, h_ref, rtol=1e-8)
    assert res.metric("passband_gain").nominal == pytest.approx(20 * math.log10(k), abs=1e-9)
    # Equal parts: Q = 1/(3 − K) (textbook equal-component Sallen-Key).
    assert res.metric("q").nominal == pytest.approx(1 / (3 - k), rel=1e-9)


def test_mfb_against_its_transfer_function(tmp_path):
    parts = {"r1": "10k", "r2": "22k", "r3": "6.8k", "c1": "47n", "c2": "2.2n"}
    res, v, h = all_rows(tmp_path, stage_toml("mfb-lowpass", parts))
    # MFB low-pass (project-format.md, nodal analysis), inverting:
    # H(s) = −(r2/r1) / (s² r2 r3 c1 c2 + s c2 (r2 + r3 + r2 r3/r1) + 1).
    r1, r2, r3, c1, c2 = 10e3, 22e3, 6.8e3, 47e-9, 2.2e-9
    a = [r2 * r3 * c1 * c2, c2 * (r2 + r3 + r2 * r3 / r1), 1.0]
    h_ref = freqs_db([-r2 / r1], a, res.freqs_hz)
    np.testing.assert_allclose(res.h_nominal, h_ref, rtol=1e-8, atol=1e-12)
    s = 2j * math.pi * res.freqs_hz[None, :]
    R1, R2, R3, C1, C2 = (v[k][:, None] for k in ("r1", "r2", "r3", "c1", "c2"))
    h_rows = -(R2 / R1) / (s ** 2 * R2 * R3 * C1 * C2 + s * C2 * (R2 + R3 + R2 * R3 / R1) + 1)
    np.testing.assert_allclose(h, h_rows, rtol=1e-8, atol=1e-12)
    # Same denominator read as a second-order section: ω0² = 1/a0, ω0/Q = a1/a0.
    w0 = 1 / math.sqrt(a[0])
    assert res.metric("f0").nominal == pytest.approx(w0 / TWO_PI, rel=1e-9)
    assert res.metric("q").nominal == pytest.approx(math.sqrt(a[0]) / a[1], rel=1e-9)
    assert res.metric("passband_gain").nominal == pytest.approx(20 * math.log10(r2 / r1),
                                                                abs=1e-9)


@pytest.mark.slow
def test_sallen_key_butterworth(tmp_path):
    # Equal resistors in the unity-gain Sallen-Key give Q = ½·√(c1/c2) (textbook);
    # Butterworth Q = 1/√2 needs c1 = 2·c2. ω0 = 1/(R·√(c1·c2)).
    r, c1, c2 = 10e3, 20e-9, 10e-9
    w0 = 1 / (r * math.sqrt(c1 * c2))
    res = analyse_one(tmp_path, sallen_key(c1="20n", c2="10n"))
    assert res.metric("q").nominal == pytest.approx(0.7071, abs=5e-5)
    assert res.metric("f0").nominal == pytest.approx(w0 / TWO_PI, rel=1e-9)
    # scipy.signal.butter(2, ω0, analog=True): s² + √2·ω0·s + ω0².
    b, a = signal.butter(2, w0, analog=True)
    h_ref = freqs_db(b, a, res.freqs_hz)
    np.testing.assert_allclose(20 * np.log10(np.abs(res.h_nominal)),
                               20 * np.log10(np.abs(h_ref)), atol=0.01)
    # Butterworth: −3 dB at ω0 and no peaking (maximally flat; textbook).
    assert res.metric("corner").nominal == pytest.approx(w0 / TWO_PI, rel=1e-6)
    assert res.metric("peaking").nominal == pytest.approx(0.0, abs=1e-6)


@pytest.mark.slow
def test_sallen_key_bessel(tmp_path):
    # scipy.signal.bessel(2, ω0, analog=True, norm="phase") is s² + √3·ω0·s + ω0²
    # (the Bessel polynomial s² + 3s + 3 rescaled so its natural frequency is ω0):
    # Q = 1/√3. With equal resistors Q = ½·√(c1/c2), so c1/c2 = 4/3: c1 = 4 nF,
    # c2 = 3 nF; ω0 = 1/(R·√(c1·c2)).
    r, c1, c2 = 10e3, 4e-9, 3e-9
    w0 = 1 / (r * math.sqrt(c1 * c2))
    res = analyse_one(tmp_path, sallen_key(c1="4n", c2="3n"))
    assert res.metric("q").nominal == pytest.approx(1 / math.sqrt(3), rel=1e-9)
    b, a = signal.bessel(2, w0, analog=True, norm="phase")
    h_ref = freqs_db(b, a, res.freqs_hz)
    np.testing.assert_allclose(20 * np.log10(np.abs(res.h_nominal)),
                               20 * np.log10(np.abs(h_ref)), atol=0.01)
    # Maximally flat delay at low frequency: τ(0) = √3/ω0 (from s² + √3ω0 s + ω0²:
    # τ = a1/a0 at DC, textbook) -> the group delay metric at f0/100.
    res2 = analyse_one(tmp_path, sallen_key(c1="4n", c2="3n", checks=(
        f'[[stage.check]]\nmetric = "group_delay"\nat = "{w0 / TWO_PI / 100:.6f} Hz"\n'
        'max = "1 s"')), name="delay")
    gd = res2.metric("group_delay").nominal
    assert gd == pytest.approx(math.sqrt(3) / w0, rel=1e-4)


@pytest.mark.slow
def test_sallen_key_peaking_at_q2(tmp_path):
    # Q = ½·√(160/10) = 2. Peak of a second-order low-pass with Q > 1/√2:
    # |H|max = Q/√(1 − 1/(4Q²)) at ω0·√(1 − 1/(2Q²)) (textbook): 6.30 dB.
    res = analyse_one(tmp_path, sallen_key(c1="160n", c2="10n"))
    q = 2.0
    assert res.metric("q").nominal == pytest.approx(q, rel=1e-9)
    assert res.metric("peaking").nominal == pytest.approx(
        20 * math.log10(q / math.sqrt(1 - 1 / (4 * q * q))), abs=1e-3)


def test_finite_gbw_follows_single_pole_model(tmp_path):
    # Follower Sallen-Key with an op-amp of GBW = 10·f0 and no stated DC gain:
    # A(s) = ωt/s (single-pole model, a0 -> ∞). Nodal analysis with
    # V+ = Vo·(1 + s/ωt) gives the third-order closed loop
    #   H(s) = 1 / ((1 + s/ωt)·P(s) − s·r1c1),
    #   P(s) = s² r1r2c1c2 + s(r1c1 + r2c2 + r1c2) + 1,
    # which tends to the ideal 1/(s² r1r2c1c2 + s c2(r1 + r2) + 1) as ωt -> ∞.
    r, c1, c2 = 10e3, 20e-9, 10e-9
    f0 = 1 / (TWO_PI * r * math.sqrt(c1 * c2))
    gbw = 10 * f0
    wt = TWO_PI * gbw
    res = analyse_one(tmp_path, sallen_key(extra=f'amplifier = {{ gbw = "{gbw:.6f} Hz" }}'))
    p = np.array([r * r * c1 * c2, r * c1 + r * c2 + r * c2, 1.0])
    den = np.polymul([1 / wt, 1.0], p) - np.array([0.0, 0.0, r * c1, 0.0])
    h3 = freqs_db([1.0], den, res.freqs_hz)
    np.testing.assert_allclose(res.h_nominal, h3, rtol=1e-7, atol=1e-12)
    # Direction and amount: the dominant pole pair of the third-order denominator
    # (np.roots) has a higher Q and a lower f0 than the ideal 0.7071 and f0.
    poles = sorted(np.roots(den), key=abs)[:2]
    f0_3 = math.sqrt(abs(poles[0] * poles[1])) / TWO_PI
    q_3 = math.sqrt(abs(poles[0] * poles[1])) / abs((poles[0] + poles[1]).real)
    assert res.metric("f0").nominal == pytest.approx(f0_3, rel=1e-7)
    assert res.metric("q").nominal == pytest.approx(q_3, rel=1e-7)
    assert q_3 > 1 / math.sqrt(2) * 1.03 and f0_3 < f0 * 0.97
    # The ideal response is far from the finite-GBW one (the check above can fail).
    h_ideal = freqs_db([1.0], [r * r * c1 * c2, c2 * 2 * r, 1.0], res.freqs_hz)
    assert np.max(np.abs(np.abs(res.h_nominal) - np.abs(h_ideal))) > 0.01


# ---- rc-bandpass -------------------------------------------------------------------

def test_rc_bandpass_corners_and_transfer_function(tmp_path):
    r1, c1, r2, c2 = 100e3, 100e-9, 10e3, 1e-9
    res = analyse_one(tmp_path, stage_toml("rc-bandpass", {"c1": "100n", "r1": "100k",
                                                           "r2": "10k", "c2": "1n"}))
    # Nodal analysis of series c1, shunt r1, series r2, shunt c2:
    # H(s) = s r1c1 / (s² r1c1r2c2 + s(r1c1 + r2c2 + r1c2) + 1).
    a2, a1 = r1 * c1 * r2 * c2, r1 * c1 + r2 * c2 + r1 * c2
    h_ref = freqs_db([r1 * c1, 0.0], [a2, a1, 1.0], res.freqs_hz)
    np.testing.assert_allclose(res.h_nominal, h_ref, rtol=1e-9, atol=1e-15)
    # As a second-order band-pass: ω0 = 1/√a2, Q = √a2/a1, peak gain r1c1/a1, and the
    # −3 dB points ω± = ω0(√(1 + 1/(4Q²)) ± 1/(2Q)) (textbook band-pass result).
    w0, q = 1 / math.sqrt(a2), math.sqrt(a2) / a1
    root = math.sqrt(1 + 1 / (4 * q * q))
    assert res.metric("corner_low").nominal == pytest.approx(
        w0 * (root - 1 / (2 * q)) / TWO_PI, rel=1e-7)
    assert res.metric("corner_high").nominal == pytest.approx(
        w0 * (root + 1 / (2 * q)) / TWO_PI, rel=1e-7)
    assert res.metric("passband_gain").nominal == pytest.approx(
        20 * math.log10(r1 * c1 / a1), abs=1e-6)


def test_sharp_band_pass_corners(tmp_path):
    # Series R into a parallel L ∥ C (network kind): H(s) = (s/RC)/(s² + s/RC + 1/LC),
    # a second-order band-pass with ω0 = 1/√(LC), Q = R·√(C/L) = 10 and unity gain at
    # ω0 (the tank is an open circuit there). −3 dB points
    # ω± = ω0(√(1 + 1/(4Q²)) ± 1/(2Q)) (textbook band-pass result). At Q = 10 the
    # top of the response lies between sweep points, so this also checks the refinement.
    els = ('[{ part = "r1", between = ["in", "out"] }, { part = "l1", between = ["out", "0"] },'
           ' { part = "c1", between = ["out", "0"] }]')
    stage = stage_toml("network", {"r1": "10k", "l1": "10m", "c1": "10n"},
                       f'input = "in"\noutput = "out"\npassband = "band"\nelements = {els}\n')
    res = analyse_one(tmp_path, stage)
    r, l, c = 10e3, 10e-3, 10e-9
    w0, q = 1 / math.sqrt(l * c), r * math.sqrt(c / l)
    root = math.sqrt(1 + 1 / (4 * q * q))
    assert res.metric("corner_low").nominal == pytest.approx(
        w0 * (root - 1 / (2 * q)) / TWO_PI, rel=1e-8)
    assert res.metric("corner_high").nominal == pytest.approx(
        w0 * (root + 1 / (2 * q)) / TWO_PI, rel=1e-8)
    assert res.metric("passband_gain").nominal == pytest.approx(0.0, abs=1e-9)


@pytest.mark.parametrize("sweep", ["", 'sweep = ["10 Hz", "3 kHz"]'])
def test_rc_highpass_worked_example(tmp_path, sweep):
    # Worked example (open textbook companion): 47 kΩ, 2.2 nF -> fL = 1539 Hz;
    # fc = 1/(2πRC) (textbook). The −3 dB point is relative to the high-frequency
    # gain, wherever the sweep ends (here also 2·fc).
    res = analyse_one(tmp_path, stage_toml("rc-highpass", {"c": "2.2n", "r": "47k"}),
                      f"samples = 200\n{sweep}")
    assert res.metric("corner").nominal == pytest.approx(1 / (TWO_PI * 47e3 * 2.2e-9), rel=1e-7)
    assert res.metric("corner").nominal == pytest.approx(1539, abs=0.5)


# ---- each passive kind equals its element-by-element network ----------------------

EQUIVALENTS = {
    "rc-lowpass": ({"r": "4.7k", "c": "10n"}, "low",
                   [("r", "in", "out"), ("c", "out", "0")]),
    "rc-highpass": ({"c": "100n", "r": "22k"}, "high",
                    [("c", "in", "out"), ("r", "out", "0")]),
    "rc-ladder": ({"r1": "1k", "c1": "100n", "r2": "4.7k", "c2": "22n", "r3": "22k",
                   "c3": "4.7n"}, "low",
                  [("r1", "in", "n1"), ("c1", "n1", "0"), ("r2", "n1", "n2"),
                   ("c2", "n2", "0"), ("r3", "n2", "out"), ("c3", "out", "0")]),
    "rc-bandpass": ({"c1": "1u", "r1": "47k", "r2": "10k", "c2": "10n"}, "band",
                    [("c1", "in", "hp"), ("r1", "hp", "0"), ("r2", "hp", "out"),
                     ("c2", "out", "0")]),
}


@pytest.mark.parametrize("kind", sorted(EQUIVALENTS))
def test_kind_equals_its_network(tmp_path, kind):
    parts, passband, elements = EQUIVALENTS[kind]
    # Same source, load, sweep, stage id (hence the same Monte Carlo draws) and parts.
    common = 'source = "600 ohm"\nload = { r = "100 kohm", c = "47 pF" }\n'
    analysis = 'samples = 300\nsweep = ["1 Hz", "1 MHz"]'
    els = ", ".join(f'{{ part = "{p}", between = ["{a}", "{b}"] }}' for p, a, b in elements)
    net = stage_toml("network", parts, common + f'input = "in"\noutput = "out"\n'
                     f'passband = "{passband}"\nelements = [{els}]\n')
    a = analyse_one(tmp_path, stage_toml(kind, parts, common), analysis, name="kind")
    b = analyse_one(tmp_path, net, analysis, name="net")
    assert a.passband == b.passband == passband
    # Same response (Kirchhoff's laws on the same circuit) for the nominal design...
    np.testing.assert_allclose(a.h_nominal, b.h_nominal, rtol=1e-9, atol=1e-15)
    # ...and the same metrics for every Monte Carlo sample and worst-case corner.
    names = {"low": ("corner", "passband_gain"), "high": ("corner", "passband_gain"),
             "band": ("corner_low", "corner_high", "passband_gain")}[passband]
    for name in names:
        ma, mb = a.metric(name), b.metric(name)
        assert mb is not None, name
        np.testing.assert_allclose(ma.samples, mb.samples, rtol=1e-7, atol=1e-9)
        np.testing.assert_allclose(ma.wc, mb.wc, rtol=1e-7, atol=1e-9)


def test_every_kind_offers_its_second_order_metrics():
    # f0, q and peaking belong to the second-order kinds; band-pass kinds offer both
    # corners (project-format.md, check metrics table).
    for kind in ("sallen-key-lowpass", "mfb-lowpass"):
        offered = KINDS[kind].metrics({}, None)
        assert {"f0", "q", "peaking", "corner"} <= set(offered)
    assert {"corner_low", "corner_high"} <= set(KINDS["rc-bandpass"].metrics({}, None))
