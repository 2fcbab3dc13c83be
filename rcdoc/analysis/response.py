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

What it must not do: know about stage kinds or metrics, or loop in Python
over rows (loops run over poles and zeros only).
"""

from __future__ import annotations

import math

import numpy as np

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

    def sweep(self, freqs_hz: np.ndarray) -> np.ndarray:
        """H over a common set of frequencies, (S, F): the same arithmetic as ac.ac."""
        f = _freqs(freqs_hz)
        system, p = self.system, self.pencil
        if self.through:
            return np.ones((system.samples, f.size), dtype=complex)
        jw = 2j * math.pi * f
        H = np.empty((system.samples, f.size), dtype=complex)
        with np.errstate(all="ignore"):
            for ss in _pz_blocks(system.samples, f.size):
                den = p.product(None, self.poles[ss], jw)
                if self.zeros.shape[1]:
                    np.divide(p.product(self.gain[ss], self.zeros[ss], jw), den, out=H[ss])
                else:           # no zero: the gain over the poles, one division
                    np.divide(self.gain[ss, None], den, out=H[ss])
        ok = self.ok & np.all(np.isfinite(H), axis=1)
        if not np.all(ok):
            H[~ok] = _direct(system, f, ~ok, lambda X: X[..., self.out])
        return H

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
