"""A shorter path through weasyprint 70's resolution of collapsed table
borders, giving the same borders, so the same PDF.

What it is for: every table with ``border-collapse: collapse`` (the note's
``table.data``, some 2 000 cells in the example board's note) goes through
``layout.table.collapse_table_borders`` as its boxes are built. weasyprint
resolves the border of every grid edge with a call per box side and per edge
it covers (a row's borders once per column, a column's once per row, the
table's all around its grid), each call reading the side's style, width and
colour from the box's style and making a score tuple, mostly for sides whose
style is ``none``. Here:

- A box's four sides are read once, in the general code's order (left,
  right, top, bottom; each its style, width, then colour), into the
  (score, (style, width, colour)) entries the general code stores, and kept
  in the box's style: a computed style's values do not change once read, and
  weasyprint shares one style between sibling elements matched by the same
  rules (the note's table rows, and the cells of rows that share a style: of
  2 127 cells, 215 styles).
- A box whose style has none of the border properties cascaded (physical or
  logical) nor computed yet has four ``none`` sides: they are not computed
  at all (the example's ``col`` elements, which give the column widths). Only
  what computing them would have read first is read (the style's direction,
  then the colour ``currentcolor`` stands for): computed later, they compute
  the same, and nothing is logged either way.
- A side whose style is ``none`` scores (0, 0, 0), the least score there is:
  a score is (hidden or not, width, the style's rank), and a border width is
  never negative (weasyprint's validation refuses one, a math function's
  result too; were one met, the table would go the general way). Such a
  side wins no edge, and the edges it covers are not visited.
- The widths given to the cells, rows, groups, columns and the table are taken
  from the resolved grid as the general code takes them; a cell spanning one
  row and one column reads its four edges directly (the general code's max()
  of one).

The order of ties is kept: each edge sees the candidate borders in the
general code's order (cells with their spans' strong null borders, rows, row
groups, columns, column groups, the table), and a later one replaces an
earlier only with a higher score. The grids hold equal entries.

Measured on the example board's note (cachegrind, one render, startup
included, two runs each): 20.86-20.88 G instructions before, 20.35-20.45 G
after (2.0-2.5 % fewer, about 3 % of the render itself); resolving the
borders of its 69 collapsed tables takes 20-25 ms of CPU instead of 85-100 ms.

Left on the general path: the rest of building the table boxes
(``anonymous_table_boxes``, ``wrap_table``: a shorter path for the boxes
outside any table saved less than the noise of a render), and the table
layout's per-cell work (``group_layout`` is a closure inside
``table_layout``; of the module functions it calls, ``cell_baseline`` and
``add_top_padding`` take no measurable time, the note's cells being aligned
to the top).

What it must not do: change a value. ``replacements`` gives nothing for another
weasyprint than 70.0; tests/test_fast_tables.py compares the grids, every
box's border widths and the PDFs with weasyprint's own, on hostile tables and
on the example board's note parts.
"""

from __future__ import annotations

from rcdoc.note import renderer_libs  # noqa: F401 - weasyprint, without ctypes' library search
import weasyprint  # noqa: E402 - after renderer_libs

__all__ = ["replacements"]

_VERSION = "70.0"
_SIDES = ("left", "right", "top", "bottom")      # the general code's order of reading


def replacements() -> list:
    """(owner, name, function) for each short path, in the shape of
    rcdoc.note.fast_layout's; empty for another weasyprint than the one they
    were written for."""
    if weasyprint.__version__ != _VERSION:
        return []
    from weasyprint.formatting_structure import build
    from weasyprint.layout import table

    collapse = _collapse_table_borders(table)
    replaced = [(table, "collapse_table_borders", collapse)]
    # build.py imported it by name and calls it through its own namespace.
    if build.__dict__.get("collapse_table_borders") is table.collapse_table_borders:
        replaced.append((build, "collapse_table_borders", collapse))
    return replaced


class _Negative(Exception):
    """A border width below zero (refused by weasyprint's validation): the
    general code resolves that table."""


def _collapse_table_borders(table_module):
    """layout.table.collapse_table_borders with each box's sides read once, the
    sides that cannot win skipped (see the module's docstring)."""
    general = table_module.collapse_table_borders
    sides = _Sides(table_module.TRANSPARENT)

    def collapse_table_borders(table, grid_width, grid_height):
        if not (grid_width and grid_height):
            # Don’t bother with empty tables.
            return [], []
        try:
            return _resolve(sides, table, grid_width, grid_height)
        except _Negative:
            return general(table, grid_width, grid_height)

    collapse_table_borders.__doc__ = general.__doc__
    return collapse_table_borders


class _Sides:
    """Reads a box's four sides into the general code's grid entries, with the
    constants that takes (made once per short path: the ranks of the styles,
    the null borders, the keys of the border properties)."""

    def __init__(self, transparent):
        """The constants, as layout.table ranks and stores the borders;
        ``transparent`` is its TRANSPARENT, the null borders' colour."""
        from weasyprint.css import AnonymousStyle, ComputedStyle
        from weasyprint.css.computed_values import PHYSICAL_FUNCTIONS
        from weasyprint.draw.color import get_color

        self.anonymous_style, self.computed_style = AnonymousStyle, ComputedStyle
        self.get_color = get_color
        # As the general code ranks them: 'none' least, 'hidden' most.
        self.ranks = ranks = {style: rank for rank, style in enumerate(reversed([
            "hidden", "double", "solid", "dashed", "dotted", "ridge", "outset",
            "groove", "inset", "none"]))}
        self.drawn_as = {"inset": "ridge", "outset": "groove"}
        self.weak = ((0, 0, ranks["none"]), ("none", 0, transparent))
        self.strong = ((1, 0, ranks["hidden"]), ("hidden", 0, transparent))
        self.keys = keys = {
            side: (f"border_{side}_style", f"border_{side}_width", f"border_{side}_color")
            for side in _SIDES}

        physical = [key for side in _SIDES for key in keys[side]]
        # The properties that may set a side: the physical ones and the logical
        # ones that set them, in either direction.
        self.cascade_keys = frozenset(physical) | {
            PHYSICAL_FUNCTIONS[key](block="ttb", inline=direction)
            for key in physical for direction in ("ltr", "rtl")}
        self.style_and_colour_keys = frozenset(
            keys[side][i] for side in _SIDES for i in (0, 2))
        self.width_keys = tuple(keys[side][1] for side in _SIDES)

    def unset(self, style) -> bool:
        """Whether the style's four sides are 'none' with 'currentcolor', known
        without computing them: not cascaded, not computed yet (an anonymous
        style holds widths of zero from the start)."""
        kind = type(style)
        if kind is self.computed_style:
            if not style.cascaded.keys().isdisjoint(self.cascade_keys):
                return False
        elif kind is not self.anonymous_style:
            return False
        if not style.keys().isdisjoint(self.style_and_colour_keys):
            return False
        for key in self.width_keys:
            width = dict.get(style, key)
            if width is not None and width != 0:
                return False
        return True

    def side_entry(self, style, side):
        """The general code's grid entry for one side, or None for one that
        scores (0, 0, 0) and so wins no edge."""
        style_key, width_key, colour_key = self.keys[side]
        border_style = style[style_key]
        width = style[width_key]
        colour = self.get_color(style, colour_key)
        if width < 0:
            raise _Negative
        score = (1 if border_style == "hidden" else 0, width, self.ranks[border_style])
        if score == (0, 0, 0):
            return None
        return (score, (self.drawn_as.get(border_style, border_style), width, colour))

    def entries(self, style, across, down):
        """A box's (left, right, top, bottom) entries, for a span ``across``
        columns and ``down`` rows: kept in the style once read (its values do
        not change once read; sibling elements with the same rules share a
        style, rows and cells mostly do). Read in the general code's order;
        where it would not read a box's left and right (an empty row group)
        or its top and bottom, neither are they here, nor kept."""
        kept = style.__dict__.get("_rcdoc_collapse_sides")
        if kept is not None:
            return kept
        if (across or down) and self.unset(style):
            # Left uncomputed (computed later, they compute the same, silently:
            # no rule sets them). What computing them reads first is read: a
            # computed style's direction (for the logical properties), then
            # the colour that 'currentcolor' is.
            if type(style) is self.computed_style:
                style["direction"]
            style["color"]
            kept = (None, None, None, None)
            if across and down:
                style.__dict__["_rcdoc_collapse_sides"] = kept
            return kept
        side_entry = self.side_entry
        if across and down:
            kept = style.__dict__["_rcdoc_collapse_sides"] = (
                side_entry(style, "left"), side_entry(style, "right"),
                side_entry(style, "top"), side_entry(style, "bottom"))
            return kept
        left = side_entry(style, "left") if down else None
        right = side_entry(style, "right") if down else None
        if across:
            return left, right, side_entry(style, "top"), side_entry(style, "bottom")
        return left, right, None, None


def _resolve(sides, table, grid_width, grid_height):
    """The general code's resolution of a table's grid of borders, and the
    widths it sets from it; raises _Negative for a border width below zero."""
    entries = sides.entries
    # Borders are always stored left to right, top to bottom.
    vertical_borders = [[sides.weak] * (grid_width + 1) for _ in range(grid_height)]
    horizontal_borders = [[sides.weak] * grid_width for _ in range(grid_height + 1)]
    ltr = table.style["direction"] == "ltr"

    # Cells win over rows, rows over row groups, then columns, column groups
    # and the table: the general code's order of calls.
    _place_cells(entries, sides.strong, table, ltr, vertical_borders, horizontal_borders)

    grid_y = 0
    for row_group in table.children:
        for row in row_group.children:
            _place(entries, vertical_borders, horizontal_borders, ltr,
                   row, 0, grid_y, grid_width, 1)
            grid_y += 1

    grid_y = 0
    for row_group in table.children:
        rowspan = len(row_group.children)
        _place(entries, vertical_borders, horizontal_borders, ltr,
               row_group, 0, grid_y, grid_width, rowspan)
        grid_y += rowspan

    for column_group in table.column_groups:
        for column in column_group.children:
            _place(entries, vertical_borders, horizontal_borders, ltr,
                   column, column.grid_x, 0, 1, grid_height)
    for column_group in table.column_groups:
        _place(entries, vertical_borders, horizontal_borders, ltr,
               column_group, column_group.grid_x, 0, column_group.span, grid_height)

    _place(entries, vertical_borders, horizontal_borders, ltr,
           table, 0, 0, grid_width, grid_height)

    _set_widths(table, grid_width, grid_height, ltr, vertical_borders, horizontal_borders)
    return vertical_borders, horizontal_borders


def _place(entries, vertical_borders, horizontal_borders, ltr, box, x, y, w, h):
    """A box's sides on the grid edges it covers (``w`` columns from ``x``, ``h``
    rows from ``y``), each replacing an edge's border only with a higher score."""
    left, right, top, bottom = entries(box.style, w, h)
    # x and y are logical (possibly rtl), but borders are graphical.
    if ltr:
        left_x, right_x, xs = x, x + w, range(x, x + w)
    else:
        left_x, right_x, xs = -1 - w - x, -1 - x, range(-1 - x, -1 - x - w, -1)
    # Each edge sees its candidates in the general code's order (left
    # before right on the same edge, top before bottom).
    if left is not None or right is not None:
        for yy in range(y, y + h):
            row = vertical_borders[yy]
            if left is not None and row[left_x][0] < left[0]:
                row[left_x] = left
            if right is not None and row[right_x][0] < right[0]:
                row[right_x] = right
    if top is not None or bottom is not None:
        top_row, bottom_row = horizontal_borders[y], horizontal_borders[y + h]
        for xx in xs:
            if top is not None and top_row[xx][0] < top[0]:
                top_row[xx] = top
            if bottom is not None and bottom_row[xx][0] < bottom[0]:
                bottom_row[xx] = bottom


def _place_cells(entries, strong, table, ltr, vertical_borders, horizontal_borders):
    """The cells' sides on the grid, first of all, with the strong null borders
    inside each span. A one-by-one cell of a left-to-right table (nearly every
    cell) is placed here, without a call to _place."""
    grid_y = 0
    for row_group in table.children:
        for row in row_group.children:
            for cell in row.children:
                grid_x, colspan, rowspan = cell.grid_x, cell.colspan, cell.rowspan
                if colspan == 1 and rowspan == 1 and ltr:
                    left, right, top, bottom = entries(cell.style, 1, 1)
                    if left is not None or right is not None:
                        row_borders = vertical_borders[grid_y]
                        if left is not None and row_borders[grid_x][0] < left[0]:
                            row_borders[grid_x] = left
                        if right is not None and row_borders[grid_x + 1][0] < right[0]:
                            row_borders[grid_x + 1] = right
                    if top is not None:
                        top_row = horizontal_borders[grid_y]
                        if top_row[grid_x][0] < top[0]:
                            top_row[grid_x] = top
                    if bottom is not None:
                        bottom_row = horizontal_borders[grid_y + 1]
                        if bottom_row[grid_x][0] < bottom[0]:
                            bottom_row[grid_x] = bottom
                    continue
                # Force null border inside of a cell with rowspan or colspan.
                if ltr:
                    vertical_x_range = range(grid_x + 1, grid_x + colspan)
                    horizontal_x_range = range(grid_x, grid_x + colspan)
                else:
                    vertical_x_range = range(-2 - grid_x, -1 - grid_x - colspan, -1)
                    horizontal_x_range = range(-1 - grid_x, -1 - grid_x - colspan, -1)
                for xx in vertical_x_range:
                    for yy in range(grid_y, grid_y + rowspan):
                        vertical_borders[yy][xx] = strong
                for xx in horizontal_x_range:
                    for yy in range(grid_y + 1, grid_y + rowspan):
                        horizontal_borders[yy][xx] = strong
                _place(entries, vertical_borders, horizontal_borders, ltr,
                       cell, grid_x, grid_y, colspan, rowspan)
            grid_y += 1


def _set_widths(table, grid_width, grid_height, ltr, vertical_borders, horizontal_borders):
    """The boxes' border widths from the resolved grid, as the general code
    sets them (halves of the widest border along each side)."""

    def max_vertical_width(x, y1, y2):
        return max(grid_row[x][1][1] for grid_row in vertical_borders[y1:y2])

    def max_horizontal_width(x1, y, x2):
        return max(width for _, (_, width, _) in horizontal_borders[y][x1:x2])

    def remove_borders(box):
        # 0 / 2, as the general code sets it: a float.
        box.border_top_width = 0.0
        box.border_right_width = 0.0
        box.border_bottom_width = 0.0
        box.border_left_width = 0.0

    grid_y = 0
    for row_group in table.children:
        remove_borders(row_group)
        for row in row_group.children:
            remove_borders(row)
            vertical_row = vertical_borders[grid_y]
            top_row, bottom_row = horizontal_borders[grid_y], horizontal_borders[grid_y + 1]
            for cell in row.children:
                x, y = cell.grid_x, grid_y
                colspan, rowspan = cell.colspan, cell.rowspan
                if colspan == 1 and rowspan == 1 and ltr:
                    # One edge each way: the general code's max() of one.
                    cell.border_top_width = top_row[x][1][1] / 2
                    cell.border_bottom_width = bottom_row[x][1][1] / 2
                    cell.border_left_width = vertical_row[x][1][1] / 2
                    cell.border_right_width = vertical_row[x + 1][1][1] / 2
                    continue
                if ltr:
                    top = max_horizontal_width(x, y, x + colspan)
                    bottom = max_horizontal_width(x, y + rowspan, x + colspan)
                    left = max_vertical_width(x, y, y + rowspan)
                    right = max_vertical_width(x + colspan, y, y + rowspan)
                else:
                    top = max_horizontal_width(-colspan - x, y, -x or None)
                    bottom = max_horizontal_width(-colspan - x, y + rowspan, -x or None)
                    left = max_vertical_width(-1 - colspan - x, y, y + rowspan)
                    right = max_vertical_width(-1 - x, y, y + rowspan)
                cell.border_top_width = top / 2
                cell.border_bottom_width = bottom / 2
                cell.border_left_width = left / 2
                cell.border_right_width = right / 2
            grid_y += 1

    for column_group in table.column_groups:
        remove_borders(column_group)
        for column in column_group.children:
            remove_borders(column)

    table.border_top_width = max_horizontal_width(0, 0, grid_width) / 2
    table.border_bottom_width = max_horizontal_width(0, grid_height, grid_width) / 2
    # The table's left and right: its first row's (CSS 2.1 §17.6.2).
    table.border_left_width = max_vertical_width(0, 0, 1) / 2
    table.border_right_width = max_vertical_width(grid_width, 0, 1) / 2
