"""Newton's steps for the corner and the peak of the gain against the searches they
replace (bisection, golden section) and outside references.

rcdoc.analysis.sweep_math.newton_crossing and newton_peak find the -3 dB crossing
and the top of |H| from the poles and zeros (slope and curvature of dB against
log-frequency); rows they do not serve fall back to the bisection and the golden
section. Checked here, per Monte Carlo row: against those searches (the methods
replaced, switched on by turning the Newton steps off) for Sallen-Key low-passes
from a Q of 0.5 (repeated poles) to 300 with an ideal and a finite-bandwidth
amplifier (three poles), an MFB low-pass and first-order stages; against
scipy.optimize.brentq on |H| of the textbook unity-gain Sallen-Key
1/(s²·R1R2C1C2 + s·C2(R1 + R2) + 1) (scipy.signal.freqs), and against the
textbook peak of a second-order low-pass, |H|max = Q/√(1 − 1/(4Q²)) for
Q > 1/√2, else the DC gain (any control or filter textbook).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import scipy.signal as sg

from rcdoc.analysis import sweep_math
from rcdoc.analysis.evaluate import Evaluator

from boards import mc_evaluator
from test_sweep_math import sallen_key_corner

HEAD = '[board]\nname = "Newton"\nrevision = "A"\ndate = "2026-01-01"\n'

SK = ('parts.r1 = { value = "11k", tolerance = "5%" }\n'
      'parts.r2 = { value = "11k", tolerance = "5%" }\n'
      'parts.c1 = { value = "CAP", tolerance = "10%", dielectric = "C0G" }\n'
      'parts.c2 = { value = "10 nF", tolerance = "10%", dielectric = "C0G" }\n')
MFB = ('parts.r1 = { value = "10k", tolerance = "1%" }\n'
       'parts.r2 = { value = "10k", tolerance = "1%" }\n'
       'parts.r3 = { value = "5k1", tolerance = "1%" }\n'
       'parts.c1 = { value = "CAP", tolerance = "5%", dielectric = "C0G" }\n'
       'parts.c2 = { value = "1 nF", tolerance = "5%", dielectric = "C0G" }\n')
GBW = 'amplifier = { gbw = "1 MHz", gain = "110 dB" }\n'


def _evaluator(tmp_path, kind, parts, cap, extra=""):
    text = HEAD + "\n[analysis]\nsamples = 300\nseed = 4\n\n[[stage]]\nid = \"s\"\n" \
        f'title = "S"\nkind = "{kind}"\n' + extra + parts.replace("CAP", cap)
    path = tmp_path / "board.toml"
    path.write_text(text, encoding="utf-8")
    return mc_evaluator(path)


def _fresh(ev):
    return Evaluator(ev.stage, ev.network, ev.values, ev.freqs_hz, ev.passband, ev.char_hz)


def _without(monkeypatch, ev, name, what):
    """``what`` of a fresh Evaluator with sweep_math's ``name`` serving no row (the
    search it replaced then serves every row)."""
    monkeypatch.setattr(sweep_math, name, lambda response, rows, *a: np.full(len(rows), np.nan))
    out = what(_fresh(ev))
    monkeypatch.undo()
    return out


# Unity-gain Sallen-Key with R1 = R2: Q = √(C1/C2)/2 (the standard result): 0.5 with
# C1 = C2 (repeated poles), 0.71 with C1 = 2·C2, 6.7 with 180·C2, 300 with 360 000·C2.
CASES = [("sallen-key-lowpass", SK, "10 nF", ""), ("sallen-key-lowpass", SK, "20 nF", ""),
         ("sallen-key-lowpass", SK, "1.8 uF", ""), ("sallen-key-lowpass", SK, "3600 uF", ""),
         ("sallen-key-lowpass", SK, "20 nF", GBW), ("sallen-key-lowpass", SK, "1.8 uF", GBW),
         ("mfb-lowpass", MFB, "10 nF", GBW)]


@pytest.mark.parametrize("kind,parts,cap,extra", CASES)
def test_newton_corner_is_the_bisections(tmp_path, monkeypatch, kind, parts, cap, extra):
    ev, _ = _evaluator(tmp_path, kind, parts, cap, extra)
    # The closed form off as well: Newton's steps then serve two-pole rows too.
    monkeypatch.setattr(sweep_math, "level_crossing", lambda gain, *a: np.full(gain.shape[0], np.nan))
    served = []
    real = sweep_math.newton_crossing

    def counting(*a):
        f = real(*a)
        served.append(np.isfinite(f).mean())
        return f
    monkeypatch.setattr(sweep_math, "newton_crossing", counting)
    fc = _fresh(ev).corner()
    assert served and min(served) > 0.99             # Newton's steps do serve these rows
    monkeypatch.setattr(sweep_math, "newton_crossing",
                        lambda response, rows, *a: np.full(len(rows), np.nan))
    ref = _fresh(ev).corner()                        # the bisection alone
    monkeypatch.undo()
    assert np.array_equal(np.isnan(fc), np.isnan(ref)) and np.isfinite(fc).all()
    assert np.max(np.abs(fc / ref - 1)) < 1e-10


@pytest.mark.parametrize("cap", ["10 nF", "20 nF", "1.8 uF", "3600 uF"])
def test_newton_corner_matches_brentq_on_the_textbook_response(tmp_path, monkeypatch, cap):
    ev, v = _evaluator(tmp_path, "sallen-key-lowpass", SK, cap)
    monkeypatch.setattr(sweep_math, "level_crossing", lambda gain, *a: np.full(gain.shape[0], np.nan))
    fc = _fresh(ev).corner()
    monkeypatch.undo()
    # scipy.signal.freqs and scipy.optimize.brentq (test_sweep_math.sallen_key_corner), a few rows
    for i in range(0, ev.rows, 50):
        assert abs(fc[i] / sallen_key_corner(v, i, fc[i]) - 1) < 1e-9


@pytest.mark.parametrize("kind,parts,cap,extra", CASES)
def test_newton_peak_is_the_golden_sections(tmp_path, monkeypatch, kind, parts, cap, extra):
    ev, _ = _evaluator(tmp_path, kind, parts, cap, extra)
    served = []
    real = sweep_math.newton_peak

    def counting(*a):
        out = real(*a)
        served.append(np.isfinite(out).mean())
        return out
    monkeypatch.setattr(sweep_math, "newton_peak", counting)
    peak = _fresh(ev).peak_db
    monkeypatch.undo()
    assert served and min(served) > 0.99
    ref = _without(monkeypatch, ev, "newton_peak", lambda e: e.peak_db)
    # The golden section's last probes lie 0.618^30 of the bracket from the top: its
    # value is below the top by a second-order gap (5e-9 dB at a Q of 300); Newton's,
    # at the top, is never below it beyond rounding.
    assert np.all(peak >= ref - 1e-12)
    assert np.max(np.abs(peak - ref)) < 1e-8
    assert np.max(np.abs(peak - ref) / np.maximum(np.abs(ref), 1.0)) < 1e-9


@pytest.mark.parametrize("cap", ["10 nF", "20 nF", "1.8 uF", "3600 uF"])
def test_newton_peak_matches_the_textbook_peak(tmp_path, cap):
    ev, v = _evaluator(tmp_path, "sallen-key-lowpass", SK, cap)
    peak = ev.peak_db
    # Textbook second-order low-pass: w0² = 1/(R1R2C1C2), Q = √(R1R2C1C2)/(C2(R1 + R2));
    # |H|max = Q/√(1 − 1/(4Q²)) where Q > 1/√2. Below that |H| falls from DC on, and the
    # top over the swept band is at its lowest frequency (scipy.signal.freqs there).
    rc = v["r1"] * v["r2"] * v["c1"] * v["c2"]
    q = np.sqrt(rc) / (v["c2"] * (v["r1"] + v["r2"]))
    peaks = q > 1 / math.sqrt(2)
    assert peaks.any() == (cap != "10 nF")
    w = 2 * np.pi * ev.freqs_hz[0]
    for i in range(ev.rows):
        if peaks[i]:
            ref = 20 * math.log10(q[i] / math.sqrt(1 - 1 / (4 * q[i] ** 2)))
        else:
            a = [rc[i], v["c2"][i] * (v["r1"][i] + v["r2"][i]), 1.0]
            ref = 20 * math.log10(abs(sg.freqs([1.0], a, worN=[w])[1][0]))
        # 1e-9 relative, 1e-8 at a Q of 300: there the zero-pole-gain form itself gives
        # |H| 1.5e-7 dB below the textbook's at every frequency near the top (its poles'
        # rounding over a resonance 1/600 wide), for the golden section as for Newton.
        assert abs(peak[i] - ref) < (1e-8 if q[i] > 100 else 1e-9) * max(abs(ref), 1.0), i
