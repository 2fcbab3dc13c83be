"""The note's table of preferred-value alternatives, from StageResult.alternatives.

What it is for: formatting what rcdoc.analysis.alternatives computed during the
analysis (nominal metrics and reduced Monte Carlo yields per design) as one
table block of a stage page. It never evaluates the circuit.
"""

from __future__ import annotations

import math

from rcdoc.analysis.metrics import METRICS
from rcdoc.analysis.results import Alternative, StageAlternatives, StageResult


def _change(value: float, base: float, unit: str) -> str:
    if not (math.isfinite(value) and math.isfinite(base)):
        return ""
    if unit in ("dB", "deg"):
        d = value - base
        return f" ({d:+.2f}{' dB' if unit == 'dB' else '°'})".replace("-", "−")
    if base == 0:
        return ""
    return f" ({(value / base - 1) * 100:+.1f} %)".replace("-", "−")


def alternatives_block(r: StageResult, fq, metric_label) -> dict | None:
    """The note's table of preferred-value alternatives for one stage, or None.

    Reads the alternatives the analysis computed (``r.alternatives``); ``fq`` and
    ``metric_label`` are the note's formatters (passed in: the note's context
    module imports this one).
    """
    alt = r.alternatives
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
            cells.append(_yields_text(alt, a, metric_label))
            cells.append("all inside" if not bad else "outside: " + ", ".join(bad))
        out_rows.append(cells)
    columns = ["Part", "Value", "Design"] + [metric_label(n, at, d) for n, at, d in alt.metrics]
    if checked:
        columns += [f"Yield ({alt.samples} samples)", "Nominal against the limits"]
    what = "checked metrics" if checked else "headline metrics (the stage has no checks)"
    return {"type": "table", "title": "Preferred-value alternatives", "columns": columns,
            "rows": out_rows,
            "note": "Parts whose value is not a preferred value (IEC 60063) of the series that "
                    "fits their tolerance, with the nearest preferred values below and above. "
                    f"Each row gives the nominal {what} with only that part changed; "
                    "in brackets the change from the design as drawn. "
                    + (f"Yield: share of {alt.samples} Monte Carlo samples (seed {alt.seed}, "
                       "the same draws for every row) inside each check's limits; its "
                       "sampling error is about ±√(y(1−y)/n)." if checked else
                       "Spread over tolerance is not re-run for the alternatives.")}


def _yields_text(alt: StageAlternatives, a: Alternative, metric_label) -> str:
    parts = [(metric_label(n, at, d), y) for (n, at, d), c, y in
             zip(alt.metrics, alt.checks, a.yields) if c is not None]
    if len(parts) == 1:
        return f"{parts[0][1] * 100:.1f} %"
    return "; ".join(f"{label} {y * 100:.1f} %" for label, y in parts)
