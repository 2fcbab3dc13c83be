"""Switched linear networks: exact per interval, periodic steady state by one solve.

A network whose switches change only at fixed instants is linear between them:
within an interval of length h with constant input, dx/dt = A x + b gives
x(h) = Φ x(0) + g with Φ = e^{Ah}, g = ∫0^h e^{Aτ} dτ · b. Both come from one
matrix exponential of the block matrix [[A, b], [0, 0]]·h = [[Φ, g], [0, 1]]
(C. F. Van Loan, "Computing integrals involving the matrix exponential",
IEEE Trans. Automatic Control 23, 1978). A period is a chain of such affine
maps and of resets (x := R x + r, e.g. a sampling capacitor set to a
multiplexer's previous channel); the state that repeats solves
(I − M) x = c for the period's composed map x ↦ M x + c: one batched linear
solve, no marching through hundreds of periods.

Everything is vectorised over rows (Monte Carlo samples): A is (S, n, n),
b is (S, n), durations are scalars or (S,). The engine knows nothing of kinds.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

# Padé [6/6] coefficients c_k = (2q−k)! q! / ((2q)! k! (q−k)!), q = 6; with the
# matrix scaled to a 1-norm ≤ 1/2 its relative error is below 1e-16 (C. Moler and
# C. Van Loan, "Nineteen dubious ways to compute the exponential of a matrix",
# SIAM Review 20, 1978, table of the [q/q] bound).
_PADE_Q = 6
_PADE_C = [math.factorial(2 * _PADE_Q - k) * math.factorial(_PADE_Q)
           / (math.factorial(2 * _PADE_Q) * math.factorial(k) * math.factorial(_PADE_Q - k))
           for k in range(_PADE_Q + 1)]
_SCALED_NORM = 0.5


def expm(a: np.ndarray) -> np.ndarray:
    """e^A for a stack of square matrices (..., N, N): scaling and squaring with
    a Padé [6/6] approximant, each matrix scaled by its own power of two.

    scipy.linalg.expm accepts stacks too but loops over them in Python; this
    runs the whole stack through numpy at once (the tests compare the two).
    """
    a = np.asarray(a, dtype=float)
    norm = np.abs(a).sum(axis=-2).max(axis=-1)                 # 1-norm per matrix
    with np.errstate(divide="ignore"):
        s = np.ceil(np.log2(np.maximum(norm, 1e-300) / _SCALED_NORM))
    s = np.clip(np.nan_to_num(s, nan=0.0, posinf=0.0), 0, 1100).astype(int)
    x = a * np.ldexp(1.0, -s)[..., None, None]
    eye = np.broadcast_to(np.eye(a.shape[-1]), a.shape)
    num = _PADE_C[0] * eye
    den = _PADE_C[0] * eye
    power = eye
    for k in range(1, _PADE_Q + 1):
        power = power @ x
        num = num + _PADE_C[k] * power
        den = den + (-1) ** k * _PADE_C[k] * power
    e = np.linalg.solve(den, num)
    for k in range(int(s.max(initial=0))):
        square = e @ e
        e = np.where((s > k)[..., None, None], square, e)
    return e


@dataclass(frozen=True)
class Affine:
    """x ↦ M x + c per row: M (S, n, n), c (S, n)."""

    m: np.ndarray
    c: np.ndarray

    def apply(self, x: np.ndarray) -> np.ndarray:
        return np.einsum("sij,sj->si", self.m, x) + self.c

    def then(self, other: "Affine") -> "Affine":
        """This map followed by ``other``."""
        return Affine(other.m @ self.m, np.einsum("sij,sj->si", other.m, self.c) + other.c)


def interval(a: np.ndarray, b: np.ndarray, h) -> Affine:
    """Exact map over an interval of length ``h`` (scalar or (S,)) of dx/dt = A x + b."""
    s, n = b.shape
    h = np.broadcast_to(np.asarray(h, dtype=float), (s,))
    block = np.zeros((s, n + 1, n + 1))
    block[:, :n, :n] = a * h[:, None, None]
    block[:, :n, n] = b * h[:, None]
    e = expm(block)
    return Affine(e[:, :n, :n], e[:, :n, n])


def reset(rows: int, n: int, values: dict[int, np.ndarray | float]) -> Affine:
    """x_i := value for the given state indices, the other states unchanged."""
    m = np.broadcast_to(np.eye(n), (rows, n, n)).copy()
    c = np.zeros((rows, n))
    for i, v in values.items():
        m[:, i, :] = 0.0
        c[:, i] = v
    return Affine(m, c)


def compose(maps: list[Affine]) -> Affine:
    out = maps[0]
    for nxt in maps[1:]:
        out = out.then(nxt)
    return out


def periodic_state(maps: list[Affine]) -> np.ndarray:
    """State at the start of the period that the chain of maps brings back to itself.

    Solves (I − M) x = c for the composed map. Rows with no periodic solution
    (a singular I − M: an undamped state) come back as NaN.
    """
    period = compose(maps)
    s, n = period.c.shape
    lhs = np.eye(n)[None] - period.m
    with np.errstate(invalid="ignore", divide="ignore"):
        det = np.linalg.det(lhs)
        ok = np.isfinite(det) & (np.abs(det) > 1e-300)
        safe = np.where(ok[:, None, None], lhs, np.eye(n)[None])
        x = np.linalg.solve(safe, period.c[..., None])[..., 0]
    return np.where(ok[:, None], x, np.nan)


def boundary_states(maps: list[Affine], x0: np.ndarray) -> list[np.ndarray]:
    """States after each map of the chain, starting from ``x0``: len(maps) arrays (S, n)."""
    out, x = [], x0
    for m in maps:
        x = m.apply(x)
        out.append(x)
    return out


def waveform(a: np.ndarray, b: np.ndarray, x_start: np.ndarray, dt: np.ndarray) -> np.ndarray:
    """States at times ``dt`` after the start of an interval: (S, T, n).

    ``dt`` is (T,) (the same times for every row) or (S, T) (per row); each time
    is one exact interval map, so no error accumulates along the waveform.
    """
    s, n = b.shape
    dt = np.broadcast_to(np.asarray(dt, dtype=float), (s, np.shape(dt)[-1]))
    t = dt.shape[1]
    a_rep = np.repeat(a, t, axis=0)
    b_rep = np.repeat(b, t, axis=0)
    step = interval(a_rep, b_rep, dt.reshape(-1))
    x = step.apply(np.repeat(x_start, t, axis=0))
    return x.reshape(s, t, n)
