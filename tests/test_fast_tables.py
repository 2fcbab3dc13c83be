"""Tests of rcdoc.note.fast_tables: a shorter path through weasyprint 70's
resolution of collapsed table borders.

The reference is weasyprint itself: its own ``collapse_table_borders`` (put
back around each test), which must give the same resolved border grids, the
same border widths on every box, the same log records and the same PDF bytes.
The CSS exercised is from CSS 2.1 §17 (the collapsing border model, §17.6.2,
and its conflict resolution, §17.6.2.1: hidden wins, then the wider border,
then double, solid, dashed, dotted, ridge, outset, groove, inset; cell, row,
row group, column, column group, table; the earlier on a tie; anonymous table
objects, §17.2.1; captions; the separated model, §17.6.1), HTML's ``colspan``,
``rowspan`` (0 too), ``span`` and ``dir``, and CSS Logical Properties 1
(``border-inline-start``), as weasyprint implements them.
"""

from __future__ import annotations

import collections
import contextlib
import sys

import pytest
import weasyprint

from rcdoc.note import fast_layout, fast_tables
from test_report import make_context
from weasyprint_own import counted, general, long_table_stage, note_parts, render_parts, rendered, same_parts  # noqa: F401 - general: a fixture

_NAME = "collapse_table_borders"
_SIDES = ("top", "right", "bottom", "left")


def _modules():
    from weasyprint.formatting_structure import build
    from weasyprint.layout import table
    return table, build


@contextlib.contextmanager
def _short_path():
    """The short path in place of weasyprint's own, in every module that holds
    it; yields counts of its calls ("short") and of the calls it hands to
    weasyprint's own ("general")."""
    table, build = _modules()
    own = table.__dict__[_NAME]
    assert build.__dict__[_NAME] is own
    counts = collections.Counter()

    try:
        # The short path takes weasyprint's own as it finds it: counted.
        table.collapse_table_borders = build.collapse_table_borders = counted(counts, own, "general")
        replaced = fast_tables.replacements()
        assert {(owner, name) for owner, name, _ in replaced} == {(table, _NAME), (build, _NAME)}
        for owner, name, new in replaced:
            setattr(owner, name, counted(counts, new, "short"))
        yield counts
    finally:
        table.collapse_table_borders = build.collapse_table_borders = own


def _render(html: str):
    """The PDF, every box's border attributes (and each table's grid), and
    weasyprint's log records."""
    return rendered(html, _box_attributes)


def _widths(box) -> tuple:
    # repr: 0 and 0.0 are told apart.
    return tuple(repr(getattr(box, f"border_{side}_width", "unset")) for side in _SIDES)


def _box_attributes(document) -> list[tuple]:
    from weasyprint.formatting_structure import boxes
    out = []

    def walk(box):
        row = [type(box).__name__, box.element_tag, _widths(box)]
        if isinstance(box, boxes.TableBox):
            row += [repr(getattr(box, "collapsed_border_grid", None)),
                    getattr(box, "skip_cell_border_top", None),
                    getattr(box, "skip_cell_border_bottom", None)]
            for group in box.column_groups:
                row.append(("colgroup", _widths(group), [_widths(c) for c in group.children]))
        if isinstance(box, boxes.TableCellBox):
            row += [box.grid_x, box.colspan, box.rowspan]
        out.append(tuple(row))
        for child in getattr(box, "children", ()) or ():
            walk(child)

    for page in document.pages:
        walk(page._page_box)
    return out


def _same_as_weasyprints_own(html: str):
    reference = _render(html)
    with _short_path() as counts:
        short = _render(html)
    assert short[0] == reference[0]         # the PDF, byte for byte
    assert short[1] == reference[1]         # every box's widths, every grid
    assert short[2] == reference[2]         # the log records, in order
    assert short[3] == reference[3]
    return reference, counts


def _table(classes: str = "t", attributes: str = "") -> str:
    """A table with every kind of box the conflict resolution ranks, borders
    of every style, spans (rowspan 0: to the end of its group), ties between
    boxes of the same rank and of different ranks, an empty cell, an empty row
    group and a caption on each side."""
    return f"""<table class="{classes}" {attributes}>
<caption>caption on top</caption>
<colgroup class="cg"><col class="c"><col span="2" class="c2"></colgroup>
<colgroup span="2" class="cg2"></colgroup>
<thead><tr><th>h1</th><th class="hid">h2</th><th colspan="2">h3</th><th>h5</th></tr></thead>
<tfoot><tr><td colspan="5" class="ins">foot</td></tr></tfoot>
<tbody class="g">
<tr class="r"><td rowspan="2" class="dbl">a</td><td class="dot">b</td><td class="ins">c</td>
<td class="outs">d</td><td>e</td></tr>
<tr><td class="tie-a">f</td><td class="tie-b">g</td>
<td colspan="2" rowspan="2" class="gro">h</td></tr>
<tr class="rt"><td class="zero">i</td><td></td><td class="cur">j</td></tr>
</tbody>
<tbody></tbody>
<tbody class="g2"><tr><td rowspan="0" class="dash">k</td><td class="log">l</td><td class="em">m</td>
<td class="hid">n</td><td class="dbl">o</td></tr>
<tr><td class="tie-b">p</td><td class="tie-a">q</td><td colspan="3" class="dot">r</td></tr></tbody>
<caption style="caption-side: bottom">caption below</caption>
</table>"""


_STYLE = """<style>
@page { size: 280px 260px; margin: 8px }
body { font: 7px/1.2 "DejaVu Sans"; margin: 0; color: #224 }
table { border-collapse: collapse; margin: 3px 0 }
td, th { border: 1px solid #888; padding: 1px 2px }
table.t { border: 3px double navy }
.hid { border: 2px hidden } .dbl { border: 3px double red } .dot { border: 3px dotted green }
.ins { border: 3px inset #c60 } .outs { border: 3px outset #06c }
.gro { border-top: 3px groove; border-bottom: 3px ridge; border-left-style: none }
.dash { border-left: 3px dashed purple; border-right: 3px dashed purple }
.tie-a { border-right: 2px solid red } .tie-b { border-left: 2px solid blue }
.zero { border: 0 solid red }
.cur { border: 2px solid currentcolor; color: #a0a }
tr.r { border-bottom: 4px solid orange } tr.rt { border-top: 1px solid lime }
thead { border-bottom: 5px double black } tbody.g { border: 2px dashed teal }
tbody.g2 { border-left: 7px hidden } tfoot { border-top: 3px solid maroon }
col.c { border-left: 6px solid yellow } col.c2 { border-right: 3px dotted }
colgroup.cg { border-right: 4px ridge silver } colgroup.cg2 { border: 1px solid #0f0 }
.log { border-inline-start: 3px solid brown; border-block-end: 2px dotted }
.em { border-top: 0.5em solid; border-bottom: thick solid; border-left: thin solid;
      border-right: medium solid }
table.sep { border-collapse: separate; border-spacing: 2px }
.anon { display: table; border-collapse: collapse; border: 1px solid }
.anon span { display: table-cell; border: 2px solid blue } .anon span.hid { border: 2px hidden }
.it { display: inline-table; border-collapse: collapse; border: 1px dotted }
.it span { display: table-cell; border: 2px double }
caption { border: 2px solid red }
.tall td { border: 1px solid #333 }
</style>"""

_LONG_ROWS = "".join(f"<tr><td>row {i}</td><td>{'long text ' * (60 if i == 9 else 1)}</td></tr>"
                     for i in range(24))

# The table in both directions, as a separated table too, anonymous table
# boxes (cells without rows, an inline table), tables with no cells, a long
# table with a repeated header split over pages, a table whose row is split (a
# cell taller than a page), a tie with a cell spanning rows met before, and a
# border of zero width that is no null border (solid: it wins over none).
_HOSTILE = f"""<html><head>{_STYLE}</head><body>
{_table()}
{_table(attributes='dir="rtl"')}
{_table("t sep")}
<div class="anon"><span>x</span><span class="hid">y</span><span>z</span></div>
<p>text <span class="it"><span>i</span><span>j</span></span> after</p>
<table><tr></tr></table><table></table>
<table class="tall"><thead><tr><th>head</th><th>again</th></tr></thead><tbody>
{_LONG_ROWS}
</tbody></table>
<table class="tall"><tr><td>before</td><td>a row taller than a page: {"split " * 260}</td></tr>
<tr><td>after</td><td>the split</td></tr></table>
<table><tr><td>a</td><td rowspan="2" class="tie-b">b</td></tr>
<tr><td class="tie-a">c</td></tr></table>
<table style="border: none"><tr><td style="border: 0 solid red">zero</td>
<td style="border: none">none</td></tr></table>
<table dir="rtl" class="tall"><tr><td colspan="2">wide</td><td rowspan="2">tall</td></tr>
<tr><td>1</td><td>2</td></tr></table>
</body></html>"""


def test_replacements_are_for_weasyprint_70_only_and_replace_every_name(
        general, monkeypatch):
    import importlib
    for name in ("weasyprint.formatting_structure.build", "weasyprint.layout",
                 "weasyprint.draw", "weasyprint.document"):
        importlib.import_module(name)
    table, build = _modules()
    own = table.__dict__[_NAME]
    # Every weasyprint module that holds the function by name gets the short path.
    holders = {module for module_name, module in list(sys.modules.items())
               if module_name.split(".")[0] == "weasyprint" and module is not None
               and vars(module).get(_NAME) is own}
    replaced = fast_tables.replacements()
    assert holders == {owner for owner, _, _ in replaced} == {table, build}
    assert all(name == _NAME and function is not own for _, name, function in replaced)
    monkeypatch.setattr(weasyprint, "__version__", "71.0")
    assert fast_tables.replacements() == []


def test_hostile_tables_are_weasyprints_own_and_take_the_short_path(general):
    (pdf, boxes, records, pages), counts = _same_as_weasyprints_own(_HOSTILE)
    # The extremes are there: split over pages (the long table's header
    # repeated), the strong null borders of spans, inset and outset drawn as
    # ridge and groove, both directions, a separated table with its own widths.
    assert pages >= 3
    grids = "".join(b[3] for b in boxes if b[0] == "TableBox")
    for found in ("'hidden'", "'ridge'", "'groove'", "'double'", "'dotted'", "'dashed'"):
        assert found in grids
    assert sum(b[0] == "TableBox" and b[3] != "None" for b in boxes) >= 8
    assert any(b[0] == "TableBox" and b[3] == "None" for b in boxes)     # separated
    assert any(b[0] == "TableBox" and (b[4] or b[5]) for b in boxes)    # a split row
    # Every collapsed table went the short way (the separated one not at all).
    assert counts["general"] == 0
    # Eleven: the two collapsed tables, the anonymous and the inline one, the two
    # with no cells (their empty grids too), the five others.
    assert counts["short"] == 11


def _tables_of(html: str) -> list:
    """The arguments of every call to weasyprint's own resolution while html is
    rendered (the table boxes, before layout)."""
    table, build = _modules()
    own = table.__dict__[_NAME]
    calls = []

    def capture(*args):
        calls.append(args)
        return own(*args)

    build.collapse_table_borders = capture
    try:
        weasyprint.HTML(string=html).render()
    finally:
        build.collapse_table_borders = own
    return calls


def _resolved(function, table, grid_width, grid_height) -> tuple:
    """What ``function`` gives for a table: its grids and the widths it sets."""
    grids = function(table, grid_width, grid_height)
    widths = [_widths(table)]
    for group in table.children:
        widths.append(_widths(group))
        for row in group.children:
            widths.append(_widths(row))
            widths.extend(_widths(cell) for cell in row.children)
    for group in table.column_groups:
        widths.append(_widths(group))
        widths.extend(_widths(column) for column in group.children)
    return repr(grids), widths


def test_every_grid_and_width_is_weasyprints_own(general):
    (own_table, _) = _modules()
    own = own_table.__dict__[_NAME]
    [(_, _, short)] = [r for r in fast_tables.replacements() if r[0] is own_table]
    calls = _tables_of(_HOSTILE)
    assert len(calls) == 11
    for args in calls:
        # Twice the short way: the second reads the sides kept in the styles.
        first = _resolved(short, *args)
        reference = _resolved(own, *args)
        again = _resolved(short, *args)
        assert first == reference == again


def test_the_short_path_reads_each_style_once_and_unset_borders_not_at_all(general):
    table, build = _modules()
    [(_, _, short)] = [r for r in fast_tables.replacements() if r[0] is table]
    html = _STYLE + """<table><col><col class="c2"><col>
    <tbody>""" + "<tr><td>a</td><td class='dbl'>b</td><td>c</td></tr>" * 6 + """</tbody>
    </table>"""
    resolved = []

    def capture(*args):
        resolved.append(args)
        return short(*args)

    build.collapse_table_borders = capture
    try:
        weasyprint.HTML(string=html).render()
    finally:
        build.collapse_table_borders = table.__dict__[_NAME]
    [(box, _, _)] = resolved
    cells = [cell for group in box.children for row in group.children for cell in row.children]
    # weasyprint gives sibling elements matched by the same rules one style: the
    # 18 cells have 2, the 6 rows 1; each style's sides were read once and kept.
    styles = {id(cell.style): cell.style for cell in cells}
    assert len(cells) == 18 and len(styles) == 2
    for style in styles.values():
        kept = style.__dict__["_rcdoc_collapse_sides"]
        assert [entry is None for entry in kept] == [False] * 4
    [double] = [s for s in styles.values() if s["border_top_style"] == "double"]
    assert double.__dict__["_rcdoc_collapse_sides"][0] == (
        (0, 3, 8), ("double", 3, double["border_left_color"]))
    # The columns without border rules: their borders were never computed, only
    # the colour their 'currentcolor' would have been (and the direction).
    columns = [column for group in box.column_groups for column in group.children]
    plain = [c for c in columns if "c2" not in (c.element.get("class") or "")]
    assert len(plain) == 2
    for column in plain:
        assert not any(f"border_{side}_{what}" in column.style for side in _SIDES
                       for what in ("style", "width", "color"))
        assert "color" in column.style and "direction" in column.style
        assert column.style.__dict__["_rcdoc_collapse_sides"] == (None,) * 4


def test_kept_sides_are_not_read_again(general):
    from weasyprint.css import ComputedStyle

    reads = collections.Counter()

    class Counted(ComputedStyle):
        def __getitem__(self, key):
            reads[key] += 1
            return super().__getitem__(key)

    table, _ = _modules()
    [(_, _, short)] = [r for r in fast_tables.replacements() if r[0] is table]
    [args] = _tables_of(_STYLE + "<table><tr><td class='dbl'>a</td><td>b</td></tr></table>")
    first = _resolved(short, *args)
    cells = args[0].children[0].children[0].children
    for cell in cells:
        cell.style.__class__ = Counted
    assert _resolved(short, *args) == first
    assert not any(key.startswith("border_") for key in reads), reads


@pytest.mark.parametrize(("key", "value", "entry"), [
    ("border_top_width", 5, "('none', 5,"), ("border_top_style", "solid", "('solid', 0,")])
def test_a_value_written_into_an_anonymous_style_is_read(general, key, value, entry):
    # An anonymous row's style holds border widths of zero from the start and
    # no border style ('none'); a width or a style written into it before its
    # borders are resolved (weasyprint writes none) makes a side that scores
    # above the null border: read, as the general code reads it.
    table, build = _modules()
    own = table.__dict__[_NAME]
    [(_, _, short)] = [r for r in fast_tables.replacements() if r[0] is table]
    resolved = []

    def write_then_resolve(box, grid_width, grid_height):
        [row] = box.children[0].children
        assert type(row.style).__name__ == "AnonymousStyle"
        assert "border_top_style" not in row.style
        row.style[key] = value
        resolved.append(_resolved(short, box, grid_width, grid_height))
        resolved.append(_resolved(own, box, grid_width, grid_height))
        return own(box, grid_width, grid_height)

    build.collapse_table_borders = write_then_resolve
    try:
        weasyprint.HTML(string="<div style='display: table; border-collapse: collapse'>"
                               "<span style='display: table-cell'>x</span></div>").render()
    finally:
        build.collapse_table_borders = own
    [short_way, own_way] = resolved
    assert short_way == own_way
    assert entry in short_way[0]


def test_ties_go_to_the_earlier_border(general):
    # CSS 2.1 §17.6.2.1: the same width and style, the colours differ; the cell
    # wins over its row, the left cell over the right, the column over the
    # table. Where the widths differ, the wider wins whoever sets it.
    html = _STYLE + """<table style="border: 2px solid #00f">
    <col style="border-left: 2px solid #0f0"><col>
    <tr style="border-top: 2px solid #f00"><td style="border-top: 2px solid #ff0;
        border-right: 2px solid #0ff">a</td><td style="border-left: 2px solid #f0f;
        border-bottom: 3px dotted #123">b</td></tr></table>"""
    [args] = _tables_of(html)
    table, build = _modules()
    [(_, _, short)] = [r for r in fast_tables.replacements() if r[0] is table]
    grids, _ = _resolved(short, *args)
    assert grids == _resolved(table.__dict__[_NAME], *args)[0]
    vertical, horizontal = short(*args)
    from tinycss2.color5 import parse_color
    colour = {name: parse_color(name)
              for name in ("#ff0", "#0ff", "#0f0", "#123", "#00f")}
    assert horizontal[0][0][1] == ("solid", 2, colour["#ff0"])     # cell over row
    assert vertical[0][1][1] == ("solid", 2, colour["#0ff"])       # left cell first
    assert vertical[0][0][1] == ("solid", 2, colour["#0f0"])       # column over table
    assert horizontal[1][1][1] == ("dotted", 3, colour["#123"])    # wider over table


def test_separated_tables_are_left_alone(general):
    html = _STYLE + "<table class='sep'><tr><td>a</td><td class='dbl'>b</td></tr></table>"
    (_, boxes, _, _), counts = _same_as_weasyprints_own(html)
    assert counts["short"] == 0 and counts["general"] == 0
    # Its cells keep their own widths (the collapsed model would halve them).
    assert any(b[0] == "TableCellBox" and b[2] == ("3.0",) * 4 for b in boxes)


def test_log_records_come_in_weasyprints_order(general):
    # Border colours that cannot be computed (undefined variables), on cells,
    # rows and a column, and a column whose colour and direction cannot be
    # (read for its borders, none of them set): each is logged when first read,
    # so the records tell the order in which styles are read.
    html = """<style>table { border-collapse: collapse } td { border: 1px solid }
    .a { border-left-color: var(--a) } .b { border-top-color: var(--b) }
    tr.c { border-bottom: 2px solid var(--c) } col.d { color: var(--d); direction: var(--g) }
    col.e { border-right: 1px solid var(--e) } .f { border-right-color: var(--f) }
    </style><table><col class="d"><col class="e"><col>
    <tr class="c"><td class="b">1</td><td class="a">2</td><td class="f">3</td></tr>
    <tr><td class="f">4</td><td class="b a">5</td><td>6</td></tr></table>"""
    (_, _, records, _), counts = _same_as_weasyprints_own(html)
    assert counts["short"] == 1 and counts["general"] == 0
    # Each logged once, when first read: the cells' before the column's.
    logged = [message.split("`")[1] for _, message in records]
    assert logged == ["border-top-color: ", "border-left-color: ", "border-right-color: ",
                      "direction: ", "color: "]


def test_a_negative_width_goes_the_general_way(general):
    # weasyprint refuses negative widths; were one written into a style, the
    # least score would not be (0, 0, 0): the general code resolves the table.
    html = _STYLE + "<table><tr><td>a</td><td class='x'>b</td></tr></table>"
    [args] = _tables_of(html)
    cell = args[0].children[0].children[0].children[1]
    cell.style["border_top_style"] = "solid"
    cell.style["border_top_width"] = -2
    table, _ = _modules()
    with _short_path() as counts:
        short = _resolved(table.collapse_table_borders, *args)
    assert counts["general"] == 1 and counts["short"] == 1
    assert short == _resolved(table.__dict__[_NAME], *args)


@pytest.mark.slow
def test_example_note_parts_are_weasyprints_own_and_take_the_short_path(
        general, monkeypatch):
    ctx = make_context()
    # And a stage with a long table (split over pages, striped, its last row
    # bordered), as the example board's sweeps give.
    parts = note_parts(ctx, long_table_stage(ctx))

    def render():
        return render_parts(parts)

    install = fast_layout.install
    monkeypatch.setattr(fast_layout, "install", lambda: False)   # the renderer asks
    reference = render()
    with _short_path() as counts:
        alone = render()
    monkeypatch.setattr(fast_layout, "install", install)
    try:
        with _short_path():
            with_layout = render()
            assert fast_layout.installed()
    finally:
        fast_layout.uninstall()     # before the short path is taken away
    same_parts((alone, with_layout), reference)
    # The parts' collapsed tables (the stages' checks, the sweep) all went the
    # short way; the sweep over more than one page.
    assert counts["short"] >= 3 and counts["general"] == 0
    assert reference[2]["pages"] >= 2
