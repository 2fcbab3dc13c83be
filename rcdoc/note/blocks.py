"""Draw block specs (rcdoc.analysis.blocks) into the note's blocks.

One drawer per spec type: tables and texts become the template's table and
text blocks, charts are drawn by rcdoc.note.charts_time / rcdoc.note.logic_chart
into a full-width figure with its caption. The only place where a kind's
page turns from data into pictures.
"""

from __future__ import annotations

import re

from rcdoc.analysis import blocks as spec
from rcdoc.note import charts_time, logic_chart

__all__ = ["assumptions", "draw", "draw_all"]


_PART_SENTENCE = re.compile(r"([A-Za-z][\w-]*): (.+)", re.S)


def assumptions(general: list[str], per_part: list[str]) -> list[dict]:
    """The stage's assumptions: one compact table with a row per part ("C8: tolerance ..."
    sentences grouped by their part), then the analysis-wide sentences as text."""
    by_part: dict[str, list[str]] = {}
    rest = list(general)
    for sentence in per_part:
        match = _PART_SENTENCE.fullmatch(sentence)
        if match:
            by_part.setdefault(match.group(1), []).append(match.group(2))
        else:
            rest.append(sentence)
    if not by_part:
        return [{"type": "text", "title": "Assumptions", "paragraphs": rest}]
    # One table kept whole with its heading; the analysis-wide sentences are its
    # note, so they never spill onto a page of their own.
    rows = [[ref, " ".join(_sentence(t) for t in texts)] for ref, texts in by_part.items()]
    return [{"type": "table", "title": "Assumptions", "columns": ["Part", "Assumed for the part"],
             "rows": rows, "note": " ".join(rest)}]


def _sentence(text: str) -> str:
    text = text.strip()
    return text[:1].upper() + text[1:] if text else text


def _figure(title: str, image, caption: str) -> dict:
    return {"type": "figure", "title": title, "image": image, "width": "full",
            "caption": caption}


def _table(b: spec.TableBlock) -> dict:
    return {"type": "table", "title": b.title, "columns": list(b.columns),
            "rows": [list(r) for r in b.rows], "note": b.note}


def _text(b: spec.TextBlock) -> dict:
    return {"type": "text", "title": b.title, "paragraphs": list(b.paragraphs)}


def _waveform(b: spec.WaveformChart) -> dict:
    window = (None if b.window is None else
              {"t": b.window.t, "lo": b.window.lo, "hi": b.window.hi, "label": b.window.label})
    series = [{"t": c.t if c.t is not None else b.t_s, "y": c.y, "label": c.label,
               "role": c.role} for c in b.curves]
    image = charts_time.time_response(b.fig_id, b.t_s, b.nominal, band=b.band, window=window,
                                 series=series, ylabel=b.y_label,
                                 nominal_label=b.nominal_label, fmt="png")
    return _figure(b.title, image, b.caption)


def _sweep(b: spec.SweepChart) -> dict:
    curves = [{"y": c.y, "label": c.label, "unit": c.unit, "axis": c.axis} for c in b.curves]
    allowed = (None if b.allowed is None else
               {"lo": b.allowed.lo, "hi": b.allowed.hi, "label": b.allowed.label})
    image = charts_time.sweep(b.fig_id, b.x, curves, xlabel=b.x_label, x_unit=b.x_unit,
                         logx=b.logx, marker_x=b.marker_x, fmt="png",
                         markers=[{"x": m.x, "label": m.label} for m in b.markers],
                         allowed=allowed)
    return _figure(b.title, image, b.caption)


def _edges(b: spec.EdgeChart) -> dict:
    panels = [{"title": p.title, "t": p.t, "nominal": p.nominal, "lo": p.lo, "hi": p.hi,
               "band": p.band, "other": p.other, "cross": p.cross,
               "cross_range": p.cross_range} for p in b.panels]
    return _figure(b.title, logic_chart.edges(b.fig_id, panels, fmt="png"), b.caption)


_DRAWERS = {spec.TableBlock: _table, spec.TextBlock: _text, spec.WaveformChart: _waveform,
            spec.SweepChart: _sweep, spec.EdgeChart: _edges}


def draw(block) -> dict:
    """The note block (template dict) of one block spec."""
    try:
        drawer = _DRAWERS[type(block)]
    except KeyError:
        raise TypeError(f"no drawer for block spec {type(block).__name__}") from None
    return drawer(block)


def draw_all(blocks, place: str) -> list[dict]:
    """The note blocks of the specs in ``blocks`` that go at ``place`` (LEAD or BODY)."""
    return [draw(b) for b in blocks if b.place == place]
