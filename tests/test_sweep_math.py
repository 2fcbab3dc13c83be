"""The cheaper arithmetic of rcdoc.analysis.sweep_math and spread.row_percentiles
against the methods they replace and general-purpose libraries.

Sources: numpy.unwrap and numpy.percentile (the methods replaced, general-purpose
library functions); scipy.signal.freqs (a polynomial transfer function evaluated
on jω) and scipy.optimize.brentq (the -3 dB crossing found by root bracketing);
the first-order low-pass corner 1/(2πRC) (any circuits textbook).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import scipy.optimize as so
import scipy.signal as sg

from rcdoc.analysis import sweep_math
from rcdoc.analysis.evaluate import Evaluator
from rcdoc.analysis.spread import row_percentiles, transposed

from boards import mc_evaluator

HEAD = '[board]\nname = "Sweep math"\nrevision = "A"\ndate = "2026-01-01"\n'


def _phases(rng, rows, cols, step):
    """Principal phases of random walks: steps of every size, wraps in both directions."""
    return np.angle(np.exp(1j * np.cumsum(rng.normal(0, step, (rows, cols)), axis=1)))


@pytest.mark.parametrize("step", [0.05, 1.0, 2.5])
def test_unwrap_corrections_are_numpys_unwrap_bit_for_bit(step):
    rng = np.random.default_rng(7)
    p = _phases(rng, 300, 60, step)
    p[0] = 0.0                                       # a row that never wraps
    p[1, 0] = -0.0                                   # numpy keeps the first value as it is
    p[2, :3] = [3.0, 3.0 - math.pi, 3.0]             # steps of exactly π: numpy's boundary rule
    rows, k = sweep_math.unwrap_corrections(p)
    ref = np.unwrap(p, axis=1)                       # numpy.unwrap
    got = sweep_math.unwrapped(p, rows, k)
    assert np.array_equal(got, ref)
    assert np.array_equal(np.signbit(got), np.signbit(ref))
    assert 0 not in rows and (rows.size > 0 or step < 1)


def test_unwrapped_at_is_the_last_value_of_numpys_unwrap():
    rng = np.random.default_rng(1)
    for _ in range(30):
        p = _phases(rng, 40, 31, 1.5)
        seq, last = p[:, :-1], p[:, -1]
        rows, k = sweep_math.unwrap_corrections(seq)
        k_before = np.zeros(len(p))
        k_before[rows] = k[:, -1]
        got = sweep_math.unwrapped_at(last, seq[:, -1], k_before)
        assert np.array_equal(got, np.unwrap(p, axis=1)[:, -1])      # numpy.unwrap


@pytest.mark.parametrize("n", [1, 5, 63, 64, 65, 999, 5000, 20001])
@pytest.mark.parametrize("dtype", [np.float32, np.float64])
def test_row_percentiles_are_numpys(n, dtype):
    rng = np.random.default_rng(n)
    a = (rng.standard_normal((n, 37)) * 3 - 20).astype(dtype)
    a[:, 3] = 1.5                                    # a constant column
    a[::4, 5] = 2.0                                  # many ties
    a[:, 6] *= 1e-30                                 # values decades apart from the rest
    for q in [(5.0, 95.0), (0.0, 100.0), (50.0,), (12.5, 87.5)]:
        ref = np.percentile(a, q, axis=0)            # numpy.percentile, linear method
        got = row_percentiles(transposed(a), q)      # each column, as a row
        assert got.dtype == ref.dtype and np.array_equal(got, ref)
        assert np.array_equal(row_percentiles(np.array(a.T, order="C"), q, overwrite=True), ref)
    a[n // 2, 9] = np.nan                            # a sample without a value: numpy's NaN
    ref = np.percentile(a, (5.0, 95.0), axis=0)
    assert np.array_equal(row_percentiles(transposed(a), (5.0, 95.0)), ref, equal_nan=True)


STAGES = {
    "sallen-key-lowpass": 'parts.r1 = { value = "11k", tolerance = "5%" }\n'
                          'parts.r2 = { value = "11k", tolerance = "5%" }\n'
                          'parts.c1 = { value = "CAP", tolerance = "10%", dielectric = "C0G" }\n'
                          'parts.c2 = { value = "10 nF", tolerance = "10%", dielectric = "C0G" }\n',
    "rc-highpass": 'parts.r = { value = "4k7", tolerance = "1%" }\n'
                   'parts.c = { value = "CAP", tolerance = "5%", dielectric = "C0G" }\n',
    "rc-lowpass": 'parts.r = { value = "4k7", tolerance = "1%" }\n'
                  'parts.c = { value = "CAP", tolerance = "5%", dielectric = "C0G" }\n',
}


def evaluator(tmp_path, kind, cap, samples=300):
    text = HEAD + f"\n[analysis]\nsamples = {samples}\nseed = 4\n\n[[stage]]\nid = \"s\"\n" \
        f'title = "S"\nkind = "{kind}"\n' + STAGES[kind].replace("CAP", cap)
    path = tmp_path / "board.toml"
    path.write_text(text, encoding="utf-8")
    return mc_evaluator(path)


def old_phase(ev, at_hz):
    """The method replaced: np.unwrap over the swept points up to the mark and the mark."""
    f = ev.freqs_hz
    mark = np.angle(ev.h_at(at_hz))
    seq = ev.phase_rad[:, f >= at_hz][:, ::-1] if ev.passband == "high" \
        else ev.phase_rad[:, f <= at_hz]
    if seq.shape[1] == 0:
        return np.degrees(mark)
    return np.degrees(np.unwrap(np.concatenate([seq, mark[:, None]], axis=1), axis=1)[:, -1])


# Unity-gain Sallen-Key with R1 = R2: Q = √(C1/C2)/2 (the standard result): 0.71 with
# C1 = 2·C2, 6.7 with C1 = 180·C2, 300 with C1 = 360 000·C2, 0.5 (repeated poles) with C1 = C2.
@pytest.mark.parametrize("kind,cap", [("sallen-key-lowpass", "20 nF"),
                                      ("sallen-key-lowpass", "1.8 uF"),
                                      ("sallen-key-lowpass", "10 nF"),
                                      ("sallen-key-lowpass", "3600 uF"),
                                      ("rc-highpass", "10 nF"), ("rc-lowpass", "10 nF")])
def test_phase_at_marks_is_the_unwrap_it_replaces(tmp_path, kind, cap):
    ev, _ = evaluator(tmp_path, kind, cap)
    f = ev.freqs_hz
    marks = [f[0] / 3, f[0], f[5] * 1.01, f[150], f[150] * 1.013, f[-1], f[-1] * 2]
    for at in marks:
        assert np.array_equal(ev.phase(at), old_phase(ev, at)), at
    # The band's unwrapped phase is numpy's unwrap of the whole sweep.
    assert np.array_equal(ev.phase_unwrapped, np.unwrap(ev.phase_rad, axis=1))


@pytest.mark.parametrize("cap", ["10 nF", "1 pF", "100 mF"])
def test_first_order_phase_at_marks_without_the_sweep(tmp_path, cap):
    # A first-order low-pass's phase never wraps (Response.never_wraps): a mark's phase
    # takes the one swept point before it, not the whole sweep. The same numbers as
    # np.unwrap over the swept points up to the mark and the mark (old_phase), bit
    # for bit; a row the zero-pole-gain form does not serve, a second-order or a
    # high-pass response take the whole sweep.
    ev, _ = evaluator(tmp_path, "rc-lowpass", cap)
    f = ev.freqs_hz
    marks = [f[0], f[5] * 1.01, f[150], f[150] * 1.013, f[-1], f[-1] * 2]
    assert ev.response.never_wraps()
    got = [ev.phase(at) for at in marks]
    assert "phase_rad" not in ev.__dict__                  # no sweep of the phase
    ref = Evaluator(ev.stage, ev.network, ev.values, ev.freqs_hz, ev.passband, ev.char_hz)
    for at, g in zip(marks, got):
        assert np.array_equal(g, old_phase(ref, at)), at
    ev.response.ok = ev.response.ok.copy()
    ev.response.ok[3] = False
    assert not ev.response.never_wraps()
    for kind, c in (("sallen-key-lowpass", "20 nF"), ("rc-highpass", "10 nF")):
        other, _ = evaluator(tmp_path, kind, c)
        assert not other.response.never_wraps()


def test_angle_is_numpys_angle():
    rng = np.random.default_rng(3)
    h = (rng.standard_normal((200, 50)) + 1j * rng.standard_normal((200, 50))) \
        * 10.0 ** rng.uniform(-150, 150, (200, 50))           # values decades apart
    edge = [0, -0.0 + 0j, complex(-1, 0.0), complex(-1, -0.0), complex(0, 1),
            complex(-0.0, -1), complex(-0.0, 1), complex(np.inf, 1), complex(np.nan, 1),
            complex(-1, 1e-300), complex(-1e300, -1e-300), complex(-5e-324, 1)]
    h[0, :len(edge)] = edge
    ref = np.angle(h)                                        # numpy.angle
    got = sweep_math.angle(h)
    assert np.array_equal(np.isnan(got), np.isnan(ref))
    assert np.nanmax(np.abs(got - ref)) <= 4 * np.finfo(float).eps * math.pi
    # the branch cut as arctan2 takes it: +π above the negative real axis, −π below
    assert got[0, 2] == math.pi and got[0, 3] == -math.pi and got[0, 5] == -math.pi / 2


def test_transposed_copy_is_numpys():
    a = np.random.default_rng(5).standard_normal((1000, 37))
    assert np.array_equal(transposed(a), a.T)
    t = transposed(a, np.float32, np.degrees)
    assert t.flags.c_contiguous and np.array_equal(t, np.degrees(a).astype(np.float32).T)


def test_finite_rows_are_numpys():
    # np.all(np.isfinite(y), axis=1) (numpy): with every value finite, with an
    # infinity, a NaN, infinities of both signs in one row (their sum is NaN), finite
    # values whose sum overflows, complex values and no rows or no columns at all.
    rng = np.random.default_rng(6)
    y = rng.standard_normal((30, 17))
    cases = [y]
    for r, c, v in ((3, 4, np.inf), (5, 0, np.nan), (7, 16, -np.inf)):
        z = y.copy()
        z[r, c] = v
        cases.append(z)
    both = y.copy()
    both[2, :2] = [np.inf, -np.inf]
    big = y.copy()
    big[:, 0] = 1e308
    big[4, 1] = 1e308                                # a finite row whose sum overflows
    cases += [both, big, y * (1 + 1j), np.zeros((0, 5)), np.zeros((4, 0))]
    cplx = y * (1 + 1j)
    cplx[9, 9] = complex(1, np.nan)
    cases.append(cplx)
    for z in cases:
        assert np.array_equal(sweep_math.finite_rows(z), np.all(np.isfinite(z), axis=1))


def test_degrees_is_numpys():
    # numpy's rad2deg is x·(180/π) with the constant rounded once (numpy's npy_math);
    # sweep_math.degrees multiplies by that constant: the same numbers, bit for bit.
    rng = np.random.default_rng(9)
    a = rng.standard_normal(100000) * 10.0 ** rng.uniform(-300, 300, 100000)
    a[:6] = [0.0, -0.0, np.inf, -np.inf, np.nan, 5e-324]
    got, ref = sweep_math.degrees(a), np.degrees(a)
    assert np.array_equal(got, ref, equal_nan=True)
    assert np.array_equal(np.signbit(got), np.signbit(ref))
    b = np.clip(a, -1e36, 1e36).reshape(400, 250)      # within float32's range
    assert np.array_equal(transposed(b, np.float32, sweep_math.degrees),
                          np.degrees(b).astype(np.float32).T, equal_nan=True)


def test_unwrap_corrections_of_a_narrow_phase_skip_the_steps():
    # A phase whose span is under π cannot step by π: no row to correct, as numpy.unwrap
    # leaves it; one with a step just over π takes the steps (and still agrees).
    rng = np.random.default_rng(2)
    p = rng.uniform(-1.5, 1.5, (50, 40))
    rows, k = sweep_math.unwrap_corrections(p)
    assert rows.size == 0 and k.shape == (0, 40)
    assert np.array_equal(sweep_math.unwrapped(p, rows, k), np.unwrap(p, axis=1))
    q = p.copy()
    q[3, 7:9] = [math.pi - 1.4, -1.45]
    rows, k = sweep_math.unwrap_corrections(q)
    assert list(rows) == [3]
    assert np.array_equal(sweep_math.unwrapped(q, rows, k), np.unwrap(q, axis=1))


@pytest.mark.parametrize("cap", ["10 nF", "1 pF", "100 mF"])
def test_first_order_sweep_is_the_general_quadratics(tmp_path, monkeypatch, cap):
    # One real pole and no zero (c2 = 0 in every row): the gain and phase are made
    # without the terms in c2 (response._Quadratic.linear) and the phase in three
    # passes. The same numbers, bit for bit, as the general quadratic arithmetic; rows
    # whose gain has its sign flipped (g·conj(D) in the left half-plane) take the
    # general path within their block.
    from rcdoc.analysis import response
    ev, _ = evaluator(tmp_path, "rc-lowpass", cap)
    quads = ev.response._quadratics()
    assert quads[0] is None and quads[1].linear
    gain, phase = ev.gain_db, ev.phase_rad
    fresh = Evaluator(ev.stage, ev.network, ev.values, ev.freqs_hz, ev.passband, ev.char_hz)
    fresh.response._quadratics()[1].linear = False
    assert np.array_equal(fresh.gain_db, gain) and np.array_equal(fresh.phase_rad, phase)
    flipped = Evaluator(ev.stage, ev.network, ev.values, ev.freqs_hz, ev.passband, ev.char_hz)
    flipped.response.gain[[0, 5, 200]] *= -1
    general = Evaluator(ev.stage, ev.network, ev.values, ev.freqs_hz, ev.passband, ev.char_hz)
    general.response.gain[[0, 5, 200]] *= -1
    general.response._quadratics()[1].linear = False
    assert np.array_equal(flipped.phase_rad, general.phase_rad)
    assert np.allclose(np.abs(flipped.phase_rad[5] - phase[5]), math.pi)
    assert response._right_half(np.array([1.0, 2.0])) and not any(
        response._right_half(np.array(v)) for v in ([1.0, 0.0], [1.0, np.nan], [np.inf]))


def test_squared_modulus_products_are_the_factor_by_factor_ones():
    # noise._abs2_product makes an unscaled product's first factor in place; against
    # the product formed factor by factor from 1 (the arithmetic it replaces), bit
    # for bit: real and complex values, scaled and not, none, one or two of them.
    from rcdoc.analysis.noise import _abs2_product
    rng = np.random.default_rng(4)
    w = 2 * np.pi * np.logspace(0, 6, 31)[None, :]
    sigma = 1e3
    real = -rng.uniform(1e-6, 1e-3, (20, 2)) + 0j
    pair = -rng.uniform(1e-6, 1e-3, 20) + 1j * rng.uniform(1e-6, 1e-3, 20)
    cplx = np.stack([pair, np.conj(pair)], axis=1)
    for eig in (real[:, :0], real[:, :1], real, cplx):
        for scale in (None, rng.uniform(0.5, 2.0, 20)):
            ref = np.ones((20, w.shape[1])) if scale is None else np.repeat(scale[:, None], 31, 1)
            for k in range(eig.shape[1]):
                e = eig[:, k]
                a = 1.0 - sigma * e
                if not np.any(e.imag):
                    t = np.multiply(w, (e.real * e.real)[:, None]) * w + (a.real * a.real)[:, None]
                else:
                    t = np.square(np.multiply(w, -e.imag[:, None]) + a.real[:, None]) \
                        + np.square(np.multiply(w, e.real[:, None]) + a.imag[:, None])
                ref = ref * t
            assert np.array_equal(_abs2_product(sigma, scale, eig, w), ref)


def sallen_key_corner(v, i, near):
    """Row ``i``'s -3 dB corner of the unity-gain Sallen-Key low-pass: scipy.signal.freqs
    of 1/(s²·R1R2C1C2 + s·C2(R1 + R2) + 1) (the standard unity-gain result) and
    scipy.optimize.brentq on |H| = |H(0)|/√2, bracketed within 0.1 % of ``near``."""
    a = [v["r1"][i] * v["r2"][i] * v["c1"][i] * v["c2"][i],
         v["c2"][i] * (v["r1"][i] + v["r2"][i]), 1.0]

    def gap(f):
        return abs(sg.freqs([1.0], a, worN=[2 * np.pi * f])[1][0]) - 1 / math.sqrt(2)
    lo, hi = near * 0.999, near * 1.001
    assert gap(lo) > 0 > gap(hi)
    return so.brentq(gap, lo, hi, xtol=1e-14 * near, rtol=1e-15)


def bisection_corner(ev, monkeypatch):
    """The method replaced: the same Evaluator with the closed form switched off."""
    monkeypatch.setattr(sweep_math, "level_crossing",
                        lambda gain, *a: np.full(gain.shape[0], np.nan))
    fresh = Evaluator(ev.stage, ev.network, ev.values, ev.freqs_hz, ev.passband, ev.char_hz)
    out = fresh.corner()
    monkeypatch.undo()
    return out


@pytest.mark.parametrize("kind,cap", [("sallen-key-lowpass", "20 nF"),      # Q = 0.71
                                      ("sallen-key-lowpass", "10 nF"),      # Q = 0.5, repeated poles
                                      ("sallen-key-lowpass", "1.8 uF"),     # Q = 6.7
                                      ("sallen-key-lowpass", "3600 uF"),    # Q = 300
                                      ("rc-highpass", "10 nF"), ("rc-lowpass", "10 nF"),
                                      ("rc-lowpass", "1 pF"), ("rc-lowpass", "100 mF")])
def test_closed_form_corner_is_the_bisections(tmp_path, monkeypatch, kind, cap):
    ev, v = evaluator(tmp_path, kind, cap)
    r = ev.response
    thr = ev.passband_db - 10 * math.log10(2.0)
    served = np.isfinite(sweep_math.level_crossing(
        r.gain, r.zeros, r.poles, r.pencil.sigma, 10 ** (thr / 10),
        np.full(ev.rows, ev.freqs_hz[0]), np.full(ev.rows, ev.freqs_hz[-1])))
    assert served.all()                              # the closed form does serve these
    fc = ev.corner()
    ref = bisection_corner(ev, monkeypatch)
    assert np.array_equal(np.isnan(fc), np.isnan(ref))
    assert np.nanmax(np.abs(fc / ref - 1)) < 1e-10
    if kind == "rc-lowpass":                         # 1/(2πRC), any circuits textbook
        assert np.max(np.abs(fc * 2 * np.pi * v["r"] * v["c"] - 1)) < 1e-9
    if kind == "sallen-key-lowpass":
        for i in range(0, ev.rows, 60):         # a few rows
            assert abs(fc[i] / sallen_key_corner(v, i, fc[i]) - 1) < 1e-9


def test_level_crossing_falls_back_where_it_cannot_decide():
    # Three poles, or a complex value without its conjugate: no closed form (NaN).
    g = np.ones(2)
    three = np.full((2, 3), 0.5 + 0j)
    assert np.all(np.isnan(sweep_math.level_crossing(g, np.zeros((2, 0)), three, 1.0,
                                                     np.full(2, 0.5), np.ones(2), np.full(2, 9.0))))
    lone = np.array([[0.5 + 0.1j, 0.5 + 0.2j], [0.4, 0.3]])
    got = sweep_math.level_crossing(g, np.zeros((2, 0)), lone, 1.0, np.full(2, 0.5),
                                    np.full(2, 1e-3), np.full(2, 1e3))
    assert np.isnan(got[0]) and np.isfinite(got[1])
    # H(s) = 1/((s + 1)(s + 3)) in the zero-pole-gain form with σ = 1: e = 1/(σ − p) and
    # gain H(σ) = 1/8. |H|² = 1/((1 + x)(9 + x)), x = ω², falls to half its DC value 1/9
    # where x² + 10x − 9 = 0: x = √34 − 5 (textbook algebra).
    e = np.array([[1 / (1 + 1.0), 1 / (1 + 3.0)]], dtype=complex)
    f = sweep_math.level_crossing(np.array([1 / 8]), np.zeros((1, 0)), e, 1.0,
                                  np.array([1 / 18]), np.array([0.01]), np.array([10.0]))
    assert abs((2 * np.pi * f[0]) ** 2 / (math.sqrt(34) - 5) - 1) < 1e-12


def old_psd(ev, f):
    """The complex products it replaces: Σ_R |g·Π(1 + μe)|²/R / |Π(1 + μd)|² · 4kT."""
    from rcdoc.analysis.ac import _Pencil
    system, t = ev.conditioned
    p = _Pencil(system, f)
    o = int(np.flatnonzero(p.keep == system.index[ev.network.output])[0])
    jw = 2j * np.pi * f
    den = np.abs(p.product(None, p.poles, jw)) ** 2
    acc = np.zeros(den.shape)
    for el in ev.network.elements:
        if el.kind != "R":
            continue
        inj = sum(sign * (t[system.node(n)] if system.node(n) is not None else 0)
                  for sign, n in ((1, el.a), (-1, el.b)))
        e = np.broadcast_to(np.asarray(inj)[p.keep], (ev.rows, p.keep.size))
        if not e.any():
            continue
        gain, zeros, _ = p.zpk(o, e, None)
        r = ev.values[el.name] if el.name in ev.values else None
        acc += np.abs(p.product(gain, zeros, jw)) ** 2 / np.broadcast_to(r, (ev.rows,))[:, None]
    return 4 * 1.380649e-23 * 300.0 * acc / den


@pytest.mark.parametrize("kind,cap", [("rc-lowpass", "10 nF"), ("sallen-key-lowpass", "20 nF"),
                                      ("sallen-key-lowpass", "3600 uF"),
                                      ("sallen-key-lowpass", "10 nF")])
def test_noise_psd_is_the_direct_solves(tmp_path, monkeypatch, kind, cap):
    """The real-arithmetic |Z|² against the adjoint solve of the nodal equations at
    every frequency (noise.py's own direct path, forced), and for the RC low-pass the
    textbook PSD 4kTR/(1 + (ωRC)²) (Johnson–Nyquist through the divider)."""
    from rcdoc.analysis import engine
    from rcdoc.analysis import ac as acmod
    ev, v = evaluator(tmp_path, kind, cap, samples=40)
    f = ev.freqs_hz
    psd = engine.output_noise_psd(ev.network, ev.values, f, temperature_k=300.0)
    monkeypatch.setattr(acmod, "_PZ_RCOND", 1e300)          # every row: the direct path
    direct = engine.output_noise_psd(ev.network, ev.values, f, temperature_k=300.0)
    monkeypatch.undo()
    # At Q = 300 the direct solve itself loses digits at the peak (3.6e-8 there before
    # the real arithmetic too); elsewhere the two agree to 1e-9.
    assert np.max(np.abs(psd / direct - 1)) < (1e-7 if cap == "3600 uF" else 1e-9)
    assert np.max(np.abs(psd / old_psd(ev, f) - 1)) < 1e-13       # the arithmetic replaced
    if kind == "rc-lowpass":
        w = 2 * np.pi * f[None, :]
        rc = (v["r"] * v["c"])[:, None]
        ref = 4 * 1.380649e-23 * 300.0 * v["r"][:, None] / (1 + (w * rc) ** 2)
        assert np.max(np.abs(psd / ref - 1)) < 1e-12
    # the weighted sum is numpy's trapezoid rule
    assert np.allclose(sweep_math.trapezoid(psd, f), np.trapezoid(psd, f, axis=1),
                       rtol=1e-13, atol=0)


@pytest.mark.parametrize("kind,cap", [("sallen-key-lowpass", "20 nF"), ("rc-highpass", "10 nF"),
                                      ("rc-lowpass", "10 nF")])
def test_zeros_skipped_only_where_none_is_finite(tmp_path, monkeypatch, kind, cap):
    """A numerator whose first row shows no finite zero gets no eigenvalues; the
    response is the one every row's eigenvalues gave (the method replaced)."""
    from rcdoc.analysis import ac as acmod
    ev, _ = evaluator(tmp_path, kind, cap, samples=50)
    h = ev.response.sweep(ev.freqs_hz)
    zpk = acmod._Pencil.zpk
    monkeypatch.setattr(acmod._Pencil, "zpk", lambda self, o, r0, r1, eigen=True:
                        zpk(self, o, r0, r1, eigen=True))
    full = Evaluator(ev.stage, ev.network, ev.values, ev.freqs_hz, ev.passband, ev.char_hz)
    assert np.array_equal(full.response.sweep(ev.freqs_hz), h)
    assert full.response.zeros.shape == ev.response.zeros.shape
    assert ev.response.zeros.shape[1] == (1 if kind == "rc-highpass" else 0)


def test_near_reference_moves_whole_turns_only():
    # The Bode band's phase rule: an entry more than half a turn from the nominal's
    # unwrapped phase moves by whole turns (the same angle, numpy's own np.angle
    # of both agrees), a NaN stays, and without such an entry the array is as given.
    from rcdoc.analysis.sweep_math import near_reference
    rng = np.random.default_rng(5)
    h = np.exp(-1j * np.linspace(0.0, 9.0, 301))
    ref = np.unwrap(np.angle(h))
    phase = ref + rng.normal(0.0, 0.3, (400, 301))
    assert near_reference(phase, h) is phase
    turned = phase + 2 * np.pi * rng.integers(-2, 3, phase.shape)
    turned[7, 11] = np.nan
    out = near_reference(turned, h)
    ok = ~np.isnan(turned)
    assert np.allclose(out[ok], phase[ok], rtol=0, atol=1e-12) and np.isnan(out[7, 11])
    assert np.allclose(np.angle(np.exp(1j * out[ok])), np.angle(np.exp(1j * turned[ok])))


def test_near_reference_with_the_rows_extremes_gives_the_same():
    # Given the rows' minimum and maximum, a phase within half a turn everywhere is
    # returned as it is (no pass over the rows), and any other the same as without.
    from rcdoc.analysis.sweep_math import near_reference
    rng = np.random.default_rng(8)
    h = np.exp(-1j * np.linspace(0.0, 4.0, 101))
    ref = np.unwrap(np.angle(h))
    close = ref + rng.normal(0.0, 0.2, (50, 101))
    assert near_reference(close, h, close.min(axis=0), close.max(axis=0)) is close
    far = close.copy()
    far[3, 40:] -= 2 * np.pi
    far[9, 2] = np.nan
    lo, hi = np.nanmin(far, axis=0), np.nanmax(far, axis=0)
    for extremes in ((lo, hi), (far.min(axis=0), far.max(axis=0))):
        np.testing.assert_array_equal(near_reference(far, h, *extremes), near_reference(far, h))


@pytest.mark.parametrize("dtype", [np.float32, np.float64])
def test_band_percentiles_from_the_row_before_are_numpys(dtype):
    # A band's rows (one frequency each) keep their samples' order from row to row,
    # and row_percentiles then looks for each rank among the samples that held it in
    # the row before (spread._order_pairs). Rows here: first-order low-pass gains in
    # dB over a sweep (monotone in the corner at every frequency), the passband's
    # near-ties, a constant row, rows of quantised values (many exact ties), a row
    # whose order is reversed and one shuffled (the candidates fail there). Reference:
    # numpy.percentile, linear method, bit for bit.
    from rcdoc.analysis import spread
    rng = np.random.default_rng(21)
    n = 20000
    fc = 1e3 * rng.uniform(0.8, 1.2, n)
    f = np.logspace(0, 6, 120)
    rows = -10 * np.log10(1 + (f[:, None] / fc[None, :]) ** 2)
    rows[10] = -3.0
    rows[40:60] = np.round(rows[40:60], 1)
    rows[70] = -rows[70]
    rows[71] = rng.permutation(rows[71])
    rows = rows.astype(dtype)
    j = int(np.floor((n - 1) * 0.05))
    pair = spread._order_pairs(rows, j)
    assert pair is not None                  # the order carried over: no fallback to all rows
    sorted_rows = np.sort(rows, axis=1)
    assert np.array_equal(pair[0], sorted_rows[:, j]) and np.array_equal(pair[1], sorted_rows[:, j + 1])
    for q in [(5.0, 95.0), (50.0,), (0.5, 99.5)]:
        ref = np.percentile(rows, q, axis=1)
        assert np.array_equal(spread.row_percentiles(rows, q), ref)
    shuffled = np.stack([rng.permutation(rows[-1]) for _ in range(80)])
    assert spread._order_pairs(shuffled, j) is None         # order lost: partitions instead
    assert np.array_equal(spread.row_percentiles(shuffled, (5.0, 95.0)),
                          np.percentile(shuffled, (5.0, 95.0), axis=1))


def test_band_percentiles_through_ties_are_numpys(monkeypatch):
    # A first-order low-pass's phase in float32 degrees saturates towards -90 deg
    # above the corner: thousands of samples share a value (ties with the
    # candidates' lowest or highest value). Those rows are still answered from the
    # candidates (spread._tied_pair) instead of a partition of the whole row; and
    # rows of a few repeated values with a value inside the candidates' range that
    # is not a candidate fall back. Reference: numpy.percentile, linear method, and
    # np.sort, bit for bit.
    from rcdoc.analysis import spread
    rng = np.random.default_rng(5)
    n = 20000
    tau = 1e-3 * rng.uniform(0.95, 1.05, n) * rng.uniform(0.99, 1.01, n)
    f = np.logspace(-1, 5, 301)
    phase = np.degrees(-np.arctan(2 * np.pi * f[:, None] * tau[None, :])).astype(np.float32)
    assert len(np.unique(phase[-1])) < n // 10           # the ties this is about
    calls = []
    real = np.argpartition
    monkeypatch.setattr(np, "argpartition", lambda *a, **k: calls.append(1) or real(*a, **k))
    sorted_rows = np.sort(phase, axis=1)
    for j in (int(np.floor((n - 1) * 0.05)), int(np.floor((n - 1) * 0.95))):
        calls.clear()
        lo, hi = spread._order_pairs(phase, j)
        assert np.array_equal(lo, sorted_rows[:, j]) and np.array_equal(hi, sorted_rows[:, j + 1])
        assert len(calls) <= 3                     # the first row, and hardly any other
    assert np.array_equal(spread.row_percentiles(phase, (5.0, 95.0)),
                          np.percentile(phase, (5.0, 95.0), axis=1))
    # Few distinct values drifting from row to row, so that ranks move among ties and
    # values other than the candidates' fall inside their range.
    for seed in range(6):
        r = np.random.default_rng(seed)
        base = r.integers(0, 40, 3000).astype(float)
        rows = np.stack([np.floor(base + r.normal(0.0, 0.3 * k, base.size)) for k in range(60)])
        q = (5.0, 50.0, 95.0)
        assert np.array_equal(spread.row_percentiles(rows, q), np.percentile(rows, q, axis=1))
        s_rows = np.sort(rows, axis=1)
        for j in (149, 1499, 2849):
            pair = spread._order_pairs(rows, j)
            if pair is not None:
                assert np.array_equal(pair[0], s_rows[:, j]) and np.array_equal(pair[1], s_rows[:, j + 1])


# The sweep's gain and phase in real arithmetic (Response.sweep_db, sweep_phase: each
# of H's numerator and denominator one real quadratic in ω) against the complex sweep
# they replace and against scipy.signal.freqs of the textbook transfer functions:
# unity-gain Sallen-Key 1/(s²·R1R2C1C2 + s·C2(R1 + R2) + 1), RC low-pass 1/(1 + sRC),
# RC high-pass sRC/(1 + sRC) (any circuits textbook).
def _textbook(kind: str, v: dict) -> list:
    if kind == "sallen-key-lowpass":
        return [([1.0], [r1 * r2 * c1 * c2, c2 * (r1 + r2), 1.0])
                for r1, r2, c1, c2 in zip(v["r1"], v["r2"], v["c1"], v["c2"])]
    if kind == "rc-lowpass":
        return [([1.0], [r * c, 1.0]) for r, c in zip(v["r"], v["c"])]
    return [([r * c, 0.0], [r * c, 1.0]) for r, c in zip(v["r"], v["c"])]


@pytest.mark.parametrize("kind,cap", [("sallen-key-lowpass", "20 nF"),
                                      ("sallen-key-lowpass", "10 nF"),
                                      ("sallen-key-lowpass", "3600 uF"),
                                      ("rc-highpass", "10 nF"), ("rc-lowpass", "10 nF")])
def test_real_sweep_matches_the_complex_sweep_and_scipy(tmp_path, kind, cap):
    ev, v = evaluator(tmp_path, kind, cap)
    f = ev.freqs_hz
    gain, phase = ev.gain_db, ev.phase_rad
    assert "h" not in ev.__dict__                 # the real arithmetic served both
    h = ev.response.sweep(f)                      # the complex sweep it replaces
    assert np.max(np.abs(gain - sweep_math.db(h))) < 1e-11
    assert np.max(np.abs(np.angle(np.exp(1j * (phase - np.angle(h)))))) < 1e-11
    assert np.all((phase >= -math.pi) & (phase <= math.pi))
    ref = np.array([sg.freqs(b, a, worN=2 * np.pi * f)[1] for b, a in _textbook(kind, v)])
    # At Q = 300 the poles themselves are 3e-8 off (Evaluator.response); elsewhere 1e-9.
    tol = 1e-6 if cap == "3600 uF" else 1e-9
    assert np.max(np.abs(gain - sweep_math.db(ref))) < tol
    assert np.max(np.abs(np.angle(np.exp(1j * (phase - np.angle(ref)))))) < tol


def test_real_sweep_patches_unsafe_rows_and_leaves_higher_orders(tmp_path):
    """Rows the zero-pole-gain form does not serve take the direct solve, as in the
    complex sweep; a third-order response (the twin-T's three capacitors) is left to
    the complex sweep."""
    ev, v = evaluator(tmp_path, "sallen-key-lowpass", "1.8 uF", samples=40)
    bad = np.zeros(ev.rows, dtype=bool)
    bad[[3, 17]] = True
    ev.response.ok = ev.response.ok & ~bad
    ev.response.gain[bad] = np.nan                 # would show if those rows were used
    gain, phase = ev.gain_db, ev.phase_rad
    assert "h" not in ev.__dict__ and np.all(np.isfinite(gain))
    textbook = _textbook("sallen-key-lowpass", v)
    for i in (3, 17):
        ref = sg.freqs(*textbook[i], worN=2 * np.pi * ev.freqs_hz)[1]
        assert np.max(np.abs(gain[i] - sweep_math.db(ref))) < 1e-9
        assert np.max(np.abs(np.angle(np.exp(1j * (phase[i] - np.angle(ref)))))) < 1e-9

    from test_notch import notch_project
    notch_project(tmp_path, samples=20)
    ev, _ = mc_evaluator(tmp_path / "notch.toml")
    assert ev.response.poles.shape[1] == 3
    assert ev.response.sweep_db(ev.freqs_hz) is None and ev.response.sweep_phase(ev.freqs_hz) is None
    assert np.array_equal(ev.gain_db, sweep_math.db(ev.h))


@pytest.mark.parametrize("kind,cap", [("sallen-key-lowpass", "20 nF"), ("sallen-key-lowpass", "3600 uF"),
                                      ("rc-highpass", "10 nF")])
def test_one_row_of_the_complex_sweep_is_that_row_of_the_whole(tmp_path, kind, cap):
    """The nominal row's complex response (the Bode chart's nominal line), taken
    alone where the gain and phase needed no complex sweep: the whole sweep's row,
    bit for bit, also for a row the direct solve serves."""
    ev, _ = evaluator(tmp_path, kind, cap, samples=60)
    ev.response.ok[5] = False                       # served by the direct solve
    rows = [ev.h_row(i) for i in (0, 5, ev.rows - 1)]
    assert "h" not in ev.__dict__                   # no complex sweep of every row
    whole = ev.response.sweep(ev.freqs_hz)
    for got, i in zip(rows, (0, 5, ev.rows - 1)):
        assert np.array_equal(got, whole[i])
    # ... and the row the direct solve serves is the nodal solution at each frequency.
    direct = np.array([ev.h_rows(np.full(ev.rows, f))[5] for f in ev.freqs_hz[::60]])
    assert np.max(np.abs(rows[1][::60] / direct - 1)) < 1e-12
