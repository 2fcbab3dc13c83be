"""Cheaper, equivalent arithmetic for what the Evaluator derives from a sweep.

What it is for: the phase unwrapped along the sweep (numpy's rule, its
corrections computed only where a step reaches half a turn, once per chunk of
rows and shared by the phase band and every mark), and the -3 dB crossing of
a response with at most two poles and two zeros from the closed-form root of
|N(jω)|² = t·|D(jω)|² (a quadratic in ω²) instead of a bisection.

What it must not do: change a number beyond rounding. Each function states
the method it replaces; tests/test_sweep_math.py compares them.
"""

from __future__ import annotations

import math

import numpy as np

_TURN = 2 * math.pi


def db(h: np.ndarray) -> np.ndarray:
    """20·log10|h|, as 10·log10(re² + im²): a third cheaper than the complex modulus.

    The squares leave the double range below 1e-154 or above 1e154; those
    entries (none in a physical filter's sweep) take the modulus instead.
    """
    h = np.asarray(h)
    if not np.iscomplexobj(h):
        with np.errstate(divide="ignore"):
            return 20 * np.log10(np.abs(h))
    with np.errstate(divide="ignore", over="ignore", under="ignore", invalid="ignore"):
        out = 10 * np.log10(h.real * h.real + h.imag * h.imag)
        bad = ~np.isfinite(out)
        if bad.any():
            out[bad] = 20 * np.log10(np.abs(h[bad]))
    return out


def unwrap_corrections(p: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(rows, K): the rows of ``p`` (R × F, radians) that np.unwrap(p, axis=1)
    changes and, for those rows, the running sum K (len(rows) × F, K[:, 0] = 0)
    that it adds: np.unwrap(p, axis=1)[rows] == p[rows] + K bit for bit, and the
    other rows are unchanged.

    Same operations as numpy's unwrap (period 2π, discontinuity π), evaluated
    only at the steps of at least π; a phase that never jumps costs one diff
    and one comparison.
    """
    dd = np.diff(p, axis=1)
    big = np.abs(dd) >= math.pi
    rows = np.flatnonzero(big.any(axis=1))
    if rows.size == 0:
        return rows, np.zeros((0, p.shape[1]))
    r, c = np.nonzero(big[rows])
    d = dd[rows[r], c]
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
