"""Requirements -> verdicts: yield over the Monte Carlo samples, worst value, pass/fail.

A check passes when the share of samples inside its limits reaches the
required yield (default 100 %). A sample whose metric could not be found
(NaN: a corner outside the sweep, a response that never settles) counts as
failing. Part ratings are judged the same way with a yield of 100 %.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

# A yield equal to the requirement up to rounding passes (e.g. 99.7 % of 2000 samples).
YIELD_SLACK = 1e-12


@dataclass(frozen=True)
class Verdict:
    metric: str
    min: float | None
    max: float | None
    at_hz: float | None
    yield_: float
    required_yield: float
    worst: float
    nominal: float
    wc_low: float
    wc_high: float
    status: str
    part: str = ""          # for ratings: the part's reference designator
    detail: str = ""        # e.g. "within 0.1 %", "16 bits"


def inside(values: np.ndarray, lo: float | None, hi: float | None) -> np.ndarray:
    ok = np.isfinite(values)
    if lo is not None:
        ok &= values >= lo
    if hi is not None:
        ok &= values <= hi
    return ok


def worst_value(values: np.ndarray, lo: float | None, hi: float | None) -> float:
    """The sample nearest to (or furthest past) a limit; NaN if any sample has no value."""
    if values.size == 0 or not np.all(np.isfinite(values)):
        return float("nan")
    if lo is not None and hi is not None:
        span = hi - lo if hi > lo else max(abs(hi), 1e-300)
        m_lo = (values.min() - lo) / span
        m_hi = (hi - values.max()) / span
        return float(values.min() if m_lo < m_hi else values.max())
    if hi is not None:
        return float(values.max())
    return float(values.min())


def judge(metric: str, samples: np.ndarray, *, nominal: float, wc: tuple[float, float],
          lo: float | None, hi: float | None, required_yield: float = 1.0,
          at_hz: float | None = None, part: str = "", detail: str = "") -> Verdict:
    ok = inside(samples, lo, hi)
    y = float(ok.mean()) if ok.size else 0.0
    status = "pass" if y + YIELD_SLACK >= required_yield else "fail"
    return Verdict(metric=metric, min=lo, max=hi, at_hz=at_hz, yield_=y,
                   required_yield=required_yield, worst=worst_value(samples, lo, hi),
                   nominal=nominal, wc_low=wc[0], wc_high=wc[1], status=status,
                   part=part, detail=detail)
