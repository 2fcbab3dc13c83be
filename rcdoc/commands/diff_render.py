"""The rendering of a ``rcdoc diff`` comparison (rcdoc.commands.diff): terminal
tables (rich) and the note's "Changes since" blocks.

What it must not do: compare, analyse or read files; it only words a
ProjectDiff. Numbers go through the one formatter (rcdoc.input.quantities).
"""

from __future__ import annotations

import math

from rcdoc.analysis.metrics import METRICS
from rcdoc.commands.diff import MetricChange, ProjectDiff, VerdictChange
from rcdoc.input.quantities import NOTE_MINUS, format_quantity


def _q(value: float | None, unit: str, metric: str | None = None) -> str:
    """A value in a diff table: the one formatter, 4 figures, the metric's resolution."""
    if value is None:
        return "—"
    if not math.isfinite(value):
        return "not found"
    m = METRICS.get(metric) if metric else None
    return format_quantity(value, unit, 4, minus=NOTE_MINUS,
                           resolution=m.resolution if m else 0.0,
                           stress=m.stress if m else False)


def change_text(m: MetricChange) -> str:
    """The move of a metric: relative for linear units, absolute for dB and degrees."""
    a, b = m.before, m.after
    if a is None:
        return "new"
    if b is None:
        return "gone"
    if not (math.isfinite(a) and math.isfinite(b)):
        return ""
    if m.unit in ("dB", "deg"):
        return _signed(format_quantity(b - a, m.unit, minus=NOTE_MINUS))
    if a == 0:
        return ""
    return _signed(format_quantity(b / a - 1, "%", minus=NOTE_MINUS))


def _signed(text: str) -> str:
    """A change always shows its sign: "+0.2 dB", "−1.5 %"."""
    return text if text.startswith(NOTE_MINUS) else "+" + text


def metric_name(name: str, at_hz, detail: str) -> str:
    from rcdoc.note.context import metric_label
    return metric_label(name, at_hz, detail)


def verdict_name(v: VerdictChange) -> str:
    name = metric_name(v.metric, v.at_hz, v.detail)
    return f"{name} {v.part} (rating)" if v.part else name


def _verdict_cells(v) -> tuple[str, str, str]:
    """status, yield, worst of one side."""
    if v is None:
        return "—", "—", "—"
    unit = METRICS[v.metric].unit
    return (v.status, f"{v.yield_ * 100:.2f} %" if v.yield_ < 1 else "100 %",
            _q(v.worst, unit, v.metric))


def _limit(v) -> str:
    if v is None:
        return "—"
    from rcdoc.note.context import limit_text
    return limit_text(v, METRICS[v.metric].unit)


def part_rows(d: ProjectDiff) -> list[list[str]]:
    rows = []
    for p in d.parts:
        if p.change == "changed":
            for f in p.fields:
                rows.append([p.stage, p.ref or "—", p.role, f"{f.name} changed",
                             f.text_before, f.text_after])
        elif p.change == "added":
            rows.append([p.stage, p.ref or "—", p.role, "added", "—", p.text])
        else:
            rows.append([p.stage, p.ref or "—", p.role, "removed", p.text, "—"])
    return rows


def stage_rows(d: ProjectDiff) -> list[list[str]]:
    rows = []
    for s in d.stages:
        if s.change == "changed":
            for f in s.fields:
                rows.append([s.stage, f"{f.name} changed", f.text_before, f.text_after])
        else:
            rows.append([s.stage, s.change, s.title if s.change == "removed" else "—",
                         s.title if s.change == "added" else "—"])
    return rows


def metric_rows(d: ProjectDiff) -> list[list[str]]:
    return [[m.stage, metric_name(m.name, m.at_hz, m.detail), _q(m.before, m.unit, m.name),
             _q(m.after, m.unit, m.name), change_text(m)] for m in d.metrics]


def verdict_rows(d: ProjectDiff) -> list[list[str]]:
    rows = []
    for v in d.verdicts:
        sa, ya, wa = _verdict_cells(v.before)
        sb, yb, wb = _verdict_cells(v.after)
        limit = _limit(v.after if v.after is not None else v.before)
        rows.append([v.stage, verdict_name(v), limit, sa, sb, ya, yb, wa, wb])
    return rows


VERDICT_COLUMNS = ["Stage", "Check", "Limit", "Before", "After", "Yield before",
                   "Yield after", "Worst before", "Worst after"]


def heading(d: ProjectDiff) -> str:
    return (f"{d.old_label} (rev {d.old_revision}, {d.old_status}) → "
            f"{d.new_label} (rev {d.new_revision}, {d.new_status})")


def render_rich(d: ProjectDiff, console) -> None:
    """Print the differences as terminal tables (rich)."""
    from rich.markup import escape
    from rich.table import Table

    from rcdoc.commands.terminal import for_console
    console.print(for_console(heading(d), console.file), highlight=False, markup=False)
    if d.empty:
        console.print("no differences in stages, parts, metrics or verdicts", highlight=False)
        return
    sections = [
        ("Stages", ["stage", "change", "before", "after"], stage_rows(d)),
        ("Parts", ["stage", "ref", "role", "change", "before", "after"], part_rows(d)),
        ("Metrics (nominal)", ["stage", "metric", "before", "after", "change"], metric_rows(d)),
        ("Checks", [c.lower() for c in VERDICT_COLUMNS], verdict_rows(d)),
    ]
    for title, columns, rows in sections:
        if not rows:
            continue
        t = Table(title=title, title_justify="left")
        for col in columns:
            t.add_column(col)
        for row in rows:
            cells = []
            for k, cell in enumerate(row):
                cell = escape(for_console(cell, console.file))   # ASCII consoles; user text
                if columns[k] in ("before", "after") and cell in ("pass", "fail"):
                    style = "green" if cell == "pass" else "bold red"
                    cell = f"[{style}]{cell}[/{style}]"
                cells.append(cell)
            t.add_row(*cells)
        console.print(t)


def note_blocks(d: ProjectDiff) -> list[dict]:
    """The differences as note blocks (text and tables)."""
    blocks: list[dict] = [{"type": "text", "title": "", "paragraphs": [
        f"Compared: {heading(d)}. Metrics are compared on the nominal design; checks on "
        "their verdict, yield and limits."]}]
    if d.empty:
        blocks.append({"type": "text", "title": "",
                       "paragraphs": ["No differences in stages, parts, metrics or verdicts."]})
        return blocks
    if d.stages:
        blocks.append({"type": "table", "title": "Stages",
                       "columns": ["Stage", "Change", "Before", "After"],
                       "rows": stage_rows(d), "note": None})
    if d.parts:
        blocks.append({"type": "table", "title": "Parts",
                       "columns": ["Stage", "Ref", "Role", "Change", "Before", "After"],
                       "rows": part_rows(d), "note": None})
    if d.metrics:
        blocks.append({"type": "table", "title": "Metrics that moved",
                       "columns": ["Stage", "Metric", "Before", "After", "Change"],
                       "rows": metric_rows(d),
                       "note": "Nominal values; a dash: the metric is not reported on that side."})
    if d.verdicts:
        blocks.append({"type": "table", "title": "Checks that moved", "columns": VERDICT_COLUMNS,
                       "rows": verdict_rows(d),
                       "note": "A check is listed when its verdict, yield or limits changed."})
    return blocks


def since_section(d: ProjectDiff, rev: str) -> dict:
    """The note's appendix section "Changes since REV"."""
    return {"title": f"Changes since {rev}", "blocks": note_blocks(d)}
