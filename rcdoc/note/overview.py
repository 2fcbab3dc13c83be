"""The summary chart's data: which frequency of each stage it shows, how its rows
are dealt out over charts, their headings, and whether the charts take pages of
their own.

What it is for: the command's process of a one-value rebuild decides all this
and builds the front matter without loading matplotlib; the drawing itself
(rcdoc.note.charts_time.corner_overview_pages) runs in a worker
(rcdoc.commands.schedule).

What it must not do: draw, or import the drawing modules.
"""

from __future__ import annotations

import hashlib
import json
import math
from collections.abc import Sequence

import numpy as np

__all__ = ["OVERVIEW_ROWS", "overview_slices", "overview_rows", "overview_titles", "own_pages",
           "chart_keys"]

#: The most rows of one summary chart. The chart is 0.75 + 0.45 in per axis + 0.3 in
#: per row tall: 25 rows on both axes make 9.2 in, shown at 0.96 of that (88 % of the
#: A4 text width) 224 mm, which leaves its heading room on a page of 259 mm.
OVERVIEW_ROWS = 25

# Which frequency of a stage the summary chart shows, by kind: (metric names, chart kind).
_OVERVIEW_FREQS = ((("corner_low", "corner_high"), "corner"), (("corner",), "corner"),
                   (("notch_frequency",), "notch"), (("f0",), "natural"),
                   (("ring_frequency",), "ring"))


def overview_slices(rows: int, per_chart: int = OVERVIEW_ROWS) -> list[slice]:
    """How corner_overview_pages deals ``rows`` rows out: in order, at most
    ``per_chart`` a chart, the charts as even as can be."""
    if per_chart < 1:
        raise ValueError(f"per_chart must be at least 1, got {per_chart}")
    count = max(1, -(-rows // per_chart))
    size = max(1, -(-rows // count))
    return [slice(k * size, min(rows, (k + 1) * size)) for k in range(count)]


def overview_rows(results) -> list[dict]:
    """The summary chart's rows (charts_time.corner_overview's form), one per
    stage that has a corner (both of a band-pass), notch, natural or ring
    frequency: nominal and Monte Carlo min-max, and the stage's verdict."""
    rows = []
    for r in results:
        for names, kind in _OVERVIEW_FREQS:
            found = [next((m for m in r.metrics if m.name == n and m.at_hz is None), None)
                     for n in names]
            if any(m is None or not math.isfinite(m.nominal) for m in found):
                continue
            freqs = []
            for m in found:
                s = m.samples[np.isfinite(m.samples)]
                freqs.append({"nominal": m.nominal, "min": float(s.min()) if s.size else m.nominal,
                              "max": float(s.max()) if s.size else m.nominal})
            rows.append({"label": r.stage.id, "kind": kind, "frequencies": freqs,
                         "status": r.status})
            break
    return rows


def overview_titles(labels: Sequence[str]) -> list[str]:
    """The headings of the summary charts of stages ``labels``, one per chart as
    charts_time.corner_overview_pages deals the stages out."""
    pieces = overview_slices(len(labels))
    if len(pieces) == 1:
        return ["Corner, notch and ring frequencies of all stages"]
    return [f"Corner, notch and ring frequencies, stages {labels[p.start]} to "
            f"{labels[p.stop - 1]}" for p in pieces]


def own_pages(charts: Sequence) -> bool:
    """True when the summary charts start a page of their own, after the summary
    table: where there are several (each about a page tall, so the first
    seldom fits under the table anyway). The note is then rendered with the
    charts as a part of their own (rcdoc.note.assemble), which a one-value
    rebuild renders in a worker beside the table. A single chart follows the
    table on its page."""
    return len(charts) > 1


def chart_keys(rows: Sequence[dict], salt: str) -> list[str]:
    """One key per summary chart of ``rows`` (as overview_slices deals them out):
    a hash of ``salt`` (the code and library versions that draw it), the number
    of charts, the chart's own rows and every kind's lowest and highest
    frequency over all rows (they set the shared axes). A chart whose key is
    unchanged is the same image: a one-value rebuild redraws only the chart
    holding the changed stage."""
    pieces = overview_slices(len(rows))
    span: dict = {}
    for row in rows:
        kind = row.get("kind", "corner")
        # As charts_time reads a row: its frequencies, or the row itself as the one.
        for fr in row.get("frequencies", [row]):
            nominal = float(fr["nominal"])
            lo, hi = span.get(kind, (math.inf, -math.inf))
            span[kind] = (min(lo, nominal, float(fr.get("min") or nominal)),
                          max(hi, nominal, float(fr.get("max") or nominal)))
    common = json.dumps([salt, len(pieces), sorted(span.items())])
    return [hashlib.sha256(json.dumps([common, k, list(rows[p])], sort_keys=True).encode()).hexdigest()
            for k, p in enumerate(pieces)]
