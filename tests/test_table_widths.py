"""Column widths of the note's tables (rcdoc.note.table_widths) against weasyprint's
own automatic table layout (CSS 2.1 §17.5.2.2), the reference they stand in for.

Widths are measured on tables styled by the shipped note.css and rendered by
weasyprint, a general-purpose HTML/CSS renderer: the column widths of its
automatic layout, and the narrowest width of a cell (its min-content width).
"""

from __future__ import annotations

import pytest
import weasyprint
from markupsafe import escape
from weasyprint.formatting_structure import boxes

from rcdoc.note import report, table_widths

CSS = (report.shipped_templates_dir() / "note.css").read_text(encoding="utf-8")
PX = 0.75          # CSS px -> pt


def _columns(html: str) -> list[list[float]]:
    """The column widths (pt) of every table weasyprint lays out in ``html``."""
    doc = weasyprint.HTML(string=f"<style>{CSS}</style>{html}").render()
    found = []

    def walk(box):
        if isinstance(box, boxes.TableBox):
            found.append([w * PX for w in box.column_widths])
        for child in getattr(box, "children", []):
            walk(child)
    for page in doc.pages:
        walk(page._page_box)
    return found


def _table(columns, rows, kinds, shares=None) -> str:
    cls = "data fixed" if shares else "data"
    cols = "".join(f'<col style="width: {s}%">' for s in shares) if shares else ""
    head = "".join(f'<th class="{k}">{escape(c)}</th>' for c, k in zip(columns, kinds))
    body = "".join("<tr>" + "".join(
        f'<td class="verdict"><span class="badge badge-{v}">{v}</span></td>' if v in ("pass", "fail")
        else f'<td class="{(k + (" nw" if len(v) <= 12 else "")).strip()}">{escape(v)}</td>'
        for v, k in zip(row, kinds)) + "</tr>" for row in rows)
    return (f'<table class="{cls}"><colgroup>{cols}</colgroup><thead><tr>{head}</tr></thead>'
            f"<tbody>{body}</tbody></table>")


TEXTS = ["2.17 kΩ … 2.23 kΩ", "Corner frequency (−3 dB)", "±10 %", "546 µs", "−0.0879 dB/%",
         "X7R; −45 % at 16 V, biased 12 V", "AVAWAY 0.1 Ω", "100 ppm/K", "≤ −10 dB"]


@pytest.mark.parametrize("bold", [False, True])
def test_text_width_is_weasyprints_own_to_a_fraction_of_a_point(bold):
    # Reference: the one-column table weasyprint shrinks to its text (no padding, no wrap).
    tag = "th" if bold else "td"
    html = "".join(f'<table style="width:auto;border-collapse:collapse;font:8pt \'DejaVu Sans\'">'
                   f'<tr><{tag} style="padding:0;white-space:nowrap">{escape(t)}</{tag}></tr></table>'
                   for t in TEXTS)
    got = [c[0] for c in _columns(html)]
    for text, real in zip(TEXTS, got):
        est = table_widths.text_width(text, bold=bold)
        # Never narrower; wider only by kerning (AVAWAY: 4.6 %), else by under 0.5 pt.
        assert real <= est <= max(real + 0.5, real * 1.06), (text, real, est)


PARTS = (["Ref", "Role", "Value", "Tolerance", "Temperature / derating", "Range in circuit",
          "Series", "Rating", "Model"],
         [["C21", "c", "1 µF", "±10 %", "X7R; −45 % at 16 V, biased 12 V", "571 nF … 945 nF",
           "E12", "25 V", "—"],
          ["R30", "r", "220 kΩ", "±1 %", "—", "218 kΩ … 222 kΩ", "E96", "—", "—"]],
         ["", "", "num", "num", "", "", "", "num", ""])
CHECKS = (["Requirement", "Limit", "Nominal", "Worst sample", "Worst case", "Yield", "Verdict"],
          [["Corner frequency (−3 dB)", "≤ 2 Hz", "959 mHz", "1.22 Hz", "751 mHz … 1.27 Hz",
            "100 %", "pass"],
           ["Gain at 5 Hz", "≥ −1 dB", "−0.243 dB", "−0.34 dB", "−0.357 dB … −0.182 dB",
            "100 %", "fail"]],
         ["nw", "num", "num", "num", "", "num", "verdict"])


@pytest.mark.parametrize("table", [PARTS, CHECKS], ids=["fits", "wraps"])
def test_widths_follow_the_automatic_layout(table):
    # Reference: weasyprint's automatic layout of the same table; the fixed one
    # (widths from table_widths) must give every column the same width within
    # 1.5 pt, and each column at least weasyprint's narrowest width for it.
    columns, rows, kinds = table
    shares = table_widths.widths(columns, rows, kinds)
    assert shares is not None and abs(sum(shares) - 100) < 1e-9
    auto, fixed = _columns(_table(columns, rows, kinds) + _table(columns, rows, kinds, shares))
    assert len(auto) == len(fixed) == len(columns)
    for a, f in zip(auto, fixed):
        assert abs(a - f) < 1.5, (auto, fixed)
    squeezed = _table(columns, rows, kinds).replace('class="data"', 'class="data" style="width:1px"', 1)
    narrow = _columns(squeezed)[0]
    for n, f in zip(narrow, fixed):
        assert f >= n - 0.05, (narrow, fixed)


def test_no_widths_when_the_narrowest_columns_do_not_fit():
    # Twelve columns of 15-character numbers cannot share 174 mm: automatic layout.
    columns = [f"Value {i}" for i in range(12)]
    rows = [["123456.789 kΩ/%"] * 12]
    assert table_widths.widths(columns, rows, ["num"] * 12) is None
    assert table_widths.widths([], [], []) is None


def test_a_word_wider_than_the_page_claims_at_most_its_share():
    # A 200-character id in a wrapping column: its narrowest width is capped (note.css
    # breaks such a word where it must), so the table keeps fixed widths and the other
    # columns their own narrowest widths; uncapped, it alone overflowed the page and
    # the table fell back to the automatic layout, which squeezed the others out.
    columns = ["Stage", "Kind", "Key result", "Verdict"]
    rows = [["s" * 200, "RC low-pass", "Corner frequency: 226 Hz (214 Hz … 240 Hz)", "pass"]]
    narrowest = table_widths._column(0, "", "Stage", rows, False)[0]
    assert narrowest == pytest.approx(table_widths._LONGEST_PIECE + table_widths._PAD)
    share = table_widths.widths(columns, rows, ["", "", "", "verdict"])
    assert share is not None
    room = table_widths._PAGE
    assert share[1] * room / 100 >= table_widths.text_width("low-pass") + table_widths._PAD
    assert share[2] * room / 100 >= table_widths.text_width("frequency:") + table_widths._PAD


@pytest.mark.parametrize("name", ["DejaVuSans.ttf", "DejaVuSans-Bold.ttf"])
def test_advances_read_from_the_font_tables_are_fonttools_own(name, tmp_path):
    # The advances come from the font's tables read directly (OpenType spec:
    # table directory, head, hhea, hmtx, cmap format 12); fontTools, a general-
    # purpose font library, reads the same numbers for every code point.
    import importlib.util
    from pathlib import Path
    folder = Path(importlib.util.find_spec("matplotlib").submodule_search_locations[0])
    path = folder / "mpl-data" / "fonts" / "ttf" / name
    direct = table_widths._read_advances(path)
    assert len(direct) > 5000 and direct == table_widths._font_tools_advances(path)
    # A font without the full-repertoire subtable (here: its cmap's directory entry
    # renamed) is left to fontTools; a cut-off file ends in an error _advances catches.
    data = bytearray(path.read_bytes())
    at = bytes(data).index(b"cmap", 12)
    data[at:at + 4] = b"cmaq"
    (tmp_path / "no-cmap.ttf").write_bytes(bytes(data))
    assert table_widths._read_advances(tmp_path / "no-cmap.ttf") is None
    (tmp_path / "cut.ttf").write_bytes(path.read_bytes()[:2000])
    import struct
    with pytest.raises((struct.error, IndexError, ValueError)):
        table_widths._read_advances(tmp_path / "cut.ttf")


def test_missing_glyphs_are_taken_as_wide_as_the_widest():
    # A character DejaVu Sans lacks is drawn from another font: never taken narrower
    # than the widest glyph the font has (common practice: err wide).
    widest = table_widths.text_width("\u4e2d")        # a CJK ideograph
    assert widest >= table_widths.text_width("W") and widest >= table_widths.text_width("—")


def _cell_lines(html: str) -> list[int]:
    """The number of lines of every table cell weasyprint lays out in ``html``, in order."""
    return [lines for lines, *_ in _cell_boxes(html)]


def _spanned(columns, rows, kinds, shares, cell_kinds) -> str:
    """A fixed table as _blocks.html writes it: each cell's text through
    report._keep_units with its column's cell classes (short cells "nw")."""
    def cls(k, v):
        return (k + (" nw" if len(v) <= 12 and "nw" not in k.split() else "")).strip()
    cols = "".join(f'<col style="width: {s}%">' for s in shares)
    head = "".join(f'<th class="{k}">{escape(c)}</th>' for c, k in zip(columns, kinds))
    body = "".join("<tr>" + "".join(
        f'<td class="{cls(k, v)}">{report._keep_units(v, cls(k, v))}</td>'
        for v, k in zip(row, cell_kinds)) + "</tr>" for row in rows)
    return (f'<table class="data fixed"><colgroup>{cols}</colgroup><thead><tr>{head}</tr>'
            f"</thead><tbody>{body}</tbody></table>")


LONG = (["Part", "Assumed for the part"],
        [["C21", "Tolerance ±10 % drawn uniformly over its whole range. X7R (EIA-198 class II): "
                 "temperature coefficient within ±15 % from −55 °C to 125 °C; −45 % at 16 V."],
         ["R30", "Tolerance ±1 % drawn uniformly; 100 ppm/K, linear from 25 °C."]],
        ["", ""])


@pytest.mark.parametrize("table", [PARTS, CHECKS, LONG], ids=["fits", "wraps", "long"])
def test_cells_of_columns_at_their_widest_are_laid_out_as_when_they_may_wrap(table):
    # Reference: weasyprint's own layout of the same fixed table. A column at least
    # its widest content wide gets "nw" cells (no span per number and unit); every
    # cell must come out in as many lines as with the spans and wrapping allowed,
    # i.e. no cell of such a column would have wrapped (one line each, header included).
    # A column of long text keeps its spans.
    columns, rows, kinds = table
    shares = table_widths.widths(columns, rows, kinds)
    assert shares is not None
    wide = ["nw" in k.split() for k in shares.cell_kinds]
    assert shares.roomy == all(wide)
    spans = _spanned(columns, rows, kinds, shares, kinds)
    plain = _spanned(columns, rows, kinds, shares, shares.cell_kinds)
    got = _cell_lines(plain)
    assert got == _cell_lines(spans)
    if table is LONG:
        assert not wide[1] and not shares.roomy
        assert got[len(columns) + 1] > 1       # the long column really wraps
    else:
        assert shares.roomy and plain.count("<span") == 0 < spans.count("<span")
        assert set(got) == {1}


def test_cells_that_fit_a_narrower_column_are_laid_out_as_when_they_may_wrap():
    # Reference: weasyprint's own layout of the same fixed table with every number
    # kept with its unit by a span and wrapping allowed. A cell of a column too narrow
    # for its widest content gets "nw" (no spans) when its own text fits the column
    # on one line: it must come out in one line, as it does with the spans; the cells
    # that would wrap keep their spans and wrap as before.
    columns = ["Requirement", "Limit", "Worst case"]
    rows = [["Corner frequency", "180 Hz … 280 Hz", "213 Hz … 241 Hz"],
            ["Gain at 1 kHz, the mark the converter reads at its rate",
             "≤ −10 dB at 1 kHz and ≥ −0.5 dB at 10 Hz, over the whole range",
             "−13.6 dB … −12.6 dB at 1 kHz; −0.1 dB … 0 dB at 10 Hz over the range"],
            ["Settling", "546 µs", "612 µs"]]
    kinds = ["", "", ""]
    shares = table_widths.widths(columns, rows, kinds, room=300.0)
    assert shares is not None and not shares.roomy
    assert len(shares.row_kinds) == len(rows)
    plain = [f'<td class="{k}">{report._keep_units(v, k)}</td>'
             for row, ks in zip(rows, shares.row_kinds) for v, k in zip(row, ks)]
    spans = [f'<td>{report._keep_units(v, "")}</td>' for row in rows for v in row]
    nowrap = ["nw" in k.split() for ks in shares.row_kinds for k in ks]
    assert nowrap[3:6] == [False] * 3 and sum(nowrap) >= 6      # the long row may wrap

    def table(cells):
        cols = "".join(f'<col style="width: {s}%">' for s in shares)
        body = "".join("<tr>" + "".join(cells[i:i + 3]) + "</tr>" for i in range(0, 9, 3))
        return (f'<div style="width: 300pt"><table class="data fixed"><colgroup>{cols}'
                f"</colgroup><tbody>{body}</tbody></table></div>")

    got, want = _cell_lines(table(plain)), _cell_lines(table(spans))
    assert got == want
    assert all(n == 1 for n, fits in zip(want, nowrap) if fits)
    assert max(want) > 1                                         # the long row wraps
    assert table(plain).count("<span") < table(spans).count("<span")


def test_pieces_keep_each_number_with_its_unit():
    # The narrowest width of a column is its widest unbreakable piece: a number with
    # its unit is one (str.split would also split at the no-break space joining them).
    assert table_widths._pieces("Corner frequency: 2.74 kHz (2.59 kHz … 2.91 kHz)") == [
        "Corner", "frequency:", "2.74\u00a0kHz", "(2.59\u00a0kHz", "…", "2.91\u00a0kHz)"]
    assert table_widths._pieces(" a\u00a0b  c\n") == ["a\u00a0b", "c"]


def test_lines_break_first_fit_between_pieces():
    text = "Corner frequency: 2.74 kHz (2.59 kHz … 2.91 kHz)"
    w = table_widths.text_width
    for limit in (45.0, 70.0, 90.0, 120.0, 160.0):
        lines = table_widths._lines(text, limit)
        assert " ".join(lines) == text
        assert all(w(line) <= limit for line in lines)
        # First fit: no line could have taken the next line's first piece.
        for line, after in zip(lines, lines[1:]):
            first = table_widths._pieces(after)[0].replace("\u00a0", " ")
            assert w(f"{line} {first}") > limit
        assert not any(line.endswith(("2.74", "2.59", "2.91")) for line in lines)
    assert table_widths._lines(text, 20.0) is None        # "frequency:" alone is wider
    assert table_widths._lines("one", 100.0) == ("one",)


def _cell_boxes(html: str) -> list[tuple[int, float, float, str]]:
    """Every table cell weasyprint lays out in ``html``: (lines, widest line, content
    width, text), widths in pt."""
    doc = weasyprint.HTML(string=f"<style>{CSS}</style>{html}").render()
    found = []

    def line_boxes(box):
        if isinstance(box, boxes.LineBox):
            return [box]
        return [b for child in getattr(box, "children", []) for b in line_boxes(child)]

    def text(box):
        if isinstance(box, boxes.TextBox):
            return box.text
        return "".join(text(child) for child in getattr(box, "children", []))

    def walk(box):
        if isinstance(box, boxes.TableCellBox):
            lines = line_boxes(box)
            widest = max((sum(c.margin_width() for c in line.children) for line in lines),
                         default=0.0)
            found.append((len(lines), widest * PX, box.width * PX,
                          " ".join(text(line) for line in lines)))
        for child in getattr(box, "children", []):
            walk(child)
    for page in doc.pages:
        walk(page._page_box)
    return found


def test_cells_set_in_measured_lines_fit_their_columns():
    # Reference: weasyprint's own layout. A cell of a column too narrow for it is set
    # in the lines table_widths measured (no wrapping, no span per number and unit):
    # every line must fit the cell, and the cell must show its text, in as many
    # lines as measured and at most one more than weasyprint's own wrapping of it.
    columns = ["Requirement", "Limit", "Worst case"]
    rows = [["Corner frequency", "180 Hz … 280 Hz", "213 Hz … 241 Hz"],
            ["Gain at 1 kHz, the mark the converter reads at its rate",
             "≤ −10 dB at 1 kHz and ≥ −0.5 dB at 10 Hz, over the whole range",
             "−13.6 dB … −12.6 dB at 1 kHz; −0.1 dB … 0 dB at 10 Hz over the range"],
            ["Multiple-feedback low-pass", "Corner frequency: 59 Hz (48.1 Hz … 73.8 Hz)",
             "Sallen-Key low-pass, unity gain"]]
    shares = table_widths.widths(columns, rows, ["", "", ""], room=300.0)
    assert shares is not None and not shares.roomy
    set_lines = [[None] * 3 if lines is None else lines for lines in shares.row_lines]
    assert sum(bool(c) for r in set_lines for c in r) >= 4

    def cell(value, kind, lines, spans):
        if lines and not spans:
            return (f'<td class="{(kind + " nw").strip()}">'
                    + "<br>".join(str(escape(line)) for line in lines) + "</td>")
        return f'<td class="{kind}">{report._keep_units(value, kind)}</td>'

    def table(spans):
        cols = "".join(f'<col style="width: {s}%">' for s in shares)
        body = "".join("<tr>" + "".join(
            cell(v, "" if spans else k, ls, spans) for v, k, ls in zip(row, ks, lr)) + "</tr>"
            for row, ks, lr in zip(rows, shares.row_kinds, set_lines))
        return (f'<div style="width: 300pt"><table class="data fixed"><colgroup>{cols}'
                f"</colgroup><tbody>{body}</tbody></table></div>")

    got, own = _cell_boxes(table(False)), _cell_boxes(table(True))
    for (n, widest, width, shown), (n_own, *_), value, lines in zip(
            got, own, [v for r in rows for v in r], [c for r in set_lines for c in r]):
        assert widest <= width + 0.01, (value, widest, width)
        assert " ".join(shown.split()) == " ".join(value.split())
        if lines:
            assert n == len(lines) and n_own <= n <= n_own + 1
        else:
            assert n == n_own
    assert table(False).count("<span") < table(True).count("<span")
