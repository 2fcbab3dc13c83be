"""Worst-case ranges that enclose what they claim: corners, then the interior where needed.

What it is for: turning a metric's values on the corners of the tolerance box
(spread.py's vertex rows) into a reported worst-case range that holds the
nominal design and every Monte Carlo sample, and searching inside the box when
the metric is not monotonic in a part (a high-pass's group delay at its own
corner peaks inside the box, so no corner shows the maximum).

How: each part is walked alone through the nominal design (LINE_POINTS values
from its lowest to its highest in-circuit value). When a walk turns back, or
the nominal or a sample lies outside the corners' range, a bounded pattern
search runs in the box of part values: started from the nominal, the most
extreme Monte Carlo samples and the best corner, it tries one step up and down
in every part for every start at once (all candidates are rows of one batch),
keeps the best improving move of each start and halves the steps of a start
that found none. The reported range is the extreme over corners, walks,
search points, nominal and samples, so it encloses all of them by construction.

What it must not do: know about kinds or draw anything; ``evaluate`` (part
values -> metric per row) is the only way the search touches the circuit, and
``Context`` (one stage's evaluator on any part values) builds it.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Callable

import numpy as np

from rcdoc.analysis import spread
from rcdoc.analysis.evaluate import Evaluator
from rcdoc.analysis.metrics import METRICS
from rcdoc.analysis.network import Network
from rcdoc.input import parts as partmodels
from rcdoc.input.model import Analysis, Stage

LINE_POINTS = 9          # values per part on the walk through the nominal design
STARTS = 4               # Monte Carlo samples started from, per direction
ITERATIONS = 40          # pattern-search iterations at most
MIN_STEP = 1e-6          # stop when every step is below this share of its part's range
FLAT = 1e-9              # relative change taken as no change (rounding of the solver)
SPECULATE = 3            # halvings evaluated together after an iteration without a move
FLAT_FLOOR = 1e-6        # share of a metric's resolution below which a start's
                         # neighbourhood counts as flat (the search stops there)

VERTICES = "vertices"                      # every corner of the box
SENSITIVITY_VERTICES = "sensitivity vertices"   # many parts: the corners the sensitivities point to
SEARCHED = " + interior search"
WITH_SAMPLES = " + samples"                # corners widened to the nominal and samples


Evaluate = Callable[[np.ndarray], np.ndarray]     # (N, P) part values -> (N,) metric


def line_rows(nominal: np.ndarray, lows: np.ndarray, highs: np.ndarray) -> np.ndarray:
    """(P·LINE_POINTS, P) rows: each part alone from its low to its high value."""
    p = len(nominal)
    frac = np.linspace(0.0, 1.0, LINE_POINTS)
    rows = np.repeat(nominal[None, :], p * LINE_POINTS, axis=0)
    for k in range(p):
        rows[k * LINE_POINTS:(k + 1) * LINE_POINTS, k] = lows[k] + frac * (highs[k] - lows[k])
    return rows


def turns_back(line_values: np.ndarray, p: int) -> bool:
    """True when the metric along any single part's walk rises and falls (not monotonic)."""
    if p == 0:
        return False
    y = line_values.reshape(p, LINE_POINTS)
    d = np.diff(y, axis=1)
    scale = np.where(np.isfinite(y), np.abs(y), 0.0).max(axis=1, keepdims=True)
    tol = FLAT * np.where(scale > 0, scale, 1.0)
    with np.errstate(invalid="ignore"):
        up = np.any(d > tol, axis=1)
        down = np.any(d < -tol, axis=1)
    return bool(np.any(up & down))


def search(evaluate: Evaluate, starts: np.ndarray, maximise: np.ndarray,
           lows: np.ndarray, highs: np.ndarray) -> np.ndarray:
    """Pattern search in the box [lows, highs] from every start at once.

    ``starts`` (S, P) part values, ``maximise`` (S,) bool: the direction of
    each start. Returns the metric at every point visited that improved, (M,).
    One batch of 2·P·S candidate rows per iteration; no loop over starts.
    """
    return search_together(lambda ks, xs: [evaluate(xs[0])], [(starts, maximise)],
                           lows, highs)[0]


# (searches k, their (N_k, P) part values) -> each search's metric, (N_k,) each
EvaluateAll = Callable[[list, list], list]


def search_together(evaluate_all: EvaluateAll, problems: list, lows: np.ndarray,
                    highs: np.ndarray) -> list[np.ndarray]:
    """Several pattern searches (``search``'s, each with its own metric) in lockstep.

    ``problems``: [(starts (S, P), maximise (S,)[, floor])]. A start stops when its
    steps are all below MIN_STEP of the parts' ranges, or when no candidate of an
    iteration differs from its value by more than ``floor`` (default 0: only an
    exactly flat neighbourhood): a metric that does not change by a millionth of
    its resolution there (a passband gain of 0 dB, rounding noise of 1e-15 dB)
    has nothing for smaller steps to find. Each search takes exactly the
    steps it takes alone (its moves and its stop depend on its own values only);
    an iteration hands the candidates of every search still running to one call
    of ``evaluate_all(ks, xs)`` (the running searches' indices and candidates), so
    searches share the cost of evaluating a batch. Returns each search's
    improving values.
    """
    span = highs - lows
    state = []
    for starts, maximise, *floor in problems:
        s, p = starts.shape
        if s == 0 or p == 0 or not np.any(span > 0):
            state.append(None)
            continue
        state.append({"sign": np.where(maximise, 1.0, -1.0), "x": starts.copy(),
                      "floor": floor[0] if floor else 0.0,
                      "step": np.repeat((span / 4.0)[None, :], s, axis=0),
                      "it": np.zeros(s, dtype=int), "levels": np.ones(s, dtype=int),
                      "moves": np.concatenate([np.eye(p), -np.eye(p)])})   # (2P, P) unit moves
    live = [k for k, st in enumerate(state) if st is not None]
    if live:
        values = evaluate_all(live, [state[k]["x"] for k in live])
        for k, v in zip(live, values):
            st = state[k]
            fx = st["sign"] * v
            st["fx"] = np.where(np.isfinite(fx), fx, -np.inf)
            st["found"] = [st["sign"] * st["fx"]]
    least = MIN_STEP * np.where(span > 0, span, 1.0)
    for _ in range(ITERATIONS):
        # A start whose steps are all below MIN_STEP of their parts' ranges is done,
        # as is one that took ITERATIONS iterations.
        act = {k: np.flatnonzero(~np.all(state[k]["step"] <= least, axis=1)
                                 & (state[k]["it"] < ITERATIONS)) for k in live}
        live = [k for k in live if act[k].size]
        if not live:
            break
        blocks = [_candidates(state[k], act[k], lows, highs) for k in live]
        values = evaluate_all(live, [np.concatenate([c.reshape(-1, c.shape[-1]) for _, c in b])
                                     for b in blocks])
        for k, b, v in zip(live, blocks, values):
            _advance(state[k], b, v, least)
    out = []
    for st in state:
        if st is None:
            out.append(np.zeros(0))
            continue
        f = np.concatenate(st["found"])
        out.append(f[np.isfinite(f)])
    return out


def _candidates(st: dict, a: np.ndarray, lows: np.ndarray, highs: np.ndarray) -> list:
    """The candidates of the active starts ``a`` of one search: [(starts, (A_l, 2P, P))]
    per level l, the steps halved l times (a start that found nothing last time is
    likely to find nothing again: its next halvings are evaluated in the same batch,
    SPECULATE levels; one that moved, one level)."""
    levels = st["levels"][a]
    out = []
    for level in range(int(levels.max())):
        al = a[levels > level]
        step = st["step"][al] / 2.0 ** level          # exact: the halvings to come
        cand = st["x"][al, None, :] + st["moves"][None] * step[:, None, :]      # (A, 2P, P)
        out.append((al, np.clip(cand, lows, highs)))
    return out


def _advance(st: dict, blocks: list, v: np.ndarray, least: np.ndarray) -> None:
    """One search's iterations from its candidates' values ``v``, level by level: each
    start takes the best improving move of a level and stops there for this batch,
    or halves its steps and goes on to the next level if it is still active (the
    same moves, halvings and stops as one level per batch)."""
    p = st["x"].shape[1]
    going = np.ones(len(st["x"]), dtype=bool)       # no move yet in this batch
    at = 0
    for level, (al, cand) in enumerate(blocks):
        fc = st["sign"][al, None] * v[at:at + al.size * 2 * p].reshape(al.size, 2 * p)
        at += al.size * 2 * p
        if level:
            keep = going[al] & (st["it"][al] < ITERATIONS) & ~np.all(st["step"][al] <= least,
                                                                      axis=1)
            al, cand, fc = al[keep], cand[keep], fc[keep]
        fc = np.where(np.isfinite(fc), fc, -np.inf)
        best = np.argmax(fc, axis=1)
        fbest = fc[np.arange(al.size), best]
        fx = st["fx"][al]
        better = fbest > fx + FLAT * np.abs(fx)
        st["x"][al] = np.where(better[:, None], cand[np.arange(al.size), best], st["x"][al])
        st["fx"][al] = np.where(better, fbest, fx)
        st["step"][al] = np.where(better[:, None], st["step"][al], st["step"][al] / 2.0)
        flat = np.all(np.abs(fc - fx[:, None]) <= st["floor"], axis=1)    # -inf: not
        st["step"][al[flat]] = 0.0
        st["it"][al] += 1
        st["levels"][al] = np.where(better, 1, SPECULATE)
        going[al[better]] = False
        st["found"].append(st["sign"][al] * st["fx"][al])


def start_points(samples_x: np.ndarray, samples_y: np.ndarray, nominal: np.ndarray,
                 corners_x: np.ndarray, corners_y: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Where to start: the nominal, the most extreme samples and the best corner, each way."""
    pts, up = [], []
    for maximise in (True, False):
        key = samples_y if maximise else -samples_y
        ok = np.flatnonzero(np.isfinite(key))
        chosen = ok[np.argsort(key[ok])[::-1][:STARTS]]
        pts += [nominal[None, :], samples_x[chosen]]
        ckey = corners_y if maximise else -corners_y
        cok = np.flatnonzero(np.isfinite(ckey))
        if cok.size:
            pts.append(corners_x[cok[np.argmax(ckey[cok])]][None, :])
        up += [maximise] * (sum(len(a) for a in pts) - len(up))
    return np.concatenate(pts), np.array(up, dtype=bool)


def enclosing_range(values: np.ndarray) -> tuple[float, float]:
    finite = values[np.isfinite(values)]
    return (float(finite.min()), float(finite.max())) if finite.size else (math.nan, math.nan)


def corners_and_samples(corner_y: np.ndarray, inner: np.ndarray) -> tuple[tuple[float, float], str]:
    """Without a search: the corners' range widened to the nominal and samples where they
    lie outside it (then the method says so)."""
    corners = enclosing_range(corner_y)
    wc = enclosing_range(np.concatenate([corner_y, inner]))
    same = all(a == b or (math.isnan(a) and math.isnan(b)) for a, b in zip(wc, corners))
    return wc, VERTICES if same else VERTICES + WITH_SAMPLES


def needs_search(corner_y: np.ndarray, nominal: float, samples_y: np.ndarray,
                 line_y: np.ndarray, p: int) -> bool:
    """The corners alone do not do: a walk turns back, or a value lies outside them."""
    lo, hi = enclosing_range(corner_y)
    if not math.isfinite(lo):
        return False
    pad = FLAT * max(abs(lo), abs(hi), 1e-300)
    inner = np.concatenate([[nominal], samples_y])
    inner = inner[np.isfinite(inner)]
    outside = bool(np.any(inner < lo - pad) or np.any(inner > hi + pad))
    return outside or turns_back(line_y, p)


@dataclass
class Context:
    """What the worst-case search of one stage needs to evaluate a metric on any part values.

    ``fixed`` holds the source and load elements (no tolerance); ``evaluator_cls``
    is the stage's Evaluator (a kind's own where it has one, e.g. sampled input).
    """

    stage: Stage
    analysis: Analysis
    network: Network
    batch: spread.Batch
    freqs: np.ndarray
    passband: str
    char_hz: float
    t_hot_k: float
    time_s: np.ndarray | None
    fixed: dict
    evaluator_cls: type = Evaluator

    def __post_init__(self):
        ext = [partmodels.extremes(self.stage.parts[r], self.analysis) for r in self.batch.roles]
        self.lows = np.array([e[0] for e in ext], dtype=float).reshape(-1)
        self.highs = np.array([e[1] for e in ext], dtype=float).reshape(-1)

    def part_values(self, rows) -> np.ndarray:
        """(N, P) part values of some rows of the batch."""
        cols = [self.batch.values[r][rows] for r in self.batch.roles]
        return np.stack(cols, axis=1) if cols else np.zeros((0, 0))

    def values_of(self, x: np.ndarray) -> dict[str, np.ndarray]:
        """Part values (N, P) as an Evaluator's values, the fixed elements added."""
        vals = {r: x[:, k] for k, r in enumerate(self.batch.roles)}
        for name, v in self.fixed.items():
            vals[name] = np.full(len(x), v)
        return vals

    def line_batch(self) -> dict[str, np.ndarray] | None:
        """The values of the walks' rows (``line_rows``), or None for a stage without
        parts; the pipeline evaluates them with its last chunk (``line_values``'s numbers)."""
        if not self.batch.roles:
            return None
        return self.values_of(line_rows(self.part_values(slice(0, 1))[0], self.lows, self.highs))

    def evaluator(self, x: np.ndarray) -> Evaluator:
        vals = self.values_of(x)
        return self.evaluator_cls(self.stage, self.network, vals, self.freqs, self.passband,
                                  self.char_hz, temperature_k=self.t_hot_k, time_s=self.time_s,
                                  stresses=False)

    def line_values(self, requests, key) -> dict:
        """Every requested metric along each part's walk through the nominal design;
        ``key(request)`` names each request in the returned dict."""
        p = len(self.batch.roles)
        if p == 0:
            return {key(q): np.zeros(0) for q in requests}
        nominal = self.part_values(slice(0, 1))
        x = line_rows(nominal[0], self.lows, self.highs)
        # After the nominal's row, as in the pipeline's chunk that carries the walks:
        # the frequency scale of the poles (from the first row) is then the same.
        ev = self.evaluator(np.concatenate([nominal, x]))
        return {key(q): np.asarray(ev.metric(q[0], q[2], at_hz=q[1]), dtype=float)[1:]
                for q in requests}

    def enclose(self, request, arr: np.ndarray, corner_y: np.ndarray, line_y: np.ndarray):
        """(low, high) holding corners, nominal and samples; searched inside where needed."""
        return self.enclose_all([(request, arr, corner_y, line_y)])[0]

    def enclose_all(self, jobs) -> list:
        """``enclose`` for every (request, arr, corner_y, line_y) of a stage, the interior
        searches of all of them in lockstep (``search_together``)."""
        b, p = self.batch, len(self.batch.roles)
        base = VERTICES if p <= spread.FULL_VERTEX_PARTS else SENSITIVITY_VERTICES
        found, methods, problems, owners = [], [], [], []
        for request, arr, corner_y, line_y in jobs:
            samples = arr[b.mc]
            found.append([corner_y, arr[:1], samples, line_y])
            methods.append(base)
            if p and needs_search(corner_y, float(arr[0]), samples, line_y, p):
                problems.append((*start_points(
                    self.part_values(b.mc), samples, self.part_values(slice(0, 1))[0],
                    self.part_values(b.vertex), arr[b.vertex]),
                    FLAT_FLOOR * METRICS[request[0]].resolution))
                owners.append((len(found) - 1, request))
                methods[-1] += SEARCHED
        if problems:
            searched = search_together(self._evaluate_all([q for _, q in owners]), problems,
                                       self.lows, self.highs)
            for (k, _), pts in zip(owners, searched):
                found[k].append(pts)
        return [(enclosing_range(np.concatenate(f)), m) for f, m in zip(found, methods)]

    def _evaluate_all(self, requests) -> EvaluateAll:
        """Candidates of several searches as rows of one Evaluator, after the nominal
        design's row: the rows' conditioning and scale are then the nominal's,
        whatever the candidates (as in the pipeline's first chunk). A point that
        several starts or searches reach (clipped to the same face of the box, the
        same start in every search), or that an earlier iteration evaluated, is
        evaluated once: its values are kept per metric (``_Seen``)."""
        nominal = self.part_values(slice(0, 1))
        seen = _Seen(nominal.shape[1], len(requests))

        def evaluate_all(ks, xs):
            rows = np.concatenate(xs)
            points, at, todo = seen.merge(rows, ks)
            if todo.size:
                ev = self.evaluator(np.concatenate([nominal, points[todo]]))
                for k in ks:
                    name, hz, chk = requests[k]
                    seen.store(todo, k, np.asarray(ev.metric(name, chk, at_hz=hz),
                                                   dtype=float)[1:])
            found = seen.values[at]
            out, start = [], 0
            for k, x in zip(ks, xs):
                out.append(found[start:start + len(x), k])
                start += len(x)
            return out
        return evaluate_all


class _Seen:
    """Points of the box evaluated so far and their value per search; which values
    exist is kept apart (a metric may be NaN). Points are found again by their
    bytes (bookkeeping of the search's candidates, no arithmetic): each row's bytes
    are one numpy void value, looked up among the sorted bytes of the points known."""

    def __init__(self, parts: int, searches: int):
        self.points = np.zeros((0, parts))
        self.values = np.zeros((0, searches))
        self.known = np.zeros((0, searches), dtype=bool)
        self.key = np.dtype((np.void, 8 * parts)) if parts else None
        self.sorted = np.zeros(0, dtype=self.key) if parts else None   # keys, sorted
        self.number = np.zeros(0, dtype=np.intp)                       # their points

    def merge(self, rows: np.ndarray, ks: list[int]):
        """Add ``rows``; returns (points, the index of each row among them, the
        indices of the points that lack a value of one of the searches ``ks``).
        New points are numbered in the order of their first row."""
        rows = np.ascontiguousarray(rows, dtype=float)
        if self.key is None:               # no parts: every row is the one empty point
            rows = rows.reshape(len(rows), 0)
            if not len(self.points):
                self._append(np.zeros((1, 0)))
            at = np.zeros(len(rows), dtype=np.intp)
        else:
            keys = rows.view(self.key).reshape(-1)
            uniq, first, inverse = np.unique(keys, return_index=True, return_inverse=True)
            pos = np.searchsorted(self.sorted, uniq)
            hit = pos < self.sorted.size
            hit[hit] = self.sorted[pos[hit]] == uniq[hit]
            num = np.empty(uniq.size, dtype=np.intp)
            num[hit] = self.number[pos[hit]]
            fresh = np.flatnonzero(~hit)
            fresh = fresh[np.argsort(first[fresh], kind="stable")]   # first-seen order
            num[fresh] = len(self.points) + np.arange(fresh.size)
            if fresh.size:
                self._append(rows[first[fresh]])
                allkeys = np.concatenate([self.sorted, uniq[fresh]])
                order = np.argsort(allkeys, kind="stable")
                self.sorted = allkeys[order]
                self.number = np.concatenate([self.number, num[fresh]])[order]
            at = num[inverse.reshape(-1)]
        asked = np.unique(at)
        todo = asked[~np.all(self.known[asked][:, ks], axis=1)]
        return self.points, at, todo

    def _append(self, new: np.ndarray) -> None:
        f = len(new)
        self.points = np.concatenate([self.points, new])
        self.values = np.concatenate([self.values, np.zeros((f, self.values.shape[1]))])
        self.known = np.concatenate([self.known, np.zeros((f, self.known.shape[1]), bool)])

    def store(self, idx: np.ndarray, k: int, vals: np.ndarray) -> None:
        self.values[idx, k] = vals
        self.known[idx, k] = True
