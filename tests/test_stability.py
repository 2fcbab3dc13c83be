"""Stability, conditioned poles and the unwrapped phase at a mark.

References, named beside each check: the textbook Sallen-Key low-pass with
gain K = 1 + rf/rg, H(s) = K / (s²·r1r2c1c2 + s·(r1c2 + r2c2 + r1c1·(1 − K)) + 1)
(nodal analysis; equal parts give Q = 1/(3 − K)); the Routh–Hurwitz criterion
(a second-order polynomial with positive leading and constant terms is stable
exactly when its middle coefficient is positive); the LC resonance
ω = 1/√(LC) (Thomson's formula); the series RLC low-pass
H(s) = 1/(s²LC + sRC + 1); the three-section RC ladder
H(s) = 1/(s³τ³ + 5s²τ² + 6sτ + 1) through scipy.signal.freqs and numpy.unwrap.
"""

from __future__ import annotations

import json
import math
import os
import subprocess
import sys
import textwrap
import warnings
from pathlib import Path

import numpy as np
import pytest
from scipy import signal

from boards import analyse_one, load
from rcdoc.analysis import poles as polemod
from rcdoc.kinds import kind_of
from rcdoc.kinds import analyse_stage
from rcdoc.analysis.network import Element, Network
from rcdoc.analysis.spread import build_batch

TWO_PI = 2 * math.pi
ROOT = Path(__file__).resolve().parent.parent


def sallen_key(r1, r2, c1, c2, rf=None, rg=None, tol="1%", drive=True, checks=True):
    lines = ['[[stage]]', 'id = "sk"', 'title = "Sallen-Key under test"',
             'kind = "sallen-key-lowpass"', 'marks = ["1 kHz"]']
    if drive:
        lines.append('drive = { step = "1 V" }')
    parts = {"r1": r1, "r2": r2, "c1": c1, "c2": c2}
    if rf:
        parts.update(rf=rf, rg=rg)
    lines += [f'parts.{k} = {{ value = "{v}", tolerance = "{tol}" }}' for k, v in parts.items()]
    if checks:
        lines += ['[[stage.check]]', 'metric = "q"', 'max = 1']
    return "\n".join(lines) + "\n"


def sk_denominator(v):
    """Textbook Sallen-Key denominator coefficients (a2, a1, a0) per row of part values."""
    k = 1 + v["rf"] / v["rg"] if "rf" in v else 1.0
    a2 = v["r1"] * v["r2"] * v["c1"] * v["c2"]
    a1 = v["r1"] * v["c2"] + v["r2"] * v["c2"] + v["r1"] * v["c1"] * (1 - k)
    return a2, a1, np.ones_like(a2)


# ---- the stability rule -------------------------------------------------------


def test_gain_101_sallen_key_poles_are_the_textbook_ones_and_unstable():
    # Equal parts, K = 101: denominator s²τ² + (3 − K)sτ + 1 (textbook), both roots
    # in the right half-plane.
    r, c, k = 10e3, 10e-9, 101.0
    els = (Element("r1", "R", "in", "a"), Element("r2", "R", "a", "p"),
           Element("c1", "C", "a", "out"), Element("c2", "C", "p", "0"),
           Element("rf", "R", "out", "m"), Element("rg", "R", "m", "0"))
    from rcdoc.analysis.network import OpAmp
    net = Network(elements=els, drive="in", output="out",
                  opamps=(OpAmp("u1", plus="p", minus="m", out="out"),))
    vals = {"r1": [r], "r2": [r], "c1": [c], "c2": [c], "rf": [(k - 1) * 1e3], "rg": [1e3]}
    p = polemod.poles(net, vals)[0]
    p = np.sort_complex(p[np.isfinite(p)])
    ref = np.sort_complex(np.roots([(r * c) ** 2, (3 - k) * r * c, 1.0]))
    np.testing.assert_allclose(p, ref, rtol=1e-9)
    assert np.all(ref.real > 0)
    assert polemod.unstable(p[None])[0]
    np.testing.assert_allclose(np.sort_complex(polemod.offending(p)), ref, rtol=1e-9)


def test_lossless_lc_is_on_the_axis_and_unstable():
    # Series L, shunt C, no resistance: poles ±j/√(LC) (Thomson's formula), on the
    # imaginary axis, which the rule counts as unstable; any series resistance
    # moves them into the left half-plane.
    l, c = 1e-3, 1e-6
    net = Network(elements=(Element("l", "L", "in", "out"), Element("c", "C", "out", "0")),
                  drive="in", output="out")
    p = polemod.poles(net, {"l": [l], "c": [c]})[0]
    p = p[np.isfinite(p)]
    np.testing.assert_allclose(np.sort(np.abs(p.imag)), [1 / math.sqrt(l * c)] * 2, rtol=1e-9)
    assert polemod.unstable(p[None])[0]
    lossy = Network(elements=(Element("r", "R", "in", "a"), Element("l", "L", "a", "out"),
                              Element("c", "C", "out", "0")), drive="in", output="out")
    assert not polemod.unstable(polemod.poles(lossy, {"r": [1.0], "l": [l], "c": [c]}))[0]


@pytest.mark.slow
def test_gain_101_board_fails_unstable_exit_1_json_reason_and_no_warning(tmp_path):
    # K = 1 + 100k/1k = 101 ≥ 3: unstable (textbook, Q = 1/(3 − K)).
    project = tmp_path / "sk101.toml"
    project.write_text(textwrap.dedent("""\
        [board]
        name = "Unstable bench"
        revision = "A"
        date = "2026-01-01"
        [analysis]
        samples = 40
        """) + sallen_key("10k", "10k", "10n", "10n", "100k", "1k"), encoding="utf-8")
    env = dict(os.environ, PYTHONPATH=str(ROOT), PYTHONWARNINGS="error::RuntimeWarning")   # numpy's warnings
    run = subprocess.run([sys.executable, "-m", "rcdoc", "build", str(project), "-o",
                          str(tmp_path / "out"), "--jobs", "1", "--quiet"],
                         capture_output=True, text=True, env=env, cwd=tmp_path)
    assert run.returncode == 1, run.stderr
    assert "Warning" not in run.stderr and "Traceback" not in run.stderr, run.stderr
    data = json.loads((tmp_path / "out" / "sk101.json").read_text(encoding="utf-8"))
    stage = data["stages"][0]
    assert data["status"] == "fail" and stage["status"] == "fail"
    assert stage["reason"] == "unstable"
    assert stage["samples_unstable"] == 40
    q = next(m for m in stage["metrics"] if m["metric"] == "q")
    assert q["nominal"] is None and q["min"] is None and q["missing"] == 40
    check = stage["checks"][0]
    assert check["status"] == "fail" and check["yield"] == 0.0


def test_note_of_unstable_stage_has_caution_with_poles_in_hz(tmp_path):
    from rcdoc.note.page import stage_context
    project = load(tmp_path, sallen_key("10k", "10k", "10n", "10n", "100k", "1k"),
                   analysis="samples = 20")
    res = analyse_stage(project.stages[0], project.analysis)
    ctx = stage_context(res, project)
    text = " ".join(ctx["caution"]["items"])
    # Roots of s²τ² − 98sτ + 1 (textbook, K = 101), in Hz: 16.2 Hz and 156 kHz.
    roots = np.roots([1.0, -98.0, 1.0]) / (TWO_PI * 10e3 * 10e-9)
    assert sorted(roots) == pytest.approx([16.25, 155.98e3], rel=1e-3)
    assert "16.2 Hz + j 0 Hz" in text and "156 kHz + j 0 Hz" in text
    assert not [b for b in ctx["blocks"] if b.get("title") == "Frequency response"]
    assert res.step is None and res.phasors is None


@pytest.mark.slow
def test_near_gain_3_counts_unstable_samples_and_nans_them(tmp_path):
    # K = 1 + 19.5k/10k = 2.95 nominal (Q = 20); 1 % parts push some samples to K ≥ 3.
    with warnings.catch_warnings():
        warnings.simplefilter("error", RuntimeWarning)   # no numpy warning either
        project = load(tmp_path, sallen_key("10k", "10k", "10n", "10n", "19.5k", "10k"),
                       analysis="samples = 300")
        st = project.stages[0]
        res = analyse_stage(st, project.analysis)
    batch = build_batch(st, project.analysis)
    a2, a1, a0 = sk_denominator({k: v[batch.mc] for k, v in batch.values.items()})
    # Routh–Hurwitz: unstable exactly where the middle coefficient is not positive.
    expected = a1 <= 0
    assert 0 < expected.sum() < expected.size
    assert res.samples_unstable == int(expected.sum())
    assert res.reason is None
    q = res.metric("q").samples
    np.testing.assert_array_equal(np.isnan(q), expected)
    # Stable samples keep the textbook Q = √(a2·a0)/a1.
    np.testing.assert_allclose(q[~expected], np.sqrt(a2 * a0)[~expected] / a1[~expected],
                               rtol=1e-7)
    for name in ("noise", "settling", "rise_time", "corner", "capacitor_voltage"):
        s = res.metric(name).samples
        assert np.all(np.isnan(s[expected])), name
    noise = res.metric("noise").samples
    assert np.all(np.isfinite(noise[~expected]))
    assert np.all(noise[~expected] < 1e-2)                 # µV-scale, not 1e8 V
    assert res.verdicts[0].status == "fail"                # Q = 20 > 1 anyway
    assert res.metric("q").nominal == pytest.approx(20.0, rel=1e-9)   # 1/(3 − K)


@pytest.mark.slow
def test_unstable_samples_fail_a_check_they_would_pass(tmp_path):
    # A wide Q limit that every stable sample meets: only the unstable ones fail it.
    stage = sallen_key("10k", "10k", "10n", "10n", "19.5k", "10k", drive=False,
                       checks=False) + '[[stage.check]]\nmetric = "q"\nmax = 1e9\n'
    res = analyse_one(tmp_path, stage, analysis="samples = 300")
    v = res.verdicts[0]
    assert 0 < res.samples_unstable
    assert v.yield_ == pytest.approx(1 - res.samples_unstable / 300)
    assert v.status == "fail"


# ---- conditioning ------------------------------------------------------------


@pytest.mark.slow
def test_extreme_values_sallen_key_gives_closed_form_q(tmp_path):
    # Unity gain: H(s) = 1/(s²·r1r2c1c2 + s·c2(r1 + r2) + 1) (textbook), so
    # Q = √(r1r2c1c2)/(c2(r1 + r2)): 1 GΩ, 1 mΩ, 10 mF, 1 fF give √10 = 3.162.
    r1, r2, c1, c2 = 1e9, 1e-3, 10e-3, 1e-15
    q_ref = math.sqrt(r1 * r2 * c1 * c2) / (c2 * (r1 + r2))
    assert q_ref == pytest.approx(3.162, abs=5e-4)
    with warnings.catch_warnings():
        warnings.simplefilter("error", RuntimeWarning)   # no numpy warning, step included
        res = analyse_one(tmp_path, sallen_key("1 Gohm", "1 mohm", "10 mF", "1 fF", tol="0.1%",
                                               checks=False),
                          analysis="samples = 50")
    assert res.metric("q").nominal == pytest.approx(q_ref, rel=1e-3)
    f0_ref = 1 / (TWO_PI * math.sqrt(r1 * r2 * c1 * c2))
    assert res.metric("f0").nominal == pytest.approx(f0_ref, rel=1e-6)
    # Second-order low-pass peaking 20·log10(Q/√(1 − 1/(4Q²))) (textbook): the
    # response-based peaking and the pole-based Q agree. Solved on nodal matrices
    # the response was 0.025 dB off here; in tree-branch coordinates it is exact.
    peak_ref = 20 * math.log10(q_ref / math.sqrt(1 - 1 / (4 * q_ref ** 2)))
    assert res.metric("peaking").nominal == pytest.approx(peak_ref, abs=1e-6)
    # The gain and phase at the 1 kHz mark from the textbook H(s), and 0 dB at DC.
    s = 2j * math.pi * 1e3
    h_ref = 1 / (s * s * r1 * r2 * c1 * c2 + s * c2 * (r1 + r2) + 1)
    assert res.metric("gain").nominal == pytest.approx(20 * math.log10(abs(h_ref)), rel=1e-6)
    assert res.metric("phase").nominal == pytest.approx(math.degrees(np.angle(h_ref)), rel=1e-6)
    assert abs(res.metric("passband_gain").nominal) < 1e-9
    assert res.samples_unstable == 0


def network_stage(elements: list[tuple[str, str, str]], parts: dict[str, str]) -> str:
    els = ", ".join(f'{{ part = "{p}", between = ["{a}", "{b}"] }}' for p, a, b in elements)
    lines = ['[[stage]]', 'id = "n"', 'title = "Network"', 'kind = "network"',
             'input = "vin"', 'output = "vout"', f"elements = [{els}]"]
    lines += [f'parts.{k} = {{ value = "{v}", tolerance = "1%" }}' for k, v in parts.items()]
    return "\n".join(lines) + "\n"


def test_network_offers_f0_q_from_its_complex_pair(tmp_path):
    # Series R, L, shunt C: H(s) = 1/(s²LC + sRC + 1) (textbook): ω0 = 1/√(LC),
    # Q = √(L/C)/R.
    r, l, c = 10.0, 1e-3, 1e-6
    stage = network_stage([("r1", "vin", "a"), ("l1", "a", "vout"), ("c1", "vout", "0")],
                          {"r1": "10 ohm", "l1": "1 mH", "c1": "1 uF"})
    res = analyse_one(tmp_path, stage, analysis="samples = 50")
    q_ref = math.sqrt(l / c) / r
    assert res.metric("f0").nominal == pytest.approx(1 / (TWO_PI * math.sqrt(l * c)), rel=1e-9)
    assert res.metric("q").nominal == pytest.approx(q_ref, rel=1e-9)
    peak_ref = 20 * math.log10(q_ref / math.sqrt(1 - 1 / (4 * q_ref ** 2)))
    assert res.metric("peaking").nominal == pytest.approx(peak_ref, abs=0.01)


def test_network_without_complex_pair_leaves_f0_q_missing(tmp_path):
    # Two RC sections: real poles only (the discriminant of s²τ² + 3sτ + 1 is 5 > 0).
    stage = network_stage([("r1", "vin", "a"), ("c1", "a", "0"), ("r2", "a", "vout"),
                           ("c2", "vout", "0")],
                          {"r1": "10k", "c1": "10n", "r2": "10k", "c2": "10n"})
    res = analyse_one(tmp_path, stage, analysis="samples = 50")
    for name in ("f0", "q", "peaking"):
        m = res.metric(name)
        assert math.isnan(m.nominal) and np.all(np.isnan(m.samples)), name
    assert math.isfinite(res.metric("corner").nominal)


def test_network_with_time_constants_far_apart_finds_its_corner(tmp_path):
    # A fast section (1 ohm, 1 nF: 1 ns) before a slow one (1 Mohm, 1 uF: 1 s). Its
    # poles, 0.16 Hz and 160 MHz, lie 3 decades and more from their geometric mean
    # (160 kHz), where the sweep used to stop: the corner was "not found".
    # Source: textbook two-section ladder H(s) = 1/(s²R1C1R2C2 + s(R1C1 + R2C2 + R1C2) + 1),
    # its -3 dB point by scipy.optimize.brentq.
    from scipy.optimize import brentq
    r1, c1, r2, c2 = 1.0, 1e-9, 1e6, 1e-6
    stage = network_stage([("r1", "vin", "a"), ("c1", "a", "0"), ("r2", "a", "vout"),
                           ("c2", "vout", "0")],
                          {"r1": "1 ohm", "c1": "1 nF", "r2": "1 Mohm", "c2": "1 uF"})
    res = analyse_one(tmp_path, stage, analysis="samples = 20")
    a, b = r1 * c1 + r2 * c2 + r1 * c2, r1 * c1 * r2 * c2
    w3 = brentq(lambda w: abs(1 / (1 + 1j * w * a - w * w * b)) ** 2 - 0.5, 1e-3, 1e3, xtol=1e-15)
    corner = res.metric("corner")
    assert corner.nominal == pytest.approx(w3 / TWO_PI, rel=1e-9)
    assert corner.missing == 0


def test_band_pass_seven_decades_wide_finds_both_corners(tmp_path):
    # rc-bandpass (series C1, shunt R1, series R2, shunt C2) with corners near 1 Hz
    # and 10 MHz: both lay outside 3 decades of their geometric mean (3.2 kHz).
    # Source: textbook, H(s) = sR1C1/(s²R1C1R2C2 + s(R1C1 + R2C2 + R1C2) + 1); the
    # -3 dB points against its peak by scipy.optimize (minimize_scalar, brentq).
    from scipy.optimize import brentq, minimize_scalar
    r1, c1, r2, c2 = 1e6, 159e-9, 1e3, 15.9e-12

    def gain(f):
        s = 2j * np.pi * f
        return abs(s * r1 * c1 / (s * s * r1 * c1 * r2 * c2 + s * (r1 * c1 + r2 * c2 + r1 * c2) + 1))
    top = minimize_scalar(lambda lf: -gain(10 ** lf), bounds=(1, 6), method="bounded",
                          options={"xatol": 1e-12})
    f_peak, half = 10 ** top.x, gain(10 ** top.x) / np.sqrt(2)
    low = brentq(lambda f: gain(f) - half, 0.01, f_peak, xtol=1e-14)
    high = brentq(lambda f: gain(f) - half, f_peak, 1e9, xtol=1e-6)
    stage = """
        [[stage]]
        id = "bp"
        title = "Wide band-pass"
        kind = "rc-bandpass"
        parts.c1 = { value = "159 nF", tolerance = "1%" }
        parts.r1 = { value = "1 Mohm", tolerance = "1%" }
        parts.r2 = { value = "1 kohm", tolerance = "1%" }
        parts.c2 = { value = "15.9 pF", tolerance = "1%" }
        """
    res = analyse_one(tmp_path, stage, analysis="samples = 20")
    assert res.metric("corner_low").nominal == pytest.approx(low, rel=1e-9)
    assert res.metric("corner_high").nominal == pytest.approx(high, rel=1e-9)


# ---- phase at a mark -----------------------------------------------------------


def test_phase_at_mark_is_unwrapped_from_the_passband(tmp_path):
    # Three equal RC sections, each loading the last: H(s) = 1/(s³τ³ + 5s²τ² + 6sτ + 1)
    # (textbook), evaluated by scipy.signal.freqs and unwrapped by numpy.unwrap from
    # low frequency.
    r, c = 10e3, 10e-9
    tau = r * c
    marks = [100.0, 1e3, 10e3, 30e3]
    stage = (f'[[stage]]\nid = "lad"\ntitle = "Ladder"\nkind = "rc-ladder"\n'
             f'marks = [{", ".join(repr(f"{m:g} Hz") for m in marks)}]\n'
             + "".join(f'parts.{x}{k} = {{ value = "{v}", tolerance = "1%" }}\n'
                       for k in (1, 2, 3) for x, v in (("r", "10k"), ("c", "10n"))))
    res = analyse_one(tmp_path, stage, analysis="samples = 50")
    f = np.concatenate([np.logspace(-1, math.log10(max(marks)), 4000), marks])
    f = np.unique(f)
    _, h = signal.freqs([1.0], [tau ** 3, 5 * tau ** 2, 6 * tau, 1.0], worN=TWO_PI * f)
    ph = np.degrees(np.unwrap(np.angle(h)))
    for m in marks:
        ref = ph[np.searchsorted(f, m)]
        assert res.metric("phase", m).nominal == pytest.approx(ref, abs=1e-6), m
    # At 30 kHz the phase is well past −180°: −250°, not +110°.
    assert res.metric("phase", 30e3).nominal == pytest.approx(-250.0, abs=5.0)
    assert np.all(res.metric("phase", 30e3).samples < -180.0)


@pytest.mark.slow
def test_extreme_values_sallen_key_time_response_matches_the_closed_form(tmp_path):
    # The same 1 GΩ / 1 mΩ / 10 mF / 1 fF unity-gain Sallen-Key. Its step
    # response is the textbook second-order one, H(s) = 1/(s²·a2 + s·a1 + 1),
    # here through scipy.signal.step; the overshoot of a second-order low-pass
    # is exp(−πζ/√(1 − ζ²)) with ζ = 1/(2Q) (textbook). Nodal stamping loses
    # 1/(1 GΩ) beside 1/(1 mΩ): the march then blew up to 1e35 V and gave a
    # 54 ps rise time.
    r1, r2, c1, c2 = 1e9, 1e-3, 10e-3, 1e-15
    a2, a1 = r1 * r2 * c1 * c2, c2 * (r1 + r2)
    stage = load(tmp_path, sallen_key("1 Gohm", "1 mohm", "10 mF", "1 fF", checks=False)).stages[0]
    net = kind_of(stage).build(stage)
    vals = {"r1": np.array([r1]), "r2": np.array([r2]), "c1": np.array([c1]), "c2": np.array([c2])}
    from rcdoc.analysis import engine
    t = np.linspace(0.0, 3e-4, 3001)
    y = engine.step(net, vals, t)[0]
    _, y_ref = signal.step(([1.0], [a2, a1, 1.0]), T=t)
    assert np.max(np.abs(y - y_ref)) < 1e-6
    with warnings.catch_warnings():
        warnings.simplefilter("error", RuntimeWarning)
        res = analyse_one(tmp_path, sallen_key("1 Gohm", "1 mohm", "10 mF", "1 fF", tol="0.1%",
                                               checks=False), analysis="samples = 50")
    q = math.sqrt(a2) / a1
    zeta = 1 / (2 * q)
    peak = 1 + math.exp(-math.pi * zeta / math.sqrt(1 - zeta ** 2))
    # The capacitor that carries the output (c2 from p to ground) peaks with it.
    assert res.metric("capacitor_voltage").nominal == pytest.approx(peak, rel=1e-4)
    # 10–90 % rise time of the closed-form response on a fine grid.
    tf = np.linspace(0.0, 2e-5, 40001)
    _, yf = signal.step(([1.0], [a2, a1, 1.0]), T=tf)
    rise = tf[np.argmax(yf >= 0.9)] - tf[np.argmax(yf >= 0.1)]
    assert res.metric("rise_time").nominal == pytest.approx(rise, rel=1e-3)
    # Settling within 1 % of the final value: the last instant the closed form is outside.
    ts = np.linspace(0.0, 3e-4, 300001)
    _, ys = signal.step(([1.0], [a2, a1, 1.0]), T=ts)
    settle = ts[np.flatnonzero(np.abs(ys - 1.0) > 0.01)[-1] + 1]
    assert res.metric("settling").missing == 0
    assert res.metric("settling").nominal == pytest.approx(settle, rel=2e-3)


def _random_network(rng, nodes: int):
    """A connected random RC(L) network: a chain from the input through every node, then
    extra elements between random pairs, capacitors to ground and a buffered output
    (an op-amp follower with finite gain and bandwidth, or none)."""
    names = ["in"] + [f"n{k}" for k in range(nodes)]
    els, vals = [], {}

    def add(kind, a, b, lo, hi):
        name = f"{kind.lower()}{len(els)}"
        els.append(Element(name, kind, a, b))
        vals[name] = np.array([10.0 ** rng.uniform(lo, hi)])

    for a, b in zip(names, names[1:]):
        add("R", a, b, 1, 6)                      # 10 Ω … 1 MΩ
    for n in names[1:]:
        add("C", n, "0", -10, -6)                 # 100 pF … 1 µF
    for _ in range(nodes):
        a, b = rng.choice(names, 2, replace=False)
        kind = rng.choice(["R", "C", "L"], p=[0.45, 0.45, 0.1])
        add(str(kind), str(a), str(b), *{"R": (1, 6), "C": (-10, -6), "L": (-6, -3)}[str(kind)])
    opamps = ()
    out = names[-1]
    if rng.random() < 0.5:
        from rcdoc.analysis.network import OpAmp
        opamps = (OpAmp("u1", plus=names[-1], minus="out", out="out", gbw_hz=1e7, a0=1e5),)
        out = "out"
    return Network(elements=tuple(els), drive="in", output=out, opamps=opamps), vals


@pytest.mark.parametrize("seed", range(12))
def test_tree_coordinates_agree_with_nodal_form_on_random_networks(seed):
    # Tree-branch coordinates are only a change of variables (x = T·y with T of
    # 0 and ±1): on networks whose values lie within a few decades, where nodal
    # form is accurate, both must give the same frequency response, poles and
    # step response (common practice: two formulations of one system agree).
    from rcdoc.analysis import ac as acmod
    from rcdoc.analysis import engine
    from rcdoc.analysis.assembly import assemble
    from rcdoc.analysis.treecoords import driven_system
    rng = np.random.default_rng(seed)
    net, vals = _random_network(rng, int(rng.integers(2, 6)))
    nodal = assemble(net, vals)
    tree, T = driven_system(net, vals, nodal, tied=(net.output,))
    f = np.logspace(0, 7, 57)
    h_nodal = acmod._ac_fast(nodal, f, nodal.node(net.output))
    h_tree = acmod._ac_fast(tree, f, tree.node(net.output))
    np.testing.assert_allclose(h_tree, h_nodal, rtol=1e-8, atol=1e-12 * np.abs(h_nodal).max())
    # x = T·y: the nodal solution at one frequency from the tree one.
    s = 2j * np.pi * 1e3
    x = np.linalg.solve(nodal.G[0] + s * nodal.C[0], nodal.b)
    y = np.linalg.solve(tree.G[0] + s * tree.C[0], tree.b)
    np.testing.assert_allclose(T @ y, x, rtol=1e-9, atol=1e-12 * np.abs(x).max())
    # The time march (in tree coordinates) against the same Radau IIA steps taken
    # on the nodal matrices, and its final value against the DC gain H(0).
    from rcdoc.analysis.transient import _step_matrices
    p = polemod.poles(net, vals)[0]
    assert not polemod.unstable(p[None])[0]
    slow = np.min(np.abs(p.real[np.isfinite(p)]))
    t = np.linspace(0.0, 12.0 / slow, 3001)
    y_step = engine.step(net, vals, t)[0]
    M, k0, k1 = _step_matrices(nodal.G, nodal.C, nodal.b, t[1] - t[0])
    x, ref = np.zeros(nodal.size), [0.0]
    for _ in t[1:]:
        x = M[0] @ x + k0[0] + k1[0]
        ref.append(x[nodal.node(net.output)])
    np.testing.assert_allclose(y_step, ref, rtol=1e-7, atol=1e-9 * np.max(np.abs(ref)))
    h0 = acmod._ac_fast(nodal, np.array([1e-9 * slow / (2 * np.pi)]), nodal.node(net.output))[0, 0]
    assert y_step[-1] == pytest.approx(h0.real, rel=1e-5, abs=1e-9)
