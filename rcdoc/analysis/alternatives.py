"""Preferred-value alternatives for parts whose value is not in their series.

What it is for: a part whose value is not a preferred value (IEC 60063) for
its tolerance is hard to buy. For each such part this module takes the
nearest preferred values below and above it in the series that fits its
tolerance and works out the nominal value of every checked metric of the
stage with that one part replaced, so the note can show what the change
would cost. All the designs of a stage (as designed, and each replacement)
are rows of one batch evaluated at once by rcdoc.analysis.evaluate.Evaluator.

What it must not do: change the project, judge yields (only the nominal
design is evaluated here) or draw anything; it returns data (rcdoc.note.alternatives makes the table).
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass

import numpy as np

from rcdoc.input import parts as partmodels
from rcdoc.input.quantities import PART_UNITS
from rcdoc.analysis.analyse import StageResult, _default_detail, _detail
from rcdoc.analysis.evaluate import Evaluator
from rcdoc.analysis.surroundings import fixed_values
from rcdoc.input.model import Analysis, Check
from rcdoc.input.preferred import neighbours


@dataclass(frozen=True)
class Alternative:
    """One design of the stage: ``role`` at ``value`` (``step`` "" = as designed)."""

    role: str
    ref: str
    value: float
    unit: str
    series: str
    step: str                       # "", "below" or "above"
    metrics: tuple[float, ...]      # nominal value of each metric in the table's order
    inside: tuple[bool, ...]        # each metric inside its check's limits (True if unchecked)


@dataclass(frozen=True)
class StageAlternatives:
    metrics: tuple[tuple[str, float | None, str], ...]   # (name, at_hz, detail)
    checks: tuple[Check | None, ...]
    rows: tuple[Alternative, ...]


def _requests(r: StageResult,
              headline: tuple[str, ...]) -> list[tuple[str, float | None, Check | None]]:
    """The stage's checked metrics (or its kind's headline metrics if it has no checks)."""
    out, seen = [], set()
    for c in r.stage.checks:
        key = (c.metric, c.at_hz, _detail(c) or _default_detail(c.metric))
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


def stage_alternatives(r: StageResult, analysis: Analysis, kind) -> StageAlternatives | None:
    """Alternatives for every non-preferred part of an analysed stage, or None if none apply.

    ``kind`` is the stage's kind module (rcdoc.kinds.KINDS[stage.kind]): its HEADLINE
    gives the columns of a stage without checks."""
    st = r.stage
    if getattr(kind, "analyse", None) is not None or r.network is None:
        return None                 # kinds with their own analysis have no Evaluator metrics
    flagged = [row for row in r.part_rows if row["preferred"] is None]
    requests = _requests(r, tuple(kind.HEADLINE))
    if not flagged or not requests:
        return None
    roles = sorted(st.parts)
    designs = []
    for row in flagged:
        p = row["part"]
        lower, upper = neighbours(p.value, row["series"])
        designs.append((p.role, "", p.value, row["series"]))
        designs.append((p.role, "below", lower, row["series"]))
        designs.append((p.role, "above", upper, row["series"]))
    # One row per design: every part at its nominal in-circuit value (DC-bias
    # loss included), except the replaced part at its replacement's.
    nominal = {role: partmodels.nominal_value(st.parts[role], analysis) for role in roles}
    values: dict[str, np.ndarray] = {}
    for role in roles:
        col = np.full(len(designs), nominal[role])
        for k, (d_role, step, v, _) in enumerate(designs):
            if d_role == role and step:
                col[k] = partmodels.nominal_value(dataclasses.replace(st.parts[role], value=v),
                                                  analysis)
        values[role] = col
    for name, v in fixed_values(st).items():
        values[name] = np.full(len(designs), v)
    ev = Evaluator(st, r.network, values, r.freqs_hz, r.passband, r.char_hz,
                   temperature_k=analysis.temperature_c[1] + 273.15)
    cols = []
    for name, at, chk in requests:
        cols.append(np.asarray(ev.metric(name, chk, at_hz=at), dtype=float))
    table = np.stack(cols, axis=1) if cols else np.empty((len(designs), 0))
    rows = []
    for k, (role, step, v, series) in enumerate(designs):
        p = st.parts[role]
        vals = tuple(float(x) for x in table[k])
        rows.append(Alternative(role=role, ref=p.ref, value=v,
                                unit=PART_UNITS[p.kind], series=series,
                                step=step, metrics=vals,
                                inside=tuple(_inside(x, c) for x, (_, _, c) in
                                             zip(vals, requests))))
    return StageAlternatives(
        metrics=tuple((n, a, _detail(c) or _default_detail(n)) for n, a, c in requests),
        checks=tuple(c for _, _, c in requests), rows=tuple(rows))
