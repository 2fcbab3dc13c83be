"""Poles of a network per sample, computed on a well-conditioned problem, and the stability rule.

What it is for: the natural frequencies (where G + sC is singular, the
source held at 0 V) of every row of a batch, accurate whatever the spread of
the part values (1 mΩ next to 1 GΩ, 1 fF next to 10 mF), and the verdict
"unstable" drawn from them.

Why not the nodal matrices as the engine assembles them: see ``treecoords``
(values decades apart are lost to rounding in nodal stamping; a
Sallen-Key's Q came out 0.5 instead of 3.16). The pencil in tree-branch
coordinates is then scaled (frequency by the characteristic rate, rows and columns by
their largest entries) and its finite eigenvalues found by shift-invert.
"""

from __future__ import annotations

from typing import Mapping

import numpy as np

from rcdoc.analysis import small_linalg
from rcdoc.analysis.network import Network
from rcdoc.analysis.treecoords import characteristic_rate, natural_pencil

# A pole p makes a sample unstable when Re p >= -STABILITY_RTOL·|p|: in the
# right half-plane, on the imaginary axis, or so close to it (Q above 5e8)
# that rounding of the pole computation could put it on either side. A pole
# at s = 0 (a node reached through capacitors only) counts as on the axis.
STABILITY_RTOL = 1e-9
# Eigenvalues of the shift-inverted pencil below this share of the largest are
# infinite poles (algebraic equations: ideal op-amps, nodes without capacitors).
_INFINITE_RTOL = 1e-12
# Rounds of alternating row/column scaling (converges in a few).
_BALANCE_ROUNDS = 6
# From this many rows on the balancing runs with samples last (faster; the same numbers).
_SAMPLES_LAST = 40
# A shift whose matrix G + σC has a condition number above this is too near a pole.
_COND_LIMIT = 1e13


def _balance(G: np.ndarray, C: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Scale rows and columns of the pencil so that |G| + |C| has largest entries near 1."""
    if G.shape[0] < _SAMPLES_LAST:          # few rows: along the trailing axes
        G, C = G.copy(), C.copy()
        for _ in range(_BALANCE_ROUNDS):
            for axis in (-1, -2):
                m = np.max(np.abs(G) + np.abs(C), axis=axis, keepdims=True)
                m = np.where(m > 0, np.sqrt(m), 1.0)
                G /= m
                C /= m
        return G, C
    # Samples last: the maxima over a row or a column are then elementwise maxima
    # of contiguous arrays (four times faster than along the small trailing axes),
    # the same numbers in the same order.
    g = np.moveaxis(G, 0, -1).copy(order="C")       # copies: scaled in place below
    c = np.moveaxis(C, 0, -1).copy(order="C")
    s = np.empty_like(g)
    for _ in range(_BALANCE_ROUNDS):
        for axis in (1, 0):             # along a row, then along a column
            np.abs(g, out=s)
            s += np.abs(c)
            m = np.max(s, axis=axis, keepdims=True)
            m = np.where(m > 0, np.sqrt(m), 1.0)   # square roots: converge without overshoot
            g /= m
            c /= m
    return (np.ascontiguousarray(np.moveaxis(g, -1, 0)),
            np.ascontiguousarray(np.moveaxis(c, -1, 0)))


def _well_conditioned(A: np.ndarray) -> np.ndarray:
    """np.linalg.cond(A) < _COND_LIMIT per matrix (S, n, n) -> (S,) bool, the same answers.

    The 2-norm condition number takes a singular value decomposition per matrix;
    the 1-norm one (an inverse) lies within a factor n of it either way (Golub &
    Van Loan, Matrix Computations, 2.3.2), so it settles every matrix but those
    within that factor of the limit (or without a finite inverse), which get the
    2-norm number itself. A matrix with an infinite or NaN entry is not well
    conditioned (its SVD would not converge: LinAlgError)."""
    n = A.shape[-1]
    with np.errstate(all="ignore"):
        c1 = np.linalg.cond(A, 1)
        good = c1 * n < _COND_LIMIT
        unsure = ~good & ~(c1 > _COND_LIMIT * n)       # NaN lands here
        unsure &= np.all(np.isfinite(A), axis=(-2, -1))
        if np.any(unsure):
            good[unsure] = np.linalg.cond(A[unsure]) < _COND_LIMIT
    return good


def poles(network: Network, values: Mapping[str, np.ndarray], rate: float | None = None) -> np.ndarray:
    """Finite poles (rad/s, complex) per row, (S, n) sorted by magnitude, NaN-padded.

    ``rate`` (rad/s) scales frequency; by default ``characteristic_rate``.
    """
    w = float(rate) if rate else characteristic_rate(network, values)
    G, C = _balance(*natural_pencil(network, values, w))
    rows, size = G.shape[:2]
    if size == 0:
        return np.zeros((rows, 0), dtype=complex)
    # Shift-invert at z = σ: eigenvalues λ of (G + σC)⁻¹C give z = σ − 1/λ. A real
    # shift that happens to be a pole is replaced by a second, unrelated one.
    lam = np.zeros((rows, size), dtype=complex)
    todo = np.ones(rows, dtype=bool)
    for sigma in (1.0, 0.6180339887, 2.718281828):
        A = G[todo] + sigma * C[todo]
        good = _well_conditioned(A)
        if np.any(good):
            idx = np.flatnonzero(todo)[good]
            K = np.linalg.solve(A[good], C[idx])
            lam[idx] = _to_poles(small_linalg.eigvals(K), np.full(idx.size, sigma))
            todo[idx] = False
        if not np.any(todo):
            break
    lam[todo] = np.nan
    p = lam * w
    order = np.argsort(np.where(np.isnan(p.real), np.inf, np.abs(p)), axis=1, kind="stable")
    return np.take_along_axis(p, order, axis=1)


def _to_poles(lam: np.ndarray, sigma: np.ndarray) -> np.ndarray:
    """z = σ − 1/λ for the finite eigenvalues; NaN for the infinite ones (λ ≈ 0)."""
    scale = np.max(np.abs(lam), axis=1, keepdims=True)
    finite = np.abs(lam) > _INFINITE_RTOL * np.where(scale > 0, scale, 1.0)
    with np.errstate(divide="ignore", invalid="ignore"):
        z = sigma[:, None] - 1.0 / np.where(finite, lam, 1.0)
    return np.where(finite, z, np.nan + 0j)


def unstable(p: np.ndarray) -> np.ndarray:
    """Rows (S,) with a pole in the right half-plane or on the imaginary axis."""
    bad = np.isfinite(p) & (p.real >= -STABILITY_RTOL * np.abs(p))
    return np.any(bad, axis=1)


def offending(p: np.ndarray) -> np.ndarray:
    """The poles of one row (n,) that break the rule (for the note's caution)."""
    p = p[np.isfinite(p)]
    return p[p.real >= -STABILITY_RTOL * np.abs(p)]
