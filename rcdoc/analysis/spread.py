"""Monte Carlo samples, worst-case vertices and sensitivity probes as one batch.

Every way rcdoc asks "what if the parts were different" becomes rows of one
batch of part values, so the engine and the metrics run once, vectorised, for
all of them: row 0 is the nominal design, then the Monte Carlo samples, then
one probe per part for the sensitivities, then the worst-case vertices
(extreme-value analysis over the parts' limits).
"""

from __future__ import annotations

import itertools
import zlib
from dataclasses import dataclass

import numpy as np

from rcdoc.input import parts as partmodels
from rcdoc.analysis.surroundings import fixed_values
from rcdoc.input.model import Analysis, Stage

SENSITIVITY_STEP = 1e-3     # relative change of one part for its sensitivity (finite difference)
FULL_VERTEX_PARTS = 8       # up to this many parts, every corner of the tolerance box is tried
# What bounds the analysis's memory: the rows of the batch solved at once and the
# Monte Carlo samples the drawn percentile band of the response keeps, and for
# each, how many values (rows x sweep points) one of its arrays may hold. The
# defaults' 301 points are a first-order stage's default sweep (six decades at 50
# points a decade): there the row limits hold.
CHUNK_ROWS = 4000
CHUNK_VALUES = 4000 * 301
BAND_SAMPLES = 20000
BAND_VALUES = 20000 * 301


def chunk_rows(points: int) -> int:
    """Rows of the batch evaluated at once for a sweep of ``points`` frequencies:
    CHUNK_ROWS, fewer where the sweep is long (200 at 1 000 points a decade over
    six decades: a chunk's arrays no larger than at the default sweep), but at
    least 100 (each chunk also marches its rows through time, at a cost per step)."""
    return min(CHUNK_ROWS, max(100, CHUNK_VALUES // max(1, points)))


def band_samples(points: int) -> int:
    """Monte Carlo samples the percentile band of a sweep of ``points`` frequencies
    is drawn from: BAND_SAMPLES, fewer where the sweep is long (1 003 at 1 000
    points a decade over six decades)."""
    return max(1, min(BAND_SAMPLES, BAND_VALUES // max(1, points)))


@dataclass(frozen=True)
class Batch:
    values: dict[str, np.ndarray]      # element name -> (B,) SI values
    temperature_c: np.ndarray          # (B,) ambient of each row
    roles: tuple[str, ...]             # the parts that vary, in a fixed order
    samples: int
    vertices: np.ndarray               # (V, P) bool: part at its high extreme

    @property
    def rows(self) -> int:
        return len(self.temperature_c)

    @property
    def mc(self) -> slice:
        return slice(1, 1 + self.samples)

    @property
    def sens(self) -> slice:
        start = 1 + self.samples
        return slice(start, start + len(self.roles))

    @property
    def vertex(self) -> slice:
        start = 1 + self.samples + len(self.roles)
        return slice(start, start + len(self.vertices))

    def take(self, rows: slice) -> dict[str, np.ndarray]:
        return {k: v[rows] for k, v in self.values.items()}


def rng_for(stage: Stage, analysis: Analysis) -> np.random.Generator:
    """One generator per stage, from the seed and the stage id: moving or adding
    stages does not change another stage's samples."""
    return np.random.default_rng([analysis.seed, zlib.crc32(stage.id.encode())])


def build_batch(stage: Stage, analysis: Analysis, samples: int | None = None) -> Batch:
    n = analysis.samples if samples is None else samples
    roles = tuple(sorted(stage.parts))
    rng = rng_for(stage, analysis)
    t_lo, t_hi = analysis.temperature_c
    temps = rng.uniform(t_lo, t_hi, n) if t_hi > t_lo else np.full(n, t_lo)
    nominal = {r: partmodels.nominal_value(stage.parts[r], analysis) for r in roles}
    mc = {r: partmodels.sample_values(stage.parts[r], analysis, rng, temps) for r in roles}
    ext = {r: partmodels.extremes(stage.parts[r], analysis) for r in roles}
    p = len(roles)
    if p <= FULL_VERTEX_PARTS:
        vertices = np.array(list(itertools.product((False, True), repeat=p)), dtype=bool)
        vertices = vertices.reshape(-1, p)
    else:
        # Too many corners: the all-low and all-high corners here; the metric-specific
        # corners (each part at the extreme its sensitivity points to) come later.
        vertices = np.array([[False] * p, [True] * p], dtype=bool)
    values: dict[str, np.ndarray] = {}
    for k, r in enumerate(roles):
        sens = np.full(p, nominal[r])
        sens[k] *= 1 + SENSITIVITY_STEP
        lo, hi = ext[r]
        vert = np.where(vertices[:, k], hi, lo)
        values[r] = np.concatenate([[nominal[r]], mc[r], sens, vert])
    rows = 1 + n + p + len(vertices)
    for name, v in fixed_values(stage).items():
        values[name] = np.full(rows, v)
    temperature = np.concatenate([[25.0], temps, np.full(p, 25.0),
                                  np.full(len(vertices), np.nan)])
    return Batch(values=values, temperature_c=temperature, roles=roles, samples=n,
                 vertices=vertices)


def vertex_values(stage: Stage, analysis: Analysis, roles: tuple[str, ...],
                  high: np.ndarray) -> dict[str, np.ndarray]:
    """Values for given corners: ``high`` (V, P) bool -> element name -> (V,)."""
    out = {}
    for k, r in enumerate(roles):
        lo, hi = partmodels.extremes(stage.parts[r], analysis)
        out[r] = np.where(high[:, k], hi, lo)
    for name, v in fixed_values(stage).items():
        out[name] = np.full(len(high), v)
    return out


def sensitivities(metric: np.ndarray, batch: Batch) -> np.ndarray:
    """Relative change of the metric per relative change of each part, (P,)."""
    base = metric[0]
    probes = metric[batch.sens]
    with np.errstate(divide="ignore", invalid="ignore"):
        linear = (probes - base) / (abs(base) * SENSITIVITY_STEP)
        # S = d ln m / d ln x. Where the metric keeps its sign, the ratio of
        # logarithms is exact for power laws (fc = 1/(2πRC) gives −1, where the
        # plain difference gives −1/(1 + step) = −0.999).
        ratio = probes / base
        logs = np.log(np.where(ratio > 0, ratio, 1.0)) / np.log1p(SENSITIVITY_STEP)
    return np.where(ratio > 0, logs, linear)


# Below this many samples a band's percentiles come from np.percentile itself.
_SELECT_MIN = 64


_TRANSPOSE_ROWS = 256      # rows per block of a transposed copy (the block stays in cache)


def transposed(a: np.ndarray, dtype=None, fn=None) -> np.ndarray:
    """A contiguous copy of fn(a).T (fn elementwise, e.g. np.degrees; result cast
    to ``dtype``), made block by block: numpy's one-pass copy of a transposed view
    strides through memory and took five times as long (measured)."""
    out = np.empty(a.shape[::-1], dtype=dtype or a.dtype)
    for r in range(0, a.shape[0], _TRANSPOSE_ROWS):
        block = a[r:r + _TRANSPOSE_ROWS]
        out[:, r:r + _TRANSPOSE_ROWS] = (block if fn is None else fn(block)).T
    return out


# From this many samples a row's order statistics are found from the samples that held
# those ranks in the row before (_order_pairs); below it, by a partition of each row.
_WINDOW_MIN = 2000
_WINDOW = 48               # ranks kept on either side of the one sought


def _order_pairs(rows: np.ndarray, j: int) -> tuple[np.ndarray, np.ndarray] | None:
    """Order statistics j and j + 1 (0-based) of every row of ``rows`` (frequencies
    by samples, no NaN), exactly; None where the rows do not keep their samples'
    order from one to the next (a partition of each is then cheaper).

    A band's rows are one frequency each: a sample's rank barely moves from one
    frequency to the next. So the samples that held ranks j ± _WINDOW in the row
    before are taken as candidates, and two counts over the row check them: with
    L and U their lowest and highest value, if the row has exactly as many values
    in [L, U] as there are candidates, the candidates are those values, and the
    row's sorted order is the values below L, then the candidates sorted, then the
    values above U. Where ranks j and j + 1 fall among them, they are read off the
    candidates' sorted values (ties included: every value equal to L or U is
    counted); otherwise the row is partitioned in full, which also gives the next
    row's candidates. Each answer is the order statistic itself, as numpy's
    partition gives it."""
    R, n = rows.shape
    lo = np.empty(R, dtype=rows.dtype)
    hi = np.empty(R, dtype=rows.dtype)
    first, last = max(0, j - _WINDOW), min(n - 1, j + 1 + _WINDOW)
    kth = sorted({first, j, j + 1, last})
    cand = None
    full = 0
    for i in range(R):
        row = rows[i]
        if cand is not None:
            vals = row[cand]
            low, top = vals.min(), vals.max()
            below = np.count_nonzero(row < low)
            upto = np.count_nonzero(row <= top)
            if below <= j and j + 1 < upto:
                if upto - below == cand.size:
                    order = np.argsort(vals, kind="stable")
                    k = j - below
                    lo[i], hi[i] = vals[order[k]], vals[order[k + 1]]
                    a, b = k - _WINDOW, k + 1 + _WINDOW
                    if a >= 0 and b < cand.size:
                        cand = cand[order[a:b + 1]]
                        continue
                else:
                    pair = _tied_pair(row, vals, low, top, below, j)
                    if pair is not None:      # the candidates stay: the ranks are among them
                        lo[i], hi[i] = pair
                        continue
        full += 1
        if full > 32 and 2 * full > i:         # the order does not carry over: partition
            return None
        idx = np.argpartition(row, kth)
        lo[i], hi[i] = row[idx[j]], row[idx[j + 1]]
        cand = idx[first:last + 1]
    return lo, hi


def _tied_pair(row, vals, low, top, below: int, j: int):
    """Order statistics j and j + 1 of ``row`` where the candidates ``vals`` (lowest
    ``low``, highest ``top``; ``below`` values of the row under ``low``) are not
    every value in [low, top] but the others tie with ``low``
    or ``top`` (a saturated phase in float32 repeats values): the row's values in
    that range, sorted, are then every copy of ``low``, the candidates strictly
    between, sorted, and every copy of ``top``. None where some other value lies
    between (two more counts tell)."""
    if low == top:                    # every value in range is that one
        return low, low
    inner = np.sort(vals[(vals > low) & (vals < top)])
    at_low = np.count_nonzero(row <= low) - below
    if np.count_nonzero(row < top) - below - at_low != inner.size:
        return None
    def at(k):                        # the k-th value (0-based) from ``below`` on
        if k < at_low:
            return low
        k -= at_low
        return inner[k] if k < inner.size else top
    return at(j - below), at(j + 1 - below)


def row_percentiles(rows: np.ndarray, q: tuple[float, ...], overwrite: bool = False) -> np.ndarray:
    """np.percentile(rows, q, axis=1) (linear method), with the same values, faster.

    numpy partitions for several ranks at once with a generic selection; here
    each rank pair is found among the samples that held it in the row before
    (_order_pairs, from _WINDOW_MIN samples), or by one single-rank partition of
    the contiguous rows (numpy's vectorised path) and the minimum above it, then
    interpolated with numpy's own arithmetic (virtual index (n − 1)·q and its
    lerp). An order statistic is one value whatever the selection, so the result
    is identical; rows with NaN, few samples or a rank at an end take
    np.percentile.
    ``overwrite``: ``rows`` (contiguous) may be reordered within each row.
    """
    rows = np.asarray(rows)
    n = rows.shape[-1]
    if n < _SELECT_MIN or rows.ndim != 2 or np.isnan(rows).any():
        return np.percentile(rows, q, axis=1)
    qs = np.true_divide(np.asarray(q, dtype=float), 100)
    virtual = (n - 1) * qs                              # numpy's "linear" method
    prev = np.floor(virtual).astype(np.intp)
    gamma = virtual - prev
    if np.any(prev < 0) or np.any(prev >= n - 1):       # a rank at an end: numpy's path
        return np.percentile(rows, q, axis=1)
    out = np.empty((len(qs), rows.shape[0]), dtype=np.result_type(rows.dtype, gamma.dtype))
    work = None
    for k, (j, t) in enumerate(zip(prev, gamma)):
        pair = _order_pairs(rows, int(j)) if n >= _WINDOW_MIN else None
        if pair is not None:
            lo, hi = pair
        else:
            if work is None:
                work = rows if overwrite and rows.flags.c_contiguous else np.array(rows, order="C")
            work.partition(j, axis=1)
            lo = work[:, j].copy()
            hi = work[:, j + 1:].min(axis=1)
        diff = hi - lo                                  # numpy's _lerp, step by step
        res = np.add(lo, diff * t)
        if t >= 0.5:
            res = np.subtract(hi, diff * (1 - t)).astype(res.dtype)
        out[k] = res
    return out
