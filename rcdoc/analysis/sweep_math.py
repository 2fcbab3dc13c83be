"""Cheaper, equivalent arithmetic for what the Evaluator derives from a sweep.

What it is for: the phase unwrapped along the sweep (numpy's rule, its
corrections computed only where a step reaches half a turn, once per chunk of
rows and shared by the phase band and every mark), and the -3 dB crossing of
a response with at most two poles and two zeros from the closed-form root of
|N(jω)|² = t·|D(jω)|² (a quadratic in ω²) instead of a bisection.

What it must not do: change a number beyond rounding. Each function states
the method it replaces; tests/test_sweep_math.py compares them. (``near_reference``
replaces nothing: it is how the Bode band shows a phase, tests/test_notch.py.)
"""

from __future__ import annotations

import math

import numpy as np

_TURN = 2 * math.pi


_DB_PER_NEPER = 20 / math.log(10)     # 20·log10(x) = (20 / ln 10)·ln(x)


def db(h: np.ndarray) -> np.ndarray:
    """20·log10|h|, as (20 / ln 10)·ln|h|: numpy's modulus (hypot: no overflow of
    squares) and its natural logarithm are each about twice as fast as re² + im²
    and log10 (measured; they agree with them to a unit in the last place)."""
    with np.errstate(divide="ignore", invalid="ignore"):
        out = np.abs(np.asarray(h)).astype(float, copy=False)
        np.log(out, out=out)
        out *= _DB_PER_NEPER
    return out


def finite_rows(y: np.ndarray) -> np.ndarray:
    """np.all(np.isfinite(y), axis=1) for a 2-D ``y``: each row's sum (einsum's, one
    pass without a boolean array, and without BLAS, whose threads would spin in a
    process that did not keep it to one) is finite only if every term is, and the
    rows whose sum is not (an infinity, a NaN, or finite values whose sum
    overflows) are looked at value by value."""
    if y.shape[1] == 0:
        return np.ones(y.shape[0], dtype=bool)
    with np.errstate(over="ignore", invalid="ignore"):
        ok = np.isfinite(np.einsum("ij->i", y))
    if not ok.all():
        bad = np.flatnonzero(~ok)
        ok[bad] = np.all(np.isfinite(y[bad]), axis=1)
    return ok


_DEG_PER_RAD = 180.0 / math.pi


def degrees(x: np.ndarray) -> np.ndarray:
    """np.degrees(x): numpy's rad2deg is x·(180/π) with that constant rounded once,
    so a multiplication by it gives the same numbers, in less than half the time
    (measured: numpy's degrees loop is not vectorised as its multiply is)."""
    return np.multiply(x, _DEG_PER_RAD)


def angle(h: np.ndarray) -> np.ndarray:
    """np.angle(h) (principal value in [−π, π]): angle_of its real and imaginary parts."""
    h = np.asarray(h, dtype=complex)
    return angle_of(h.real, h.imag)


def angle_of(re: np.ndarray, im: np.ndarray) -> np.ndarray:
    """np.arctan2(im, re) as arctan(im/re) moved by ±π where re < 0: numpy's
    one-argument arctangent is twice as fast as its arctan2 here (measured); the
    two agree to a few units in the last place. Entries where that quotient is
    not finite (a zero or infinite part) take np.arctan2 itself."""
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        out = np.divide(im, re)
        np.arctan(out, out=out)
        # Left half-plane (a −0.0 real part included, as arctan2 counts it): ±π by
        # the sign of the imaginary part.
        np.add(out, np.copysign(math.pi, im), out=out, where=np.signbit(re))
    bad = ~np.isfinite(out)
    if bad.any():
        out[bad] = np.arctan2(im[bad], re[bad])
    return out


def trapezoid(y: np.ndarray, x: np.ndarray) -> np.ndarray:
    """np.trapezoid(y, x, axis=1) as one weighted sum per row (y @ w, w the trapezoid
    weights of x, (F,) or one row each): one pass, equal to rounding."""
    d = np.diff(x, axis=-1) / 2.0
    w = np.zeros(x.shape)
    w[..., :-1] += d
    w[..., 1:] += d
    return y @ w if x.ndim == 1 else np.einsum("sf,sf->s", y, w)


def unwrap_corrections(p: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(rows, K): the rows of ``p`` (R × F, radians) that np.unwrap(p, axis=1)
    changes and, for those rows, the running sum K (len(rows) × F, K[:, 0] = 0)
    that it adds: np.unwrap(p, axis=1)[rows] == p[rows] + K bit for bit, and the
    other rows are unchanged.

    Same operations as numpy's unwrap (period 2π, discontinuity π), evaluated
    only at the steps of at least π; a phase whose span is under π costs its
    minimum and maximum, and one that never jumps one diff and one comparison.
    """
    if p.size and p.max() - p.min() < math.pi:
        # No step can reach half a turn (a rounded difference never exceeds the
        # rounded span: rounding is monotone); NaN fails this test.
        return np.zeros(0, dtype=np.intp), np.zeros((0, p.shape[1]))
    dd = np.diff(p, axis=1)
    big = np.abs(dd, out=dd) >= math.pi                # |step| in place: one array fewer
    rows = np.flatnonzero(big.any(axis=1))
    if rows.size == 0:
        return rows, np.zeros((0, p.shape[1]))
    r, c = np.nonzero(big[rows])
    d = p[rows[r], c + 1] - p[rows[r], c]              # the signed steps, as np.diff has them
    ddmod = np.mod(d + math.pi, _TURN) - math.pi
    ddmod[(ddmod == -math.pi) & (d > 0)] = math.pi
    k = np.zeros((rows.size, p.shape[1]))
    k[r, c + 1] = ddmod - d
    np.cumsum(k[:, 1:], axis=1, out=k[:, 1:])
    return rows, k


def unwrapped(p: np.ndarray, rows: np.ndarray, k: np.ndarray) -> np.ndarray:
    """np.unwrap(p, axis=1) from unwrap_corrections(p); ``p`` itself when nothing wraps."""
    if rows.size == 0:
        return p
    out = p.copy()
    out[rows, 1:] = p[rows, 1:] + k[:, 1:]      # column 0 as numpy leaves it (a −0.0 too)
    return out


def unwrapped_at(p_last: np.ndarray, before: np.ndarray, k_before: np.ndarray) -> np.ndarray:
    """The last value of np.unwrap([..., before, p_last]) given the running correction
    ``k_before`` at ``before`` (the sequence's earlier corrections): numpy's rule on
    the final step, added in numpy's order."""
    d = p_last - before
    ddmod = np.mod(d + math.pi, _TURN) - math.pi
    ddmod[(ddmod == -math.pi) & (d > 0)] = math.pi
    step = ddmod - d
    step[np.abs(d) < math.pi] = 0.0
    return p_last + (k_before + step)


def _factor_poly(eig: np.ndarray, sigma: float):
    """Π_k |1 + (jω − σ)·e_k|² as c0 + c1·x + c2·x² in x = ω², per row, for at most
    two columns: each real e gives (1 − σe)² + e²·x; a conjugate pair, whose odd
    powers of ω cancel, (A + Bx)² − C²x with A = |1 − σe|², B = |e|², C = 2·Im(a·ē),
    a = 1 − σe. Rows that fit neither (an unpaired complex value) get NaN."""
    rows, n = eig.shape
    one, zero = np.ones(rows), np.zeros(rows)
    if n == 0:
        return one, zero, zero
    real = eig.imag == 0
    e = eig.real
    a, b = (1 - sigma * e) ** 2, e * e                # a real factor's c0, c1
    if n == 1:
        return tuple(np.where(real[:, 0], c, np.nan) for c in (a[:, 0], b[:, 0], zero))
    both = real[:, 0] & real[:, 1]
    pair = eig[:, 0] == np.conj(eig[:, 1])
    z = eig[:, 0]
    az = 1 - sigma * z
    pa, pb = np.abs(az) ** 2, np.abs(z) ** 2
    pc = 2 * (az * np.conj(z)).imag
    c0 = np.where(both, a[:, 0] * a[:, 1], pa * pa)
    c1 = np.where(both, a[:, 0] * b[:, 1] + a[:, 1] * b[:, 0], 2 * pa * pb - pc * pc)
    c2 = np.where(both, b[:, 0] * b[:, 1], pb * pb)
    fits = both | (pair & ~real[:, 0])
    return tuple(np.where(fits, c, np.nan) for c in (c0, c1, c2))


def level_crossing(gain: np.ndarray, zeros: np.ndarray, poles: np.ndarray, sigma: float,
                   level: np.ndarray, lo_hz: np.ndarray, hi_hz: np.ndarray) -> np.ndarray:
    """Per row the frequency (Hz) in [lo_hz, hi_hz] where |H|² = ``level``, H in the
    zero-pole-gain form of rcdoc.analysis.response (H = g·Π(1 + μ·e_k)/Π(1 + μ·d_k),
    μ = jω − σ); NaN where that form has more than two zeros or poles, where a row's
    factors do not pair, or where the bracket holds no root or two.

    |N(jω)|² − level·|D(jω)|² is then at most quadratic in x = ω²: its roots in the
    cancellation-free form (q = −(b + sign(b)·√(b² − 4ac))/2; x = q/a, c/q). The
    bisection it replaces converges to the same crossing when it is the bracket's
    only one; the caller confirms the sign change around it."""
    rows = gain.shape[0]
    nan = np.full(rows, np.nan)
    if zeros.shape[1] > 2 or poles.shape[1] > 2:
        return nan
    n0, n1, n2 = _factor_poly(zeros, sigma)
    d0, d1, d2 = _factor_poly(poles, sigma)
    k = np.abs(gain) ** 2
    a, b, c = k * n2 - level * d2, k * n1 - level * d1, k * n0 - level * d0
    xlo, xhi = (2 * math.pi * lo_hz) ** 2, (2 * math.pi * hi_hz) ** 2
    with np.errstate(all="ignore"):
        q = -0.5 * (b + np.copysign(np.sqrt(b * b - 4 * a * c), b))
        r1 = np.where(a != 0, q / a, np.nan)           # no x² term: the one root is c/q
        r2 = c / q
        in1 = (r1 >= xlo) & (r1 <= xhi)
        in2 = (r2 >= xlo) & (r2 <= xhi)
        x = np.where(in1 & ~in2, r1, np.where(in2 & ~in1, r2, np.nan))
        return np.sqrt(x) / (2 * math.pi)


# A closed-form crossing is kept when H, evaluated as the bisection does, lies on
# either side of the level this close (relative) below and above it: within
# 1e-10 of the bisection's answer, far inside the example's 1e-9.
CLOSED_FORM_CHECK = 1e-10


def confirmed_crossing(response, thr_db: np.ndarray, lo_hz: np.ndarray, hi_hz: np.ndarray,
                       falling: bool) -> np.ndarray:
    """level_crossing of a Response (rcdoc.analysis.response) at thr_db per row, NaN
    where it does not apply or where db(H) at f·(1 ∓ CLOSED_FORM_CHECK) is not on
    the two sides of thr_db (above then below if ``falling``, else the reverse)."""
    r = response
    if r.through:
        return np.full(lo_hz.shape, np.nan)
    f = level_crossing(r.gain, r.zeros, r.poles, r.pencil.sigma, 10 ** (thr_db / 10),
                       lo_hz, hi_hz)
    f[~r.ok] = np.nan
    return _confirmed(r, f, np.arange(f.size), thr_db, falling)


def _confirmed(response, f: np.ndarray, rows: np.ndarray, thr_db: np.ndarray,
               falling: bool) -> np.ndarray:
    """f (one per row of ``rows``), NaN where db(H) at f·(1 ∓ CLOSED_FORM_CHECK), evaluated
    as the bisection does, is not on the two sides of thr_db (above then below if
    ``falling``, else the reverse)."""
    idx = np.flatnonzero(np.isfinite(f))
    if idx.size:
        at = rows[idx]
        under_hi = db(response.at_rows(f[idx] * (1 + CLOSED_FORM_CHECK), at)) < thr_db[idx]
        under_lo = db(response.at_rows(f[idx] * (1 - CLOSED_FORM_CHECK), at)) < thr_db[idx]
        f[idx[(under_hi == under_lo) | (under_hi != falling)]] = np.nan
    return f


NEWTON_ITERATIONS = 12      # safeguarded Newton steps at most (quadratic: 4 to 6 do, normally)
NEWTON_TOL = 1e-13          # stop when the step in log-frequency is below this


def newton_crossing(response, rows: np.ndarray, thr_db: np.ndarray, lo_hz: np.ndarray,
                    hi_hz: np.ndarray, falling: bool) -> np.ndarray:
    """Per row of ``rows`` the frequency in [lo_hz, hi_hz] where the gain crosses thr_db,
    by Newton's method on dB against log-frequency, the slope from the poles and zeros
    (Response.rows(...).db_slope), kept inside the bracket (a step leaving it bisects
    instead); NaN where a row's factors are unsafe, it did not converge, or the answer
    is not confirmed as the closed form's is (``_confirmed``: within CLOSED_FORM_CHECK
    of the bisection's). The bisection then serves those rows."""
    probe = response.rows(rows)
    a, b = np.log(lo_hz), np.log(hi_hz)
    x = 0.5 * (a + b)
    done = np.zeros(x.shape, dtype=bool)
    with np.errstate(all="ignore"):
        for _ in range(NEWTON_ITERATIONS):
            g, slope = probe.db_slope(np.exp(x))
            g = g - thr_db
            under = g < 0                      # the crossing lies below x when falling
            if falling:
                b, a = np.where(under, x, b), np.where(under, a, x)
            else:
                a, b = np.where(under, x, a), np.where(under, b, x)
            nxt = x - g / slope
            inside = np.isfinite(nxt) & (nxt >= a) & (nxt <= b)     # x itself is a or b
            nxt = np.where(inside, nxt, 0.5 * (a + b))
            fresh = np.abs(nxt - x) <= NEWTON_TOL * np.maximum(np.abs(x), 1.0)
            # A converged row stays where it converged (rounding then only jitters it).
            x = np.where(done, x, np.where(np.isfinite(g), nxt, np.nan))
            done |= fresh
            if np.all(done | np.isnan(x)):
                break
    f = np.where(done, np.exp(x), np.nan)
    return _confirmed(response, f, rows, thr_db, falling)


PEAK_TOL = 1e-12            # Newton's last step in log-frequency, on the way to a maximum


def newton_peak(response, rows: np.ndarray, a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Per row of ``rows`` the largest gain (dB) over [a, b] in log-frequency (the sweep's
    top column and its neighbours), where the gain is unimodal there: at an end where it
    falls away from that end over the whole bracket, else where the slope vanishes,
    found by Newton's steps on the slope (the curvature from the poles and zeros, kept
    inside the bracket: a step leaving it, or a curvature that is not negative, bisects
    on the slope's sign). NaN where a row's factors are unsafe or it did not converge:
    the golden-section search it replaces serves those rows. Its value differs from
    that search's by the search's own residue (its last probes lie 0.618^30 of the
    bracket from the top: a second-order gap, about 1e-15 of the curvature)."""
    probe = response.rows(rows)
    with np.errstate(all="ignore"):
        ga, sa = probe.db_slope(np.exp(a))
        gb, sb = probe.db_slope(np.exp(b))
        out = np.where(sa <= 0, ga, np.where(sb >= 0, gb, np.nan))
        inner = np.flatnonzero((sa > 0) & (sb < 0))
        lo, hi = a[inner], b[inner]
        x = 0.5 * (lo + hi)
        done = np.zeros(x.shape, dtype=bool)
        g = np.full(x.shape, np.nan)
        sub = response.rows(rows[inner]) if inner.size else None
        for _ in range(NEWTON_ITERATIONS if inner.size else 0):
            g, s1, s2 = sub.db_slope(np.exp(x), curvature=True)
            lo, hi = np.where(s1 > 0, x, lo), np.where(s1 > 0, hi, x)
            nxt = x - s1 / s2
            good = np.isfinite(nxt) & (s2 < 0) & (nxt >= lo) & (nxt <= hi)
            nxt = np.where(good, nxt, 0.5 * (lo + hi))
            # Converged in place, or in value where the top is too flat to place (the
            # step's gain, about s1·step / 2, below a rounding of the gain itself).
            fresh = good & ((np.abs(nxt - x) <= PEAK_TOL * np.maximum(np.abs(x), 1.0)) |
                            (np.abs(s1 * (nxt - x)) <= PEAK_TOL * np.maximum(np.abs(g), 1.0)))
            # A converged row stays where it converged (rounding then only jitters it).
            x = np.where(done, x, np.where(np.isfinite(g), nxt, np.nan))
            done |= fresh
            if np.all(done | np.isnan(x)):
                break
        if inner.size:
            g_end, _ = sub.db_slope(np.exp(x))
            out[inner] = np.where(done, np.fmax(g, g_end), np.nan)
    return out


def near_reference(phase: np.ndarray, h_nominal: np.ndarray, lo: np.ndarray | None = None,
                   hi: np.ndarray | None = None) -> np.ndarray:
    """Each sample's unwrapped phase (radians, rows by frequencies) moved by whole
    turns to within half a turn of the nominal's at each frequency: the same
    angle. A zero that sits on one side of the jω axis in some samples and on
    the other in the rest (a twin-T notch) turns the phase by +180° in the ones
    and −180° in the others, so unwrapped they end a whole turn apart above it;
    a band over them drew every angle in between, which no sample has. The
    metrics keep the phase unwrapped from the passband. ``lo``, ``hi``: the
    phase's minimum and maximum over the rows, when known: where both lie within
    half a turn of the nominal's everywhere, no entry can move."""
    ref = np.unwrap(np.angle(h_nominal))
    if lo is not None and hi is not None and not (np.isnan(lo).any() or np.isnan(hi).any()):
        if not (np.any(hi - ref > np.pi) or np.any(ref - lo > np.pi)):
            return phase
    # Only entries more than half a turn away move (a comparison with NaN is
    # false: where either phase is not a number, nothing moves). Usually none:
    # one pass, and the array as it came.
    away = np.abs(phase - ref) > np.pi
    if not away.any():
        return phase
    rows, cols = np.nonzero(away)
    out = phase.copy()
    out[rows, cols] -= _TURN * np.round((phase[rows, cols] - ref[cols]) / _TURN)
    return out
