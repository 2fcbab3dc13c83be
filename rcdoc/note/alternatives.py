"""The note's table of preferred-value alternatives (rcdoc.analysis.alternatives
computes them; this module only lays out the table block).
"""

from __future__ import annotations

import math

from rcdoc.analysis.alternatives import stage_alternatives
from rcdoc.analysis.analyse import StageResult
from rcdoc.analysis.metrics import METRICS
from rcdoc.input.model import Analysis
from rcdoc.kinds import KINDS


def _change(value: float, base: float, unit: str) -> str:
    if not (math.isfinite(value) and math.isfinite(base)):
        return ""
    if unit in ("dB", "deg"):
        d = value - base
        return f" ({d:+.2f}{' dB' if unit == 'dB' else '°'})".replace("-", "−")
    if base == 0:
        return ""
    return f" ({(value / base - 1) * 100:+.1f} %)".replace("-", "−")


def alternatives_block(r: StageResult, analysis: Analysis, fq, metric_label) -> dict | None:
    """The note's table of preferred-value alternatives for one stage, or None.

    ``fq`` and ``metric_label`` are the note's formatters (rcdoc.note.context, which
    calls this: passed in so the two modules do not import each other)."""
    alt = stage_alternatives(r, analysis, KINDS[r.stage.kind])
    if alt is None:
        return None
    units = [METRICS[n].unit for n, _, _ in alt.metrics]
    checked = any(c is not None for c in alt.checks)
    out_rows = []
    base: tuple[float, ...] = ()
    for a in alt.rows:
        if not a.step:
            base = a.metrics
            label, value = "as designed", f"{fq(a.value, a.unit, 4)}"
        else:
            label, value = f"{a.series} {a.step}", fq(a.value, a.unit, 4)
        cells = [a.ref or a.role, value, label]
        for x, b, u in zip(a.metrics, base, units):
            cells.append(fq(x, u, 4) + (_change(x, b, u) if a.step else ""))
        if checked:
            bad = [metric_label(n, at, d) for (n, at, d), ok, c in
                   zip(alt.metrics, a.inside, alt.checks) if c is not None and not ok]
            cells.append("all inside" if not bad else "outside: " + ", ".join(bad))
        out_rows.append(cells)
    columns = ["Part", "Value", "Design"] + [metric_label(n, at, d) for n, at, d in alt.metrics]
    if checked:
        columns.append("Nominal against the limits")
    what = "checked metrics" if checked else "headline metrics (the stage has no checks)"
    return {"type": "table", "title": "Preferred-value alternatives", "columns": columns,
            "rows": out_rows,
            "note": "Parts whose value is not a preferred value (IEC 60063) of the series that "
                    "fits their tolerance, with the nearest preferred values below and above. "
                    f"Each row gives the nominal {what} with only that part changed; "
                    "in brackets the change from the design as drawn. Spread over tolerance "
                    "is not re-run for the alternatives."}
