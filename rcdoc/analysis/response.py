"""A stage's transfer function in zero-pole-gain form, evaluated anywhere per row.

What it is for: the frequency metrics (corner, peak, notch, values at marks)
search for one frequency per row, each step asking for H at a different
frequency in every row. A direct solve of (G + sC)·x = b per step factors
an N×N complex matrix per row; the sweep already holds the poles and zeros
of every row (rcdoc.analysis.ac's pencil, the same numbers it draws), so a
step here is O(N) array operations per row: the searches cost a fraction of
the sweep instead of several sweeps.

Rows where the zero-pole-gain form is not safe (ac's rule: near-singular at
the shift, or a non-finite result) are solved directly, those rows only.

The sweep's gain and phase of a first- or second-order response (at most two
poles and two zeros, real or conjugate pairs) are taken in real arithmetic
(``sweep_db``, ``sweep_phase``): numerator and denominator are each one real
quadratic in ω, so no complex array is formed (a fifth of a Sallen-Key's
sweep and corner, measured).

What it must not do: know about stage kinds or metrics, or loop in Python
over rows (loops run over poles and zeros only).
"""

from __future__ import annotations

import math

import numpy as np

from rcdoc.analysis import sweep_math
from rcdoc.analysis.ac import _Pencil, _direct, _freqs, _pz_blocks
from rcdoc.analysis.assembly import System


class Response:
    """H = V(out) per 1 V of source for every row of ``system``, from one pencil."""

    def __init__(self, system: System, out: int, sweep_hz: np.ndarray,
                 poles: np.ndarray | None = None):
        """``poles``: the rows' finite poles where known (see _Pencil)."""
        self.system = system
        self.out = out
        self.pencil = _Pencil(system, _freqs(sweep_hz), poles)
        p = self.pencil
        self.through = out == p.d_node        # the output is the drive node: H = 1
        if not self.through:
            o = int(np.flatnonzero(p.keep == out)[0])
            d, keep = p.d_node, p.keep
            r1 = -system.C[:, keep, d]
            # A⁻¹C has at least n − rank(C) zero eigenvalues (infinite poles), and the
            # numerator's pencil likewise with its own C: the rank is structural, so
            # the nominal row's tells every row how many can be finite (none: no
            # eigenvalues to compute).
            c_o = p.C[0].copy()
            c_o[:, o] = r1[0]
            count = _rank(c_o)
            finite = _rank(p.C[0])
            if p.found is not None:
                # Poles handed in: a row with fewer finite ones than the structure has
                # (none found: no shift served it) gets A⁻¹C's eigenvalues instead.
                short = np.flatnonzero(p.found < finite)
                if short.size:
                    p.solve_rows(short)
            scale = np.max(np.abs(p.poles), axis=1, initial=0.0)
            # No eigenvalues where the rank or the first row shows no finite zero.
            probe = bool(count) and (float(scale[0]) if np.isfinite(scale[0]) else True)
            self.gain, zeros, self.ok = p.zpk(o, -system.G[:, keep, d], r1, eigen=probe)
            self.zeros = _finite(zeros, scale, count)
            self.poles = _finite(p.poles, scale, finite)

    def sweep(self, freqs_hz: np.ndarray, rows: slice = slice(None)) -> np.ndarray:
        """H over a common set of frequencies, (S, F): the same arithmetic as ac.ac;
        of the rows ``rows`` only if given (a slice: the nominal row of a chunk whose
        gain and phase came from the real arithmetic)."""
        f = _freqs(freqs_hz)
        system, p = self.system, self.pencil
        count = len(range(*rows.indices(system.samples)))
        if self.through:
            return np.ones((count, f.size), dtype=complex)
        gain, zeros, poles = self.gain[rows], self.zeros[rows], self.poles[rows]
        jw = 2j * math.pi * f
        H = np.empty((count, f.size), dtype=complex)
        with np.errstate(all="ignore"):
            for ss in _pz_blocks(count, f.size):
                den = p.product(None, poles[ss], jw)
                if zeros.shape[1]:
                    np.divide(p.product(gain[ss], zeros[ss], jw), den, out=H[ss])
                else:           # no zero: the gain over the poles, one division
                    np.divide(gain[ss, None], den, out=H[ss])
        return self._patched(H, f, None, rows)

    def sweep_db(self, freqs_hz: np.ndarray) -> np.ndarray | None:
        """sweep_math.db(self.sweep(freqs_hz)) in real arithmetic, where every row's H
        has at most two poles and two zeros, each pair real or conjugate (first- and
        second-order stages): |H|² = g²·|N|²/|D|² with each of N and D one real
        quadratic in ω (``_Quadratic``), so no complex array is made. None where
        the rows do not fit (the caller takes the complex sweep)."""
        g2 = np.square(self.gain)

        def block(num, den, ss, x, w, o):
            den.squared(ss, x, out=o)
            if num is not None:
                o /= num.squared(ss, x)
            np.divide(g2[ss, None], o, out=o)
            np.log(o, out=o)
            o *= _DB_PER_NEPER / 2          # 10·log10 of |H|²
        return self._real_sweep(freqs_hz, block, sweep_math.db)

    def sweep_phase(self, freqs_hz: np.ndarray) -> np.ndarray | None:
        """sweep_math.angle(self.sweep(freqs_hz)) in real arithmetic, where sweep_db
        applies (else None): the angle of g·N·conj(D), whose argument is H's."""
        sign = np.sign(self.gain)[:, None]          # 0 where g is: np.angle(0) = 0

        def block(num, den, ss, x, w, o):
            if num is None and den.linear and _right_half(sign[ss, 0] * den.c0[ss]):
                # One real pole, g·conj(D) = g·(c0 − j·c1·ω) in the right half-plane:
                # angle_of's quotient (−g·c1·ω)/(g·c0) is (−c1·ω)/c0 (signs are
                # exact), its arctangent needs no half-turn, and every quotient is
                # finite or ±inf (c0 > 0): the same numbers in three passes.
                np.multiply.outer(-den.c1[ss], w, out=o)
                o /= den.c0[ss, None]
                np.arctan(o, out=o)
                return
            re, im = den.parts(ss, x, w)
            np.negative(im, out=im)                 # conj(D)
            if num is not None:
                nr, ni = num.parts(ss, x, w)
                re, im = nr * re - ni * im, nr * im + ni * re
            re *= sign[ss]
            im *= sign[ss]
            o[...] = sweep_math.angle_of(re, im)
        return self._real_sweep(freqs_hz, block, sweep_math.angle)

    def never_wraps(self) -> bool:
        """No row's swept phase steps by half a turn (np.unwrap corrects nothing): every
        row has one real pole and no finite zero (a first-order low-pass), is served by
        the zero-pole-gain form, and has g·c0 > 0 and a finite c1. Each phase is then
        the arctangent of (−c1·ω)/c0, of one sign over the sweep (ω > 0), so within a
        quarter turn of its neighbours, and finite (sweep_phase's first-order path)."""
        quads = self._quadratics()
        if quads is None or quads[0] is not None or not quads[1].linear:
            return False
        den = quads[1]
        with np.errstate(invalid="ignore"):
            return bool(np.all(self.ok)) and bool(np.all(np.isfinite(den.c1))) \
                and _right_half(np.sign(self.gain) * den.c0)

    def _real_sweep(self, freqs_hz: np.ndarray, block, of) -> np.ndarray | None:
        """(S, F) filled by ``block(num, den, rows, ω², ω, out)`` over cache-sized blocks
        of rows, the rows the form does not serve patched with ``of`` of their direct
        solution; None where the rows do not fit (``_quadratics``)."""
        parts = self._quadratics()
        if parts is None:
            return None
        f = _freqs(freqs_hz)
        w = 2 * math.pi * f
        out = np.empty((self.system.samples, f.size))
        with np.errstate(all="ignore"):
            for ss in _pz_blocks(self.system.samples, f.size):
                block(*parts, ss, w * w, w, out[ss])
        return self._patched(out, f, of)

    def _quadratics(self):
        """(numerator, denominator) as _Quadratic (numerator None: no finite zero), or
        None where some usable row has more than two of either, or two that are
        neither both real nor a conjugate pair; computed once."""
        if "_quads" not in self.__dict__:
            quads = None
            # A real gain (real G and C at a real shift: every network rcdoc builds);
            # anything else keeps the complex sweep.
            if not self.through and not np.iscomplexobj(self.gain):
                den = _Quadratic.of(self.pencil.sigma, self.poles, self.ok)
                num = (_Quadratic.of(self.pencil.sigma, self.zeros, self.ok)
                       if self.zeros.shape[1] else None)
                if den is not None and (num is not None or not self.zeros.shape[1]):
                    quads = (num, den)
            self.__dict__["_quads"] = quads
        return self.__dict__["_quads"]

    def _patched(self, out: np.ndarray, f: np.ndarray, of, rows: slice = slice(None)) -> np.ndarray:
        """``out`` (the rows ``rows``) with the rows the zero-pole-gain form does not
        serve (ac's rule, or a result that is not finite) replaced by their direct
        solution, or by ``of`` of it."""
        ok = self.ok[rows] & sweep_math.finite_rows(out)
        if not np.all(ok):
            which = np.arange(self.system.samples)[rows][~ok]
            h = _direct(self.system, f, which, lambda X: X[..., self.out])
            out[~ok] = h if of is None else of(h)
        return out

    def at_rows(self, f_hz: np.ndarray, rows: np.ndarray | None = None) -> np.ndarray:
        """H at one frequency per row, (S,) (rows may ask for different frequencies);
        of the rows ``rows`` only (an index array, one frequency each) if given."""
        f = np.asarray(f_hz, dtype=float)
        if self.through:
            return np.ones(f.shape, dtype=complex)
        sel = slice(None) if rows is None else rows
        p = self.pencil
        jw = 2j * math.pi * f
        with np.errstate(all="ignore"):
            h = _row_product(p.sigma, self.gain[sel], self.zeros[sel], jw)
            h /= _row_product(p.sigma, np.ones(f.size), self.poles[sel], jw)
        bad = ~(self.ok[sel] & np.isfinite(h))
        if bad.any():
            which = bad if rows is None else np.asarray(rows)[bad]
            h[bad] = _direct_rows(self.system, self.out, f[bad], which)
        return h


    def rows(self, rows: np.ndarray | None = None) -> "Rows":
        """The rows ``rows`` (an index array; all rows if None) prepared for a search
        that asks for their gain at many frequencies (``Rows.db``)."""
        return Rows(self, rows)


_DB_PER_NEPER = 20 / math.log(10)     # as rcdoc.analysis.sweep_math.db


class Rows:
    """Some rows of a Response, their gains, poles and zeros taken out once, for the
    steps of a bisection or golden-section search: ``db(f)`` is
    sweep_math.db(response.at_rows(f, rows)), the same arithmetic in the same
    order (each factor λ·jω + (1 − σ·λ), its constant computed once), with the
    per-step indexing and set-up left out (a third of the time per step)."""

    def __init__(self, response: Response, rows: np.ndarray | None):
        self.response, self.rows = response, rows
        if response.through:
            return
        sel = slice(None) if rows is None else rows
        sigma = response.pencil.sigma
        self.gain = response.gain[sel].astype(complex)
        self.ok = response.ok[sel]
        self.zeros = _factors(sigma, response.zeros[sel])
        self.poles = _factors(sigma, response.poles[sel])

    def db(self, f_hz: np.ndarray) -> np.ndarray:
        """20·log10|H| of each row at its own frequency f_hz (one per row)."""
        f = np.asarray(f_hz, dtype=float)
        r = self.response
        if r.through:
            return np.zeros(f.shape)
        jw = 2j * math.pi * f
        with np.errstate(all="ignore"):
            h = self.gain.copy()
            for lam, const in zip(*self.zeros):
                h *= lam * jw + const
            den = np.ones(f.size, dtype=complex)
            for lam, const in zip(*self.poles):
                den *= lam * jw + const
            h /= den
        bad = ~(self.ok & np.isfinite(h))
        if bad.any():
            which = np.flatnonzero(bad) if self.rows is None else np.asarray(self.rows)[bad]
            h[bad] = _direct_rows(r.system, r.out, f[bad], which)
        with np.errstate(divide="ignore", invalid="ignore"):
            out = np.abs(h)
            np.log(out, out=out)
            out *= _DB_PER_NEPER
        return out


    def db_slope(self, f_hz: np.ndarray, curvature: bool = False):
        """(20·log10|H|, its derivative in dB per neper of frequency) of each row at its
        own frequency, from the factors alone: d ln|H| / d ln ω = Re Σ u/(u + c) over
        the zeros minus over the poles, u = λ·jω (each factor is u + c); with
        ``curvature`` also the second derivative, Re Σ ± u·c/(u + c)² (du/d ln ω = u).
        Rows whose zero-pole-gain form is not safe get NaN (no direct solve: a Newton
        step's caller falls back to its bisection or golden section there)."""
        f = np.asarray(f_hz, dtype=float)
        r = self.response
        if r.through:
            zero = np.zeros(f.shape)
            return (zero, zero, zero) if curvature else (zero, zero)
        jw = 2j * math.pi * f
        with np.errstate(all="ignore"):
            h = self.gain.copy()
            slope = np.zeros(f.size, dtype=complex)
            curve = np.zeros(f.size, dtype=complex) if curvature else None
            for zero, (lams, consts) in ((True, self.zeros), (False, self.poles)):
                for lam, const in zip(lams, consts):
                    u = lam * jw
                    fac = u + const
                    inv = 1.0 / fac             # one complex division per factor
                    if zero:
                        h *= fac
                    else:
                        h *= inv
                    q = u * inv
                    if zero:
                        slope += q
                    else:
                        slope -= q
                    if curvature:
                        q *= const * inv
                        if zero:
                            curve += q
                        else:
                            curve -= q
            out = np.abs(h)
            np.log(out, out=out)
            out *= _DB_PER_NEPER
            d = slope.real * _DB_PER_NEPER
            dd = curve.real * _DB_PER_NEPER if curvature else None
        bad = ~(self.ok & np.isfinite(out) & np.isfinite(d))
        out[bad], d[bad] = np.nan, np.nan
        if not curvature:
            return out, d
        dd[bad | ~np.isfinite(dd)] = np.nan
        return out, d, dd


def _right_half(re: np.ndarray) -> bool:
    """Every real part positive and finite (NaN is not)."""
    with np.errstate(invalid="ignore"):
        return bool(np.all((re > 0) & (re < np.inf)))


class _Quadratic:
    """Π_k (1 + (jω − σ)·e_k) over at most two e_k per row, real or a conjugate pair:
    with a_k = 1 − σ·e_k it is c0 − c2·ω² + j·c1·ω, c0 = a1·a2, c1 = a1·e2 + a2·e1,
    c2 = e1·e2, all real (one e: c0 = a, c1 = e, c2 = 0). Its rounding is the
    factored form's: near a pole of quality Q both lose about Q units in the last
    place (the real part's cancellation in one, 1 + (jω − σ)·e's in the other)."""

    def __init__(self, c0: np.ndarray, c1: np.ndarray, c2: np.ndarray, linear: bool = False):
        """``linear``: c2 is zero in every row (one e each), so the terms in c2 are
        left out: c0 − 0·ω² is c0 exactly (ω² finite), the same numbers."""
        self.c0, self.c1, self.c2 = c0, c1, c2
        self.c1sq = c1 * c1
        self.linear = linear

    @classmethod
    def of(cls, sigma: float, eig: np.ndarray, ok: np.ndarray) -> "_Quadratic | None":
        """From the eigenvalues (S, n) of the pencil; None unless every row in ``ok``
        fits (rows outside ``ok`` are solved directly: their values do not count)."""
        rows, n = eig.shape
        if n > 2:
            return None
        if n == 0:
            return cls(np.ones(rows), np.zeros(rows), np.zeros(rows))
        with np.errstate(all="ignore"):
            if n == 1:
                e = eig[:, 0]
                if np.any((e.imag != 0) & ok):
                    return None
                e = np.where(ok, e.real, 0.0)
                return cls(1.0 - sigma * e, e, np.zeros(rows), linear=True)
            e1, e2 = eig[:, 0], eig[:, 1]
            fits = ((e1.imag == 0) & (e2.imag == 0)) | (e2 == np.conj(e1))
            if not np.all(fits | ~ok):
                return None
            e1, e2 = np.where(ok, e1, 0.0), np.where(ok, e2, 0.0)
            a1, a2 = 1.0 - sigma * e1, 1.0 - sigma * e2
            return cls((a1 * a2).real, (a1 * e2 + a2 * e1).real, (e1 * e2).real)

    def squared(self, ss: slice, x: np.ndarray, out: np.ndarray | None = None) -> np.ndarray:
        """|value|² = (c0 − c2·x)² + c1²·x for the rows ``ss``, x = ω²: (s, F)."""
        if self.linear:                   # c0² + c1²·x (a sum in either order: the same)
            out = np.multiply.outer(self.c1sq[ss], x, out=out)
            out += np.square(self.c0[ss])[:, None]
            return out
        out = np.multiply.outer(self.c2[ss], x, out=out)
        np.subtract(self.c0[ss, None], out, out=out)
        np.square(out, out=out)
        out += np.multiply.outer(self.c1sq[ss], x)
        return out

    def parts(self, ss: slice, x: np.ndarray, w: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """(real part, imaginary part) for the rows ``ss``: (s, F) each."""
        re = np.multiply.outer(self.c2[ss], x)
        np.subtract(self.c0[ss, None], re, out=re)
        return re, np.multiply.outer(self.c1[ss], w)


def _factors(sigma: float, eig: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(λ, 1 − σ·λ) per pole or zero, one contiguous row each: (K, S) and (K, S)."""
    return np.ascontiguousarray(eig.T), np.ascontiguousarray((1.0 - sigma * eig).T)


def _rank(c: np.ndarray) -> int:
    """Numerical rank of one (n, n) matrix, rows and columns scaled to unit maximum."""
    if c.size == 0:
        return 0
    r = np.max(np.abs(c), axis=1, keepdims=True)
    c = c / np.where(r > 0, r, 1.0)
    k = np.max(np.abs(c), axis=0, keepdims=True)
    return int(np.linalg.matrix_rank(c / np.where(k > 0, k, 1.0)))


def _finite(eig: np.ndarray, scale: np.ndarray, count: int | None = None) -> np.ndarray:
    """The eigenvalues that stand for finite poles or zeros, largest first, at most
    ``count`` of them (the rest are zero in exact arithmetic: see Response).

    Infinite ones (an algebraic equation: an ideal op-amp, a node without a
    capacitor) are 0 in exact arithmetic and their factor is 1, but come out as
    rounding noise (3e-20 beside 8e-5); a column is dropped once, in every row,
    it is below 1e-16 of the row's largest pole eigenvalue: its factor differs
    from 1 by less than a rounding error times |jω − σ|/|σ − p|.
    """
    if eig.shape[1] == 0:
        return eig
    order = np.argsort(-np.abs(eig), axis=1, kind="stable")
    eig = np.take_along_axis(eig, order, axis=1)
    if count is not None:
        eig = eig[:, :count]
        if eig.shape[1] == 0:
            return np.ascontiguousarray(eig)
    tiny = np.abs(eig) <= 1e-16 * scale[:, None]
    keep = ~np.all(tiny, axis=0)
    last = int(np.flatnonzero(keep)[-1]) + 1 if keep.any() else 0
    return np.ascontiguousarray(eig[:, :last])


def _row_product(sigma: float, gain: np.ndarray, eig: np.ndarray, jw: np.ndarray) -> np.ndarray:
    """gain · Π_k (1 + (jω − σ)·eig_k) with one jω per row, in the pencil's arithmetic."""
    acc = gain.astype(complex)
    for k in range(eig.shape[1]):
        acc *= eig[:, k] * jw + (1.0 - sigma * eig[:, k])
    return acc


def _direct_rows(system: System, out: int, f_hz: np.ndarray, rows: np.ndarray) -> np.ndarray:
    """H of some rows, each at its own frequency: one complex solve per row."""
    s = 2j * np.pi * f_hz
    a = system.G[rows] + s[:, None, None] * system.C[rows]
    b = np.broadcast_to(system.b.astype(complex), (a.shape[0], a.shape[1]))
    return np.linalg.solve(a, b[..., None])[..., 0][:, out]
