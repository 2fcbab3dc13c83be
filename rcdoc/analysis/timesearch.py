"""Searches along the step response's time axis, per row, by blocks of instants.

What it is for: the first instant a response reaches a share of its final
value (rise time) and the last instant it lies outside a band around it
(settling), for every Monte Carlo row at once. Each block's largest and
smallest value per row (``block_extremes``, computed once per response) tell
exactly which blocks hold such an instant; only those are read instant by
instant. The time axis is read along the samples, contiguous in the time
march's time-major recording.

What it must not do: know about stages, parts or drives, or loop in Python
over rows (loops run over blocks).
"""

from __future__ import annotations

import numpy as np

__all__ = ["CROSS_BLOCK", "block_extremes", "cross_time", "last_outside"]


CROSS_BLOCK = 128    # time columns per block of the crossing searches (stay in cache)


def last_outside(y: np.ndarray, fin: np.ndarray, scale: np.ndarray, band: float,
                  extremes: tuple[np.ndarray, np.ndarray] | None = None):
    """(last index where err = |y − fin| / scale > band, or T − 1 if none; rows that
    never left the band).

    Rows with finite values and a positive, finite scale (all, normally) are
    searched from the end by blocks (see _last_outside_blocks; ``extremes``: y's
    block_extremes, where known); the others over the whole window as err's NaN
    says: a missing response never settled."""
    rows, T = y.shape
    plain = np.isfinite(fin) & np.isfinite(scale) & (scale > 0) & np.isfinite(y[:, 0])
    found = _last_outside_blocks(y, fin, scale, band, plain,
                                 extremes if extremes is not None else block_extremes(y))
    last = np.where(found >= 0, found, T - 1)
    never = plain & (found < 0)
    odd = np.flatnonzero(~plain)
    if odd.size:
        e = np.abs(y[odd] - fin[odd, None]) / scale[odd, None]
        outside = e > band
        last[odd] = T - 1 - np.argmax(outside[:, ::-1], axis=1)
        never[odd] = ~outside.any(axis=1) & ~np.isnan(e).any(axis=1)
    return last, never


def block_extremes(y: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Each row's largest and smallest value in each block of CROSS_BLOCK instants,
    NaN ignored: two (blocks, rows) arrays. Read along the samples (contiguous in
    the march's time-major recording); computed once for all the settling bands."""
    yt = y.T
    starts = range(0, yt.shape[0], CROSS_BLOCK)
    top, bottom = np.empty((len(starts), y.shape[0])), np.empty((len(starts), y.shape[0]))
    for k, lo in enumerate(starts):
        np.fmax.reduce(yt[lo:lo + CROSS_BLOCK], axis=0, out=top[k])
        np.fmin.reduce(yt[lo:lo + CROSS_BLOCK], axis=0, out=bottom[k])
    return top, bottom


def _last_outside_blocks(y, fin, scale, band, need, extremes) -> np.ndarray:
    """Per row the last index where y leaves fin ± band·scale (−1 where none).

    The band's edges are computed once per row, so an instant costs two comparisons
    (not a subtraction, a modulus and a division: they decide the same instants but
    where y lies within a rounding of an edge). A block of instants holds such an
    instant exactly when its largest y is above the band or its smallest below
    (``extremes``): blocks are judged from the end back, and only a row's last such
    block is searched instant by instant, until every ``need`` row has one."""
    rows, T = y.shape
    yt = y.T
    thr = band * scale
    upper, lower = fin + thr, fin - thr
    top, bottom = extremes
    found = np.full(rows, -1)
    todo = need.copy()
    for k in range(top.shape[0] - 1, -1, -1):
        hit = np.flatnonzero(((top[k] > upper) | (bottom[k] < lower)) & (found < 0))
        if hit.size:
            lo, hi = k * CROSS_BLOCK, min((k + 1) * CROSS_BLOCK, T)
            block = yt[lo:hi][:, hit]
            out = (block > upper[hit]) | (block < lower[hit])
            found[hit] = hi - 1 - np.argmax(out[::-1], axis=0)
            todo[hit] = False
            if not todo.any():
                break
    return found


def cross_time(y: np.ndarray, fin: np.ndarray, t: np.ndarray, level: float,
                extremes: tuple[np.ndarray, np.ndarray] | None = None) -> np.ndarray:
    """First time each row's y / fin reaches ``level`` (linear interpolation between
    samples); searched by blocks from the start (see _first_reaching; ``extremes``:
    y's block_extremes, where known)."""
    rows = np.arange(y.shape[0])
    first = _first_reaching(y, fin, level, np.isfinite(fin) & np.isfinite(y[:, 0]),
                            extremes if extremes is not None else block_extremes(y))
    j = np.maximum(first, 0)
    ok = (first >= 0) & (j > 0)
    j0 = np.maximum(j - 1, 0)
    y0, y1 = y[rows, j0] / fin, y[rows, j] / fin
    with np.errstate(divide="ignore", invalid="ignore"):
        frac = np.where(y1 != y0, (level - y0) / (y1 - y0), 0.0)
    return np.where(ok, t[j0] + frac * (t[j] - t[j0]), np.nan)


def _first_reaching(y, fin, level, need, extremes) -> np.ndarray:
    """Per row the first index where y / fin >= level (−1 where none).

    y / fin rounds monotonically in y (rising for a positive fin, falling for a
    negative one), so a block of instants holds such an instant exactly when its
    largest y (for a negative fin, its smallest) does (``extremes``): blocks are
    judged from the start, and only a row's first such block is searched instant by
    instant, until every ``need`` row has one."""
    yt = y.T
    top, bottom = extremes
    neg = np.signbit(fin)
    found = np.full(y.shape[0], -1)
    todo = need.copy()
    with np.errstate(divide="ignore", invalid="ignore"):
        for k in range(top.shape[0]):
            hit = np.flatnonzero((np.where(neg, bottom[k], top[k]) / fin >= level) & (found < 0))
            if hit.size:
                lo = k * CROSS_BLOCK
                block = yt[lo:lo + CROSS_BLOCK][:, hit] / fin[hit] >= level
                found[hit] = lo + np.argmax(block, axis=0)
                todo[hit] = False
            if not todo.any():
                break
    return found
