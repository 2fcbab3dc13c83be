"""Column widths of the note's data tables, measured from the note's font.

What it is for: weasyprint's automatic table layout lays every cell out twice
(once for its narrowest and widest width, once for real); a fifth of the
render went there. With ``table-layout: fixed`` and the widths given here in
``<col>`` elements each cell is laid out once. The widths follow the rule of
the automatic layout (CSS 2.1 §17.5.2.2, informative): each column gets its
widest content when they all fit, else its narrowest plus a share of the room
left in proportion to how much wider it would like to be.

Text is measured with the advance widths of DejaVu Sans and DejaVu Sans Bold,
the note's first font, read from the copies that matplotlib ships (the same
numbers on every machine, so the same HTML; the same advances as the system's
DejaVu 2.37). The narrowest widths err wide, so that no column is narrower
than its content; a table whose narrowest widths do not fit the page keeps
the automatic layout (``widths`` returns None).

A column that gets at least its widest content wraps none of its cells, so the
template marks its cells as ones that do not wrap (``Widths.cell_kinds``):
their numbers then need no span to keep them with their units (a tenth of a
stage's render went to laying out those spans).

What it must not do: read the system's fonts or anything the user gave.
"""

from __future__ import annotations

import functools
import itertools
import re
import struct
from collections.abc import Sequence
from pathlib import Path

__all__ = ["widths", "text_width", "Widths"]

# note.css: table.data is 8 pt, its cells have 1.6 mm of padding left and right;
# the badge of a verdict is 7.5 pt bold capitals with 1.8 mm padding (its 0.5 pt border
# does not widen the column: weasyprint's own column measured 41.35 pt, this 41.37 pt).
_MM = 72 / 25.4
_SIZE = 8.0
_PAD = 2 * 1.6 * _MM
_BADGE = 2 * 1.8 * _MM
_PAGE = (210 - 18 - 18) * _MM          # A4 less the page's side margins, in pt
# Kerning only narrows a line (the advance sums measured 0-0.2 pt wider than
# weasyprint's own widths of the example's cells): 0.05 pt covers rounding.
_EPS = 0.05
# Room a column keeps beyond its widest content to count as roomy (shares are rounded
# to 0.01 %, 0.05 pt of the page's width; the last column takes the sum of the roundings).
_SPARE = 0.5
_SHORT = 12       # _blocks.html: a cell of at most 12 characters never wraps
# The most a single word may claim as a column's narrowest width: a longer one (an id,
# a title or a model name without spaces) is broken where it must (note.css:
# overflow-wrap on table cells) rather than squeezing the other columns off the table.
_LONGEST_PIECE = 40 * _MM
_QUANTITY = re.compile(r"(?<![\w.])([+\-−±]?\d[\d.,]*(?:[eE][+\-−]?\d+)?) (\S{1,8})")


@functools.lru_cache(maxsize=2)
def _advances(bold: bool) -> tuple[dict[int, float], float]:
    """Advance width per code point, in em, and the width taken for a code point
    the font lacks (the widest glyph: another font draws it). The font files are
    matplotlib's copies of DejaVu Sans (found without importing matplotlib)."""
    import importlib.util
    folder = Path(importlib.util.find_spec("matplotlib").submodule_search_locations[0])
    path = folder / "mpl-data" / "fonts" / "ttf" / ("DejaVuSans-Bold.ttf" if bold else "DejaVuSans.ttf")
    try:
        table = _read_advances(path)
    except (struct.error, IndexError, ValueError):      # a font this reader does not know
        table = None
    table = table or _font_tools_advances(path)
    return table, max(table.values())


def _read_advances(path: Path) -> dict[int, float] | None:
    """The advances of _advances read straight from the font's tables (OpenType
    spec: the table directory, ``head`` unitsPerEm, ``hhea`` numberOfHMetrics,
    ``hmtx``, and the Windows Unicode full-repertoire ``cmap`` subtable, format
    12), the same numbers as fontTools' (tests/test_table_widths.py) in a
    twentieth of the time: fontTools decodes every glyph's name and metrics
    first (0.05 s on the first table of each process that renders). None where
    the font has no such subtable: fontTools then reads it."""
    data = path.read_bytes()
    tables = {}
    for i in range(struct.unpack_from(">H", data, 4)[0]):
        tag, _sum, offset, _length = struct.unpack_from(">4sIII", data, 12 + 16 * i)
        tables[tag] = offset
    if not {b"head", b"hhea", b"hmtx", b"cmap"} <= tables.keys():
        return None
    em = struct.unpack_from(">H", data, tables[b"head"] + 18)[0]
    metrics = struct.unpack_from(">H", data, tables[b"hhea"] + 34)[0]
    widths = struct.unpack_from(f">{2 * metrics}H", data, tables[b"hmtx"])[0::2]
    cmap = tables[b"cmap"]
    subtable = None
    for i in range(struct.unpack_from(">H", data, cmap + 2)[0]):
        platform, encoding, offset = struct.unpack_from(">HHI", data, cmap + 4 + 8 * i)
        if (platform, encoding) == (3, 10) and struct.unpack_from(">H", data, cmap + offset)[0] == 12:
            subtable = cmap + offset
    if subtable is None or not em or not metrics:
        return None
    table = {}
    groups = struct.unpack_from(">I", data, subtable + 12)[0]
    for start, end, glyph in struct.iter_unpack(">III", data[subtable + 16:subtable + 16 + 12 * groups]):
        for code in range(start, end + 1):
            # Glyphs past the last full metric take its advance (OpenType hmtx).
            table[code] = widths[min(glyph + code - start, metrics - 1)] / em
    return table


def _font_tools_advances(path: Path) -> dict[int, float]:
    from fontTools.ttLib import TTFont
    font = TTFont(str(path), lazy=True)
    em = font["head"].unitsPerEm
    hmtx = font["hmtx"]
    table = {code: hmtx[glyph][0] / em for code, glyph in font.getBestCmap().items()}
    font.close()
    return table


def text_width(text: str, size: float = _SIZE, bold: bool = False, wide: bool = True) -> float:
    """Width of ``text`` on one line in pt (DejaVu Sans at ``size``, the sum of
    its advances); ``wide``: erring wide (for the narrowest widths)."""
    return _em(text, bold) * size + (_EPS if wide else 0.0)


@functools.lru_cache(maxsize=16384)
def _em(text: str, bold: bool) -> float:
    """The sum of ``text``'s advances in em, left to right. Kept per text: a note
    measures the same cell texts for each table they are in, and a rebuild's
    summary twice (as the front matter is rendered, and as the note is joined)."""
    table, missing = _advances(bold)
    return sum(map(table.get, map(ord, text), itertools.repeat(missing)))


def _pieces(text: str, joint: str = "\u00a0") -> list[str]:
    """The pieces a line may break between: words, a number kept with its unit
    (joined here by ``joint``, a no-break space; the text's own no-break spaces
    join too)."""
    return [p for p in _SPACES.split(_QUANTITY.sub(lambda m: f"{m.group(1)}{joint}{m.group(2)}",
                                                  text)) if p]


# The spaces HTML collapses and breaks lines at (not str.split's: it splits at no-break
# spaces too, and a number came apart from its unit).
_SPACES = re.compile(r"[ \t\n\r\f]+")


def _lines(text: str, limit: float) -> tuple[str, ...] | None:
    """``text`` broken into lines of at most ``limit`` pt (measured erring wide),
    first fit, only between _pieces (so never between a number and its unit);
    None where one piece alone is wider."""
    lines: list[str] = []
    line = ""
    # Joined by a NUL, which no text of a note holds (rcdoc.input.limits refuses
    # control characters), and then by the space they had: the text unchanged.
    for piece in (p.replace("\x00", " ") for p in _pieces(text, "\x00")):
        joined = f"{line} {piece}" if line else piece
        if text_width(joined) <= limit:
            line = joined
            continue
        if not line or text_width(piece) > limit:
            return None
        lines.append(line)
        line = piece
    return (*lines, line) if line else tuple(lines)


def _cell(text: str, *, nowrap: bool, bold: bool = False) -> tuple[float, float]:
    """(narrowest, widest) width of a cell's content, in pt, padding included."""
    whole = text_width(text, bold=bold)
    if nowrap:
        return whole + _PAD, whole + _PAD
    narrow = min(max((text_width(p, bold=bold) for p in _pieces(text)), default=0.0),
                 _LONGEST_PIECE)
    return narrow + _PAD, max(narrow, text_width(text, bold=bold, wide=False)) + _PAD


def _column(j: int, kind: str, header: str, rows: Sequence[Sequence], linked: bool):
    """(narrowest, widest, verdict) of column ``j``, as _blocks.html draws its cells."""
    classes = set(kind.split())
    nowrap = bool(classes & {"nw", "num"})
    lo, hi = _cell(header, nowrap=nowrap, bold=True)
    for row in rows:
        if j >= len(row):
            continue
        value = "" if row[j] is None else str(row[j])
        if value in ("pass", "fail") and not (linked and j == 0):
            w = text_width(value.upper(), 7.5, bold=True) + _BADGE + _PAD
            a, b = w, w
        else:
            short = len(value) <= _SHORT and not (linked and j == 0)
            a, b = _cell(value, nowrap=nowrap or short)
        lo, hi = max(lo, a), max(hi, b)
    return lo, hi, kind == "verdict"


class Widths(list):
    """Each column's share of the table's width in per cent. ``roomy``: every
    column is at least its widest content wide (with _SPARE to spare), so no
    cell wraps; ``cell_kinds``: the columns' classes for their cells, with "nw"
    added to each column that wide (a cell that does not wrap needs no span
    around each number and unit, report._keep_units); ``row_kinds``: each row's
    classes for its cells, with "nw" also on each cell of a narrower column
    whose own text fits its column on one line (with _SPARE to spare)."""

    roomy = False
    cell_kinds: list[str] = []
    row_kinds: list[list[str]] = []
    row_lines: list[list[tuple[str, ...] | None]] = []


def widths(columns: Sequence, rows: Sequence[Sequence], kinds: Sequence[str],
           linked: bool = False, room: float = _PAGE) -> Widths | None:
    """Each column's share of the table's width in per cent (summing to 100),
    or None when the columns' narrowest widths do not fit ``room`` (pt).
    ``kinds``: each column's classes as _blocks.html gives them; ``linked``: the
    first column holds the links of the summary (they wrap)."""
    if not columns:
        return None
    cols = [_column(j, str(kinds[j] if j < len(kinds) else ""), str(c), rows, linked)
            for j, c in enumerate(columns)]
    lo = [c[0] for c in cols]
    hi = [c[1] for c in cols]
    if sum(lo) > room:
        return None
    # Verdict columns are "width: 1%" in note.css: as narrow as their badge.
    grow = [0.0 if c[2] else h for c, h in zip(cols, hi)]
    if sum(hi) <= room:
        spare = room - sum(hi)
        total = sum(grow) or 1.0
        out = [h + spare * g / total for h, g in zip(hi, grow)]
    else:
        want = [0.0 if c[2] else h - l for c, l, h in zip(cols, lo, hi)]
        total = sum(want) or 1.0
        out = [l + (room - sum(lo)) * w / total for l, w in zip(lo, want)]
    share = Widths(round(100 * w / room, 2) for w in out)
    share[-1] = round(100 - sum(share[:-1]), 2)
    names = [str(kinds[j] if j < len(kinds) else "") for j in range(len(columns))]
    # A column at least as wide as its widest content (and _SPARE) wraps no cell.
    wide = [c[2] or s * room / 100 >= h + _SPARE for c, s, h in zip(cols, share, hi)]
    share.roomy = all(wide)
    share.cell_kinds = [k if not w or "nw" in k.split() else f"{k} nw".strip()
                        for k, w in zip(names, wide)]
    share.row_kinds, share.row_lines = _row_kinds(rows, share, linked, room)
    return share


def _row_kinds(rows: Sequence[Sequence], share: Widths, linked: bool,
               room: float) -> tuple[list[list[str]], list[list[tuple[str, ...] | None]]]:
    """Each row's cell classes and lines.

    Classes: the column's (``share.cell_kinds``), with "nw" on a cell whose text,
    measured erring wide, fits its column on one line: it would not have wrapped,
    so it needs no span per number and unit either (such spans were a tenth of a
    stage's text pieces, each laid out and drawn on its own).

    Lines: for a cell of a column too narrow for it, its text broken into the
    lines it will show (``_lines``: first fit, between words, never between a
    number and its unit), or None where one piece alone is wider than the column.
    Given, a cell shows these lines and does not wrap: again no span (a summary
    row had three, a fifth of the front matter's render)."""
    kinds = share.cell_kinds
    classes, lines = [], []
    for row in rows:
        cells: list[str] = list(kinds)
        broken: list[tuple[str, ...] | None] = [None] * len(kinds)
        for j, kind in enumerate(kinds[:len(row)]):
            if "nw" in kind.split() or (linked and j == 0) or row[j] is None:
                continue
            value = str(row[j])
            if value in ("pass", "fail"):
                continue
            limit = share[j] * room / 100 - _PAD - _SPARE
            if text_width(value) <= limit:
                cells[j] = f"{kind} nw".strip()
            elif len(value) > _SHORT:        # a short cell never wraps (_blocks.html)
                broken[j] = _lines(value, limit)
        classes.append(cells)
        lines.append(broken)
    return classes, lines
