"""The phase at a mark (a frequency the stage names), continuous along the sweep.

What it is for: the Evaluator's ``phase(at_hz)``: the mark's principal phase
joined, by np.unwrap's rule, to the sweep's phase unwrapped from the passband
end, with np.unwrap's corrections computed once per chunk
(sweep_math.unwrap_corrections) or, where no row can wrap (a first-order
low-pass), without sweeping the phase at all.

What it must not do: change a number (tests/test_sweep_math.py compares it with
np.unwrap over the swept points and the mark).
"""

from __future__ import annotations

import numpy as np

from rcdoc.analysis import sweep_math


def unwrapped_phase(ev, at_hz: float) -> np.ndarray:
    """Phase (degrees) at ``at_hz``, continuous along the sweep from the passband end.

    The sweep's points up to the mark (from the low end for a low-pass or
    band-pass, from the high end for a high-pass) are unwrapped, the mark's
    value is joined to its nearest swept neighbour, and the whole is shifted
    by whole turns so that the passband end reads within ±180°: the last value
    of np.unwrap over those points and the mark, from the chunk's corrections
    (sweep_math.unwrapped_at; the sweep rises, so the points are a prefix).
    """
    f = ev.freqs_hz
    ph_mark = np.angle(ev.h_at(at_hz))
    high = ev.passband == "high"
    n = int(np.count_nonzero(f >= at_hz if high else f <= at_hz))
    if n == 0:
        return np.degrees(ph_mark)
    before, k_before = _phase_before(ev, n, high)
    return np.degrees(sweep_math.unwrapped_at(ph_mark, before, k_before))


def _phase_before(ev, n: int, high: bool) -> tuple[np.ndarray, np.ndarray]:
    """The principal phase at the n-th swept point from the passband end and np.unwrap's
    running correction there, per row. Where no row's phase can step by half a turn
    (Response.never_wraps: a first-order low-pass) and the sweep's phase is not at
    hand, the correction is zero and that one point is swept alone: the same
    arithmetic, element by element, as the whole sweep's (whose wraps are then none)."""
    k_before = np.zeros(ev.rows)
    if "phase_rad" not in ev.__dict__ and ev.response.never_wraps():
        col = len(ev.freqs_hz) - n if high else n - 1
        one = ev.response.sweep_phase(ev.freqs_hz[col:col + 1])
        if one is not None:
            return one[:, 0], k_before
    p, rows, k = ev.phase_wraps(high)
    k_before[rows] = k[:, n - 1]
    return p[:, n - 1], k_before

