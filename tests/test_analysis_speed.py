"""The analysis's faster arithmetic against the methods it replaced and outside references.

Each shortcut of issue 17's analysis part is checked here against the code it
replaced (kept below as a reference: the same numbers, bit for bit, where the
shortcut only reorders memory) or, where the numbers come from another route,
against general-purpose libraries at the extremes a user can type.

Sources: numpy.linalg.cond (the 2-norm condition number by singular values);
scipy.signal.freqs (a polynomial transfer function evaluated on jω); the
unity-gain Sallen-Key low-pass H = 1/(s²·R1R2C1C2 + s·C2(R1 + R2) + 1) and its
Q = √(R1R2C1C2)/(C2(R1 + R2)) (the standard result, as in docs/project-format.md);
the positive-feedback Sallen-Key with gain K = 1 + rf/rg and equal parts is
unstable for K > 3 (the same standard result: the s term is RC(3 − K)).
"""

from __future__ import annotations

import numpy as np
import pytest
import scipy.signal as sg

from rcdoc.analysis import ac, transient, worstcase
from rcdoc.analysis import poles as polemod
from rcdoc.analysis.response import Response

from boards import mc_evaluator


# ---- the pencil's balancing and the shift's condition (rcdoc.analysis.poles) ----------

def _balance_reference(G, C):
    """The balancing as it was: maxima along the trailing axes of (S, n, n)."""
    G, C = G.copy(), C.copy()
    for _ in range(polemod._BALANCE_ROUNDS):
        for axis in (-1, -2):
            m = np.max(np.abs(G) + np.abs(C), axis=axis, keepdims=True)
            m = np.where(m > 0, np.sqrt(m), 1.0)
            G /= m
            C /= m
    return G, C


@pytest.mark.parametrize("n,S", [(1, 300), (2, 300), (5, 300), (3, 7)])
def test_balance_is_the_same_numbers_as_along_the_trailing_axes(n, S):
    rng = np.random.default_rng(n)
    G = rng.standard_normal((S, n, n)) * 10.0 ** rng.uniform(-12, 12, (S, n, n))
    C = rng.standard_normal((S, n, n)) * 10.0 ** rng.uniform(-12, 12, (S, n, 1))
    G[rng.random((S, n, n)) < 0.3] = 0.0          # zeros, whole zero rows among them
    C[:, 0] = 0.0
    got, ref = polemod._balance(G, C), _balance_reference(G, C)
    assert np.array_equal(got[0], ref[0]) and np.array_equal(got[1], ref[1])


def test_shift_condition_is_decided_as_numpys_2_norm_number():
    """_well_conditioned(A) == (np.linalg.cond(A) < 1e13) for condition numbers from
    1e8 to 1e18 (around the limit, where the 1-norm number cannot decide alone),
    rows scaled decades apart and exactly singular matrices."""
    rng = np.random.default_rng(7)
    mats = []
    for n in (2, 3, 6):
        for logc in np.linspace(8, 18, 41):
            u, _ = np.linalg.qr(rng.standard_normal((n, n)))
            v, _ = np.linalg.qr(rng.standard_normal((n, n)))
            s = np.logspace(0, -logc, n)
            a = u @ np.diag(s) @ v.T
            mats.append(a)
        sing = rng.standard_normal((n, n))
        sing[-1] = sing[0]                            # exactly singular
        mats.append(sing)
        mats.append(np.zeros((n, n)))
        for size in (n,):
            A = np.stack([m for m in mats if m.shape == (size, size)])
            got = polemod._well_conditioned(A)
            with np.errstate(all="ignore"):
                ref = np.linalg.cond(A) < polemod._COND_LIMIT     # numpy.linalg.cond
            assert np.array_equal(got, ref)
            assert got.any() and not got.all()


def test_shift_condition_of_a_matrix_with_infinite_entries_is_false():
    # numpy.linalg.cond's SVD raises LinAlgError ("SVD did not converge") on a
    # matrix holding inf or NaN; such a sample has no poles (NaN), the others keep theirs.
    good = np.eye(3)
    bad_inf, bad_nan = np.eye(3), np.eye(3)
    bad_inf[0, 0] = np.inf
    bad_nan[1, 2] = np.nan
    got = polemod._well_conditioned(np.stack([good, bad_inf, bad_nan, 2 * good]))
    assert got.tolist() == [True, False, False, True]


# ---- the inverse's scalings (rcdoc.analysis.ac) ----------------------------------------

def _inverse_reference(A):
    """ac._inverse as it was, along the trailing axes."""
    n = A.shape[-1]
    r = np.max(np.abs(A), axis=-1, keepdims=True)
    r = np.where(r > 0, r, 1.0)
    Ae = A / r
    c = np.max(np.abs(Ae), axis=-2, keepdims=True)
    c = np.where(c > 0, c, 1.0)
    Ae = Ae / c
    with np.errstate(all="ignore"):
        try:
            inv = np.linalg.inv(Ae)
        except np.linalg.LinAlgError:
            inv = np.full_like(Ae, np.nan)
            sv = np.linalg.svd(Ae, compute_uv=False)
            good = sv[..., -1] > ac._PZ_RCOND * sv[..., 0]
            inv[good] = np.linalg.inv(Ae[good])
        norm = np.max(np.sum(np.abs(Ae), axis=-2), axis=-1)
        norm_inv = np.max(np.sum(np.abs(inv), axis=-2), axis=-1)
        ok = np.isfinite(norm_inv) & (norm * norm_inv < 1.0 / ac._PZ_RCOND)
    inv = inv / np.swapaxes(c, -1, -2) / np.swapaxes(r, -1, -2)
    return np.where(ok[:, None, None], inv, np.eye(n)), ok


@pytest.mark.parametrize("dtype,S", [(float, 400), (complex, 400), (float, 30)])
def test_inverse_is_the_same_numbers_as_along_the_trailing_axes(dtype, S):
    rng = np.random.default_rng(3)
    n = 4
    A = rng.standard_normal((S, n, n)) * 10.0 ** rng.uniform(-9, 9, (S, n, 1))
    if dtype is complex:
        A = A + 1j * rng.standard_normal((S, n, n)) * 10.0 ** rng.uniform(-9, 9, (S, 1, n))
    A[5, -1] = A[5, 0]                                   # one exactly singular row
    A[9] = 0.0
    got, ref = ac._inverse(A), _inverse_reference(A)
    assert np.array_equal(got[1], ref[1]) and not got[1][5]
    assert np.array_equal(got[0], ref[0], equal_nan=True)


# ---- the time march (rcdoc.analysis.transient._march) ----------------------------------

def _march_reference(M, k0, k1, x, u0, u1):
    """The march as it was: one step at a time, each product of the marched states
    added in turn (the final state only: no sink)."""
    Mt = np.ascontiguousarray(np.moveaxis(M, 0, -1))
    dyn = [j for j in range(Mt.shape[1]) if np.any(Mt[:, j, :] != 0)] or [0]
    mcols = np.ascontiguousarray(Mt[:, dyn, :])
    md = [np.ascontiguousarray(mcols[dyn, i, :]) for i in range(len(dyn))]
    k0t, k1t = np.ascontiguousarray(k0.T), np.ascontiguousarray(k1.T)
    u0T, u1T = np.ascontiguousarray(u0.T), np.ascontiguousarray(u1.T)
    forcing = transient._Forcing(k0t[dyn], k1t[dyn], u0T, u1T)
    z, prev = x.T[dyn].copy(), None
    for n in range(u0.shape[1]):
        nxt = md[0] * z[0]
        for i in range(1, len(md)):
            nxt += md[i] * z[i]
        forcing.add(nxt, n)
        prev, z = z, nxt
    full = np.einsum("kjs,js->ks", mcols, prev) + k0t * u0T[-1] + k1t * u1T[-1]
    full[dyn] = z
    return np.ascontiguousarray(full.T)


@pytest.mark.parametrize("d,shared", [(1, True), (2, True), (4, True), (3, False)])
def test_march_is_the_same_numbers_as_step_by_step(d, shared):
    """Runs of RUN steps and a step's products as one multiplication: the final state
    equals the one-step-at-a-time recursion bit for bit (a PWM input shared by every
    sample, or one input per sample; steps not a multiple of RUN)."""
    rng = np.random.default_rng(d)
    S, N, T = 37, d + 2, 301
    M = np.zeros((S, N, N))
    M[:, :, :d] = rng.uniform(-0.4, 0.4, (S, N, d)) / d      # the states that carry charge
    k0, k1 = rng.standard_normal((S, N)), rng.standard_normal((S, N))
    x = rng.standard_normal((S, N))
    wave = np.where(np.arange(T) % 50 < 20, 3.3, 0.0)
    u0 = wave[None, :] if shared else rng.standard_normal((S, T))
    u1 = np.roll(u0, -1, axis=1)
    got = transient._march(M, k0, k1, x, u0, u1)
    assert np.array_equal(got, _march_reference(M, k0, k1, x, u0, u1))


# ---- the zero-pole-gain form from the stability rule's poles ---------------------------

def _sk_board(r1, r2, c1, c2, extra=""):
    return f"""\
[board]
name = "Shared poles"
revision = "A"
date = "2026-01-01"

[analysis]
samples = 60
seed = 5

[[stage]]
id = "sk"
title = "Sallen-Key"
kind = "sallen-key-lowpass"
parts.r1 = {{ value = "{r1}", tolerance = "1%" }}
parts.r2 = {{ value = "{r2}", tolerance = "1%" }}
parts.c1 = {{ value = "{c1}", tolerance = "2%", dielectric = "C0G" }}
parts.c2 = {{ value = "{c2}", tolerance = "2%", dielectric = "C0G" }}
{extra}"""


# Q from 0.5 (a repeated real pole at the nominal) to 300, parts decades apart.
CASES = {
    "Q 0.5, repeated pole": ("10k", "10k", "10 nF", "10 nF"),
    "Q 0.707": ("10k", "10k", "20 nF", "10 nF"),
    "Q 30": ("10k", "10k", "3.6 uF", "1 nF"),
    "Q 300": ("1k", "1k", "360 nF", "1 pF"),
    "values decades apart": ("1 ohm", "1 Mohm", "1 uF", "10 pF"),
}


@pytest.mark.parametrize("case", list(CASES))
def test_shared_poles_give_scipys_response(tmp_path, case):
    r1, r2, c1, c2 = CASES[case]
    path = tmp_path / "b.toml"
    path.write_text(_sk_board(r1, r2, c1, c2), encoding="utf-8")
    ev, v = mc_evaluator(path)
    bare, _ = mc_evaluator(path)
    bare.h                                            # a sweep asked for alone: its own
    assert bare.response.pencil.found is None         # eigenvalues (no stability rule)
    ev.metric("q")                                    # as the analysis asks: stability first,
    h = ev.h                                          # then the response, poles handed in
    assert ev.response.pencil.found is not None
    own = Response(ev.system, ev.system.node(ev.network.output), ev.freqs_hz)
    assert own.pencil.found is None                   # the method it replaced: eigenvalues
    h_own = own.sweep(ev.freqs_hz)
    w = 2 * np.pi * ev.freqs_hz
    err = [0.0, 0.0]                                  # shared poles, own eigenvalues
    for i in range(ev.rows):
        a = v["r1"][i] * v["r2"][i] * v["c1"][i] * v["c2"][i]
        b = v["c2"][i] * (v["r1"][i] + v["r2"][i])
        ref = sg.freqs([1.0], [a, b, 1.0], worN=w)[1]           # scipy.signal.freqs
        err[0] = max(err[0], np.max(np.abs(h[i] / ref - 1)))
        err[1] = max(err[1], np.max(np.abs(h_own[i] / ref - 1)))
    # The poles of the stability rule (tree-branch coordinates, balanced) are the
    # better ones at high Q: measured 5e-13 off scipy at Q 300 where the eigenvalues
    # of A⁻¹C were 3e-8 off (4e-11 at Q 30); elsewhere both about 5e-15.
    assert err[0] < 1e-11 and err[0] <= 2 * err[1] + 1e-14
    # Q from the poles, as the textbook has it
    q_ref = np.sqrt(v["r1"] * v["r2"] * v["c1"] * v["c2"]) / (v["c2"] * (v["r1"] + v["r2"]))
    assert np.allclose(ev.q(), q_ref, rtol=1e-9)


def test_rows_without_poles_solve_their_own(tmp_path):
    """A row for which the stability rule found no pole (no shift served it: NaN)
    gets A⁻¹C's eigenvalues: its response is the direct solve's."""
    path = tmp_path / "b.toml"
    path.write_text(_sk_board("10k", "10k", "20 nF", "10 nF"), encoding="utf-8")
    ev, _ = mc_evaluator(path)
    p = ev.poles.copy()
    p[[3, 17]] = np.nan
    ev.__dict__["poles"] = p
    resp = Response(ev.system, ev.system.node(ev.network.output), ev.freqs_hz, p)
    f = np.full(ev.rows, 1234.5)
    direct = ev.h_rows(f)                               # (G + sC)·x = b, row by row
    assert np.max(np.abs(resp.at_rows(f) / direct - 1)) < 1e-9
    assert np.all(resp.ok[[3, 17]])


def test_unstable_samples_stay_missing(tmp_path):
    """Gain K = 1 + rf/rg = 3.5 > 3 with equal parts: every sample is unstable; its
    metrics are missing (NaN), and H itself is still the direct solve's."""
    extra = ('parts.rf = { value = "25k", tolerance = "1%" }\n'
             'parts.rg = { value = "10k", tolerance = "1%" }\n')
    path = tmp_path / "b.toml"
    path.write_text(_sk_board("10k", "10k", "10 nF", "10 nF", extra), encoding="utf-8")
    ev, _ = mc_evaluator(path)
    assert ev.unstable.all()
    for name in ("corner", "q", "peaking", "passband_gain"):
        assert np.all(np.isnan(ev.metric(name))), name
    f = np.full(ev.rows, 800.0)
    assert np.max(np.abs(ev.response.at_rows(f) / ev.h_rows(f) - 1)) < 1e-9


# ---- the worst-case search's stops (rcdoc.analysis.worstcase) ---------------------------

def _search_reference(evaluate, starts, maximise, lows, highs):
    """The pattern search as it was: every start of a search rides along until all
    of them are below MIN_STEP, none stops on a flat neighbourhood."""
    span = highs - lows
    sign = np.where(maximise, 1.0, -1.0)
    x, s, p = starts.copy(), *starts.shape
    step = np.repeat((span / 4.0)[None, :], s, axis=0)
    moves = np.concatenate([np.eye(p), -np.eye(p)])
    fx = sign * evaluate(x)
    fx = np.where(np.isfinite(fx), fx, -np.inf)
    found = [sign * fx]
    for _ in range(worstcase.ITERATIONS):
        if np.all(step <= worstcase.MIN_STEP * span):
            break
        cand = np.clip(x[:, None, :] + moves[None] * step[:, None, :], lows, highs)
        fc = sign[:, None] * evaluate(cand.reshape(-1, p)).reshape(s, 2 * p)
        fc = np.where(np.isfinite(fc), fc, -np.inf)
        best = np.argmax(fc, axis=1)
        fbest = fc[np.arange(s), best]
        better = fbest > fx + worstcase.FLAT * np.abs(fx)
        x = np.where(better[:, None], cand[np.arange(s), best], x)
        fx = np.where(better, fbest, fx)
        step = np.where(better[:, None], step, step / 2.0)
        found.append(sign * fx)
    f = np.concatenate(found)
    return f[np.isfinite(f)]


def _bowl(x):          # smooth, its maximum 1.5 inside the box at (0.3, −0.2, 0.7)
    return 1.5 - (x[:, 0] - 0.3) ** 2 - 2 * (x[:, 1] + 0.2) ** 2 - 0.5 * (x[:, 2] - 0.7) ** 2


def _ramp(x):          # monotonic: its extremes at the box's corners
    return 2.0 + x[:, 0] + 3 * x[:, 1] - x[:, 2]


def _plateau(x):       # max(·, 0): zero over part of the box (a peaking)
    return np.maximum(x[:, 0] * x[:, 1] - 0.1, 0.0)


@pytest.mark.parametrize("fn", [_bowl, _ramp, _plateau])
def test_search_stops_keep_the_searched_range(fn):
    """Starts that stop on MIN_STEP alone or on a flat neighbourhood find the same
    range as the search in which every start rode along to the end."""
    rng = np.random.default_rng(11)
    lows, highs = -np.ones(3), np.ones(3)
    starts = rng.uniform(-1, 1, (8, 3))
    up = np.array([True, False] * 4)
    ref_batches = []

    def counted(x):
        ref_batches.append(len(x))
        return fn(x)
    ref = _search_reference(counted, starts, up, lows, highs)
    got = worstcase.search_together(lambda ks, xs: [fn(xs[0])], [(starts, up, 1e-12)],
                                    lows, highs)[0]
    assert (got.min(), got.max()) == (ref.min(), ref.max())
    # Without the flat stop every value a start takes is the one-level search's
    # (halvings evaluated SPECULATE at a time take the same moves).
    batches = []

    def count(ks, xs):
        batches.append(len(xs[0]))
        return [fn(xs[0])]
    exact = worstcase.search_together(count, [(starts, up)], lows, highs)[0]
    assert np.array_equal(np.unique(exact), np.unique(ref))
    assert len(batches) <= len(ref_batches)


def test_search_on_rounding_noise_stops_at_once():
    """A metric that is constant up to rounding noise (a passband gain of 0 dB:
    ±1e-14 dB) stops every start after one iteration below its floor; its range
    stays within the noise."""
    calls = []

    def noise(ks, xs):
        calls.append(len(xs[0]))
        x = xs[0]
        return [1e-14 * np.sin(1e3 * x.sum(axis=1))]
    starts = np.zeros((4, 2))
    got = worstcase.search_together(noise, [(starts, np.array([True, False] * 2), 1e-10)],
                                    -np.ones(2), np.ones(2))[0]
    assert len(calls) == 2 and np.all(np.abs(got) <= 1e-14)
