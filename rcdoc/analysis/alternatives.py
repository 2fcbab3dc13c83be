"""Preferred-value alternatives for parts whose value is not in their series.

What it is for: a part whose value is not a preferred value (IEC 60063) for
its tolerance is hard to buy. For each such part this module takes the
nearest preferred values below and above it in the series that fits its
tolerance and works out, with that one part replaced, the nominal value of
every checked metric of the stage and each check's yield over a reduced Monte
Carlo run (ALT_SAMPLES samples from the project's seed, the same draws for
every design, so the designs differ only by the part changed). It runs during
the analysis (rcdoc.analysis.analyse.analyse_stage) and its result is a typed
field of the StageResult; the note only formats it (rcdoc.note.alternatives).

What it must not do: change the project or draw anything.
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np

from rcdoc.analysis import checks as checkmod
from rcdoc.analysis import spread
from rcdoc.analysis.evaluate import Evaluator
from rcdoc.analysis.metrics import METRICS
from rcdoc.analysis.results import (Alternative, StageAlternatives, StageResult,
                                    param_of)
from rcdoc.input.model import Analysis, Check
from rcdoc.input.preferred import neighbours
from rcdoc.input.quantities import PART_UNITS

ALT_SAMPLES = 400       # Monte Carlo samples per alternative design (yield to about ±2.5 %)


def _key(name: str, at: float | None, chk: Check | None) -> tuple:
    param = param_of(name, chk)
    return (name, at, param.text if param is not None else "")


def _requests(r: StageResult, headline: tuple[str, ...]) -> list[tuple[str, float | None, Check | None]]:
    """The stage's checked metrics (or its kind's headline metrics if it has no checks)."""
    out, seen = [], set()
    for c in r.stage.checks:
        key = _key(c.metric, c.at_hz, c)
        if key not in seen and callable(getattr(Evaluator, c.metric, None)):
            seen.add(key)
            out.append((c.metric, c.at_hz, c))
    if not out:
        for m in r.metrics:
            if m.name in headline and callable(getattr(Evaluator, m.name, None)):
                out.append((m.name, m.at_hz, None))
    return out


def _inside(value: float, chk: Check | None) -> bool:
    if chk is None:
        return True
    if not math.isfinite(value):
        return False
    return (chk.min is None or value >= chk.min) and (chk.max is None or value <= chk.max)


def _designs(r: StageResult) -> list[tuple[str, str, float, str]]:
    """(role, step, value, series): as designed, then the neighbours below and above."""
    out = []
    for row in r.parts:
        if row.preferred is not None:
            continue
        p = row.part
        lower, upper = neighbours(p.value, row.series)
        out += [(p.role, "", p.value, row.series), (p.role, "below", lower, row.series),
                (p.role, "above", upper, row.series)]
    return out


def _changed(st, role: str, value: float):
    parts = dict(st.parts)
    parts[role] = dataclasses.replace(parts[role], value=value)
    return dataclasses.replace(st, parts=parts)


def design_metrics(r: StageResult, analysis: Analysis, role: str, value: float,
                   requests, samples: int = ALT_SAMPLES) -> np.ndarray:
    """(1 + samples, M): each requested metric of the stage with ``role`` at ``value``,
    nominal design first, then the Monte Carlo samples (seeded as the project)."""
    return designs_metrics(r, analysis, [(role, value)], requests, samples)[0]


def _step_grid(requests, drive) -> bool:
    """Whether a request reads the step response's time grid, which each design takes
    from its own nominal: a metric of the drive (rise time, settling, stresses)
    unless the drive is PWM and the metric is not a step metric."""
    for name, _, _ in requests:
        params = METRICS[name].params
        if name in ("rise_time", "settling") or ("drive" in params and drive.kind != "pwm"):
            return True
    return False


def designs_metrics(r: StageResult, analysis: Analysis, designs, requests,
                    samples: int = ALT_SAMPLES) -> list[np.ndarray]:
    """``design_metrics`` of every (role, value) in ``designs``. Designs that need no
    time grid of their own are rows of one Evaluator (the march's and the searches'
    cost per step is then paid once, not once a design); the rows' own numbers
    are each design's, the first design's nominal row first."""
    st = r.stage
    changed = [_changed(st, role, v) for role, v in designs]
    batches = [spread.build_batch(c, analysis, samples=samples) for c in changed]
    t_hot_k = analysis.temperature_c[1] + 273.15
    own_grid = st.drive is not None and _step_grid(requests, st.drive)
    groups = [[k] for k in range(len(designs))] if own_grid else [list(range(len(designs)))]
    out: list = [None] * len(designs)
    for group in groups:
        time_s = None
        if st.drive is not None:      # the design's own time grid, from its nominal alone
            time_s = Evaluator(changed[group[0]], r.network, batches[group[0]].take(slice(0, 1)),
                               r.freqs_hz, r.passband, r.char_hz).time_s
        parts = [batches[k].take(slice(0, batches[k].mc.stop)) for k in group]
        vals = {name: np.concatenate([p[name] for p in parts]) for name in parts[0]}
        ev = Evaluator(changed[group[0]], r.network, vals, r.freqs_hz, r.passband, r.char_hz,
                       temperature_k=t_hot_k, time_s=time_s, stresses=False)
        cols = [np.asarray(ev.metric(n, c, at_hz=a), dtype=float) for n, a, c in requests]
        table = np.stack(cols, axis=1) if cols else np.empty((ev.rows, 0))
        at = 0
        for k in group:
            n = batches[k].mc.stop
            out[k] = table[at:at + n]
            at += n
    return out


def stage_alternatives(r: StageResult, analysis: Analysis, kind,
                       samples: int = ALT_SAMPLES) -> StageAlternatives | None:
    """Alternatives for every non-preferred part of an analysed stage, or None if none apply.

    Only for stages analysed as networks (the caller's job): kinds with their own
    analysis have no Evaluator metrics. ``kind`` (its HEADLINE) gives the columns of
    a stage without checks. The designs are evaluated together where they share
    a time grid (``designs_metrics``).
    """
    if r.network is None:
        return None
    designs, requests = _designs(r), _requests(r, tuple(kind.HEADLINE))
    if not designs or not requests:
        return None
    # The design as drawn appears once per non-preferred part: evaluated once
    # (designs[0] is the first part's, at its own value).
    def key(role, step, v):
        return (role, v) if step else (designs[0][0], designs[0][2])
    distinct = list(dict.fromkeys(key(role, step, v) for role, step, v, _ in designs))
    tables = dict(zip(distinct, designs_metrics(r, analysis, distinct, requests, samples)))
    rows = []
    for role, step, v, series in designs:
        table = tables[key(role, step, v)]
        vals = tuple(float(x) for x in table[0])
        ylds = tuple(float(checkmod.inside(table[1:, k], c.min, c.max).mean())
                     if c is not None and samples else math.nan
                     for k, (_, _, c) in enumerate(requests))
        p = r.stage.parts[role]
        rows.append(Alternative(role=role, ref=p.ref, value=v, unit=PART_UNITS[p.kind],
                                series=series, step=step, metrics=vals,
                                inside=tuple(_inside(x, c) for x, (_, _, c) in
                                             zip(vals, requests)),
                                yields=ylds))
    return StageAlternatives(metrics=tuple(_key(n, a, c) for n, a, c in requests),
                             checks=tuple(c for _, _, c in requests), rows=tuple(rows),
                             samples=samples, seed=analysis.seed)
