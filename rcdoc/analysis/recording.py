"""The time march's recording: what is kept of each probe, run by run.

What it is for: turning the runs of states that rcdoc.analysis.transient
marches (only those that hold charge or flux) into probes: the recorded
ones in full, the others folded into a few running values (``Reduce``: the
largest |y|, sums and largest of y² over windows, values at chosen instants)
that the part stresses read. Probes on the other states are formed from the
marched ones with weights computed once per block of samples.

What it must not do: step the network, know about stage kinds or parts, or
loop in Python over samples (loops run over runs of steps and probes).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Mapping

import numpy as np

__all__ = ["RUN", "Recorder", "Reduce"]


@dataclass(frozen=True)
class Reduce:
    """What is kept of a probe that is not recorded step by step.

    Kept, per sample, as the columns of one (S, width) array: the largest
    |y| over the whole grid; for each index window [lo, hi) the sum and the
    largest of y²; the values at the ``at`` indices (non-negative). Memory
    then grows with neither the grid nor the number of such probes beyond
    these few columns.
    """

    windows: tuple[tuple[int, int], ...] = ()
    at: tuple[int, ...] = ()

    @property
    def width(self) -> int:
        return 1 + 2 * len(self.windows) + len(self.at)

    def absmax(self, a: np.ndarray) -> np.ndarray:
        return a[:, 0]

    def sumsq(self, a: np.ndarray, window: tuple[int, int]) -> np.ndarray:
        return a[:, 1 + self.windows.index(window)]

    def maxsq(self, a: np.ndarray, window: tuple[int, int]) -> np.ndarray:
        return a[:, 1 + len(self.windows) + self.windows.index(window)]

    def value(self, a: np.ndarray, index: int) -> np.ndarray:
        return a[:, 1 + 2 * len(self.windows) + self.at.index(index)]

    def fold(self, a: np.ndarray, n0: int, y: np.ndarray, span=None) -> None:
        """Fold the values y (m, s), time-major, at steps n0 .. n0+m−1 into the
        columns a (s, width); ``span``: y's largest and smallest per sample, where
        known. Time-major: each reduction runs down contiguous rows of samples
        (several times faster than along a strided time axis)."""
        m = y.shape[0]
        top, bottom = span if span is not None else (np.max(y, axis=0), np.min(y, axis=0))
        # max |y| = max(max y, −min y), without a temporary; NaN stays NaN
        a[:, 0] = np.maximum(a[:, 0], np.maximum(top, -bottom))
        nw = len(self.windows)
        for k, (lo, hi) in enumerate(self.windows):
            lo, hi = max(lo, n0), min(hi, n0 + m)
            if lo < hi:
                part = y[lo - n0:hi - n0]
                if hi - lo < m:
                    top, bottom = np.max(part, axis=0), np.min(part, axis=0)
                a[:, 1 + k] += np.einsum("ts,ts->s", part, part)
                # the largest y² is the square of the largest |y| (rounding keeps the order)
                a[:, 1 + nw + k] = np.maximum(a[:, 1 + nw + k], np.square(np.maximum(top, -bottom)))
        for k, i in enumerate(self.at):
            if n0 <= i < n0 + m:
                a[:, 1 + 2 * nw + k] = y[i - n0]


RUN = 32  # steps per run handed to a sink: a run of one probe (32 x 4000 samples, 1 MB) stays in L2


class Recorder:
    """Turns runs of marched states into probes, for one block of samples: full rows
    for the recorded probes, running reductions for the others (``Reduce``).

    A probe on the marched states alone is their combination at each step; any
    other is affine in the marched states of the step before,
    y[n] = Σ_i A_i·z_i[n−1] + a0·u0[n−1] + a1·u1[n−1] with A = w·M[:, D],
    a0 = w·k0, a1 = w·k1 (the step's own algebra, regrouped: the same numbers
    to rounding), so the other states are never formed. The first instant,
    the given initial state, is taken in full (``initial``). ``spec``: the probes'
    names and weights (S, P, N) on the states (transient._Probes).
    """

    def __init__(self, spec, reduce: Mapping[str, Reduce], out: dict, ss: slice,
                 steps: int):
        self.w = spec.weights[ss]
        self.names, self.reduce = spec.names, reduce
        self.out, self.ss, self.steps = out, ss, steps    # instants 0 .. steps − 1 are kept
        self.items: list = []
        self.homed, self.inplace = None, False

    def initial(self, x: np.ndarray) -> None:
        """The probes at instant 0 from the full initial state x (s, N)."""
        states = np.ascontiguousarray(x.T)[None]
        for p, name in enumerate(self.names):
            self._store(name, 0, _combine(_terms(self.w[:, p, :]), states))

    def bind(self, dyn, mcols, k0t, k1t, u0T, u1T) -> None:
        """What the probes need of the step (see ``_march``)."""
        self.u0T, self.u1T = u0T, u1T
        self.shared = u0T.shape[1] == 1
        self.tmp = np.empty((RUN, k0t.shape[1]))
        other = [j for j in range(k0t.shape[0]) if j not in dyn]
        self.items = []
        for p, name in enumerate(self.names):
            w = self.w[:, p, :]
            if not np.any(w[:, other] != 0):
                self.items.append((name, _terms(w[:, dyn]), None))
                continue
            A = np.ascontiguousarray(np.einsum("sk,kis->is", w, mcols))
            a0, a1 = np.einsum("sk,ks->s", w, k0t), np.einsum("sk,ks->s", w, k1t)
            self.items.append((name, None, (A, a0, a1)))
        # A recorded probe that is the one marched state itself is marched in place.
        self.homed = next((name for name, terms, _ in self.items if len(dyn) == 1
                           and _is_state(terms) and name not in self.reduce), None)

    def home(self, n0: int, m: int) -> np.ndarray | None:
        """Where the march may write z at steps n0 .. n0+m: the homed probe's rows."""
        self.inplace = self.homed is not None and n0 + m < self.steps
        return self.out[self.homed][n0:n0 + m + 1, self.ss][:, None, :] if self.inplace else None

    def __call__(self, n0: int, zs: np.ndarray) -> None:
        m = min(zs.shape[0] - 1, self.steps - 1 - n0)     # probes at n0+1 .. n0+m
        if m <= 0:
            return
        u0, u1 = self.u0T[n0:n0 + m], self.u1T[n0:n0 + m]
        steady = self.shared and bool(np.all(u0 == u0[0]) and np.all(u1 == u1[0]))
        ends = _Ends(zs, m) if zs.shape[1] == 1 else None
        for name, terms, affine in self.items:
            span = None
            if affine is None:
                y = _combine(terms, zs[1:m + 1])
                if ends is not None and _is_state(terms):
                    span = ends.get(1)
            else:
                A, a0, a1 = affine
                y = np.multiply(zs[:m, 0, :], A[0], out=self.tmp[:m])
                for i in range(1, A.shape[0]):
                    y += zs[:m, i, :] * A[i]
                c = (a0 * u0[0] + a1 * u1[0]) if steady else (a0 * u0 + a1 * u1)
                y += c
                if ends is not None and steady and name in self.reduce:
                    # y = A·z + c rounds monotonically in z: its extremes are
                    # those of z, taken through the same two operations.
                    top, bottom = ends.get(0)
                    up = A[0] >= 0
                    span = (np.where(up, top, bottom) * A[0] + c,
                            np.where(up, bottom, top) * A[0] + c)
            if not (name == self.homed and self.inplace):     # else written already
                self._store(name, n0 + 1, y, span)

    def _store(self, name: str, n: int, y: np.ndarray, span=None) -> None:
        red = self.reduce.get(name)
        if red is None:             # time-major: a run is one contiguous block
            self.out[name][n:n + y.shape[0], self.ss] = y
        else:
            red.fold(self.out[name][self.ss], n, y, span)


class _Ends:
    """The largest and smallest of a single marched state over a run, for the
    probes at z[1 .. m] (shift 1) and at z[0 .. m−1] (shift 0): the shared
    middle is reduced once (max and min are exact, so the order does not matter)."""

    def __init__(self, zs: np.ndarray, m: int):
        self.zs, self.m, self.done = zs[:, 0, :], m, {}
        self.mid = (np.max(self.zs[1:m], axis=0), np.min(self.zs[1:m], axis=0)) if m > 1 else None

    def get(self, shift: int):
        if shift not in self.done:
            edge = self.zs[self.m if shift else 0]
            self.done[shift] = (edge, edge) if self.mid is None else \
                (np.maximum(self.mid[0], edge), np.minimum(self.mid[1], edge))
        return self.done[shift]


def _is_state(terms) -> bool:
    """Whether a probe's terms (see _terms) are the first marched state itself."""
    return terms is not None and len(terms) == 1 and terms[0][0] == 0 and terms[0][1] is None


def _terms(w: np.ndarray) -> list[tuple[int, np.ndarray | None]]:
    """A probe's weights (s, N) as its nonzero columns: (j, weights or None for all 1)."""
    out = []
    for j in range(w.shape[1]):
        col = w[:, j]
        if np.any(col != 0):
            out.append((j, None if np.all(col == 1.0) else np.ascontiguousarray(col)))
    return out


def _combine(terms, states: np.ndarray) -> np.ndarray:
    """Σ_j w_j·x_j over a run of states (m, N, s) -> (m, s): the probe's weights
    times the states, skipping the zero weights and the unit multiplications
    (the same sums in the same order, so the same numbers)."""
    if not terms:
        return np.zeros((states.shape[0], states.shape[2]))
    y = None
    for j, c in terms:
        t = states[:, j, :] if c is None else states[:, j, :] * c
        y = t if y is None else y + t       # never in place: t may be a view of the states
    return y
