"""A table cell laid out once where weasyprint would lay it out again after a
discarded attempt; for every document rcdoc renders.

What it is for: a block kept in one piece (``break-inside: avoid``: the note's
tables with their titles and notes) that does not fit at the foot of a page is
laid out there, found too tall, dropped and laid out again on the next page.
In the example's note 29 of its 69 tables went through that, and the attempts
dropped took about a twelfth of its render, most of it in their cells: each
cell's lines measured by Pango and placed, to be thrown away.

How: weasyprint lays a cell out with ``layout.block.block_container_layout``
once its table has placed it (its column's x, its row's y, its width, heights
and edges set). A cell laid out whole, from its start, whose laid-out boxes
are lines of text and inline boxes alone (no block, image, inline block, float,
positioned or running box, footnote, or box whose content waits on a page
number), is kept: a copy of the result, and the cell's attributes as they were
given. When the same cell comes again with the same attributes but its y, the
copy of the copy moved by the difference in y is the result, where it fits
above the page's foot there as it did where it was made (so the test on each
line, which only asks whether it fits, goes the same way; whether the page is
empty only matters for a line that does not fit). The cell is left as the
general code leaves it (``copy_with_children`` gives it an empty set of removed
sides).

What it must not do: change a value beyond the last bit of a position. A
position moved is the old one plus the move, where the general code adds the
same offsets to the new y: the two may differ in the last bit of a float,
nowhere near the six decimals a PDF is written with (tests/test_fast_cells.py
compares the PDFs with weasyprint's own, byte for byte, on the example's parts
and on pages made for it). A Pango layout is shared by the copies: the one
drawn is the one measured (rcdoc.note.fast_layout keeps it; drawn a second
time, weasyprint makes it again, as it always does).
"""

from __future__ import annotations

from rcdoc.note import renderer_libs  # noqa: F401 - weasyprint, without ctypes' library search
import weasyprint  # noqa: E402 - after renderer_libs

__all__ = ["replacements"]

_VERSION = "70.0"
_KEY = "_rcdoc_cells"          # the memo's place on weasyprint's LayoutContext
_MISSING = object()
# Attribute values compared by value (a set and its frozen copy alike); others by identity.
_VALUES = {int: int, float: float, str: str, bool: bool, set: frozenset, frozenset: frozenset}


def replacements() -> list:
    """(owner, name, function) in the shape of rcdoc.note.fast_layout's; empty
    for another weasyprint than the one this was written for."""
    if weasyprint.__version__ != _VERSION:
        return []
    from weasyprint.formatting_structure import boxes
    from weasyprint.layout import block
    # table_layout imports block_container_layout from layout.block at each call.
    return [(block, "block_container_layout", _kept_cells(block.block_container_layout, boxes))]


def _kept_cells(general, boxes):
    """layout.block.block_container_layout with whole simple cells kept (see the
    module's docstring)."""
    cell_type = boxes.TableCellBox
    inline_types = (boxes.LineBox, boxes.TextBox, boxes.InlineBox)     # lines first

    def block_container_layout(context, box, bottom_space, skip_stack, page_is_empty,
                               absolute_boxes, fixed_boxes, adjoining_margins,
                               first_letter_style, first_line_style, discard, max_lines):
        if (type(box) is not cell_type or skip_stack is not None or adjoining_margins is not None
                or first_letter_style is not None or first_line_style is not None or discard
                or max_lines is not None or context.footnotes or context.excluded_shapes):
            return general(context, box, bottom_space, skip_stack, page_is_empty,
                           absolute_boxes, fixed_boxes, adjoining_margins, first_letter_style,
                           first_line_style, discard, max_lines)
        kept = context.__dict__.setdefault(_KEY, {})
        entry = kept.get(id(box))
        if entry is not None and entry[0] is box:
            again = _again(entry, box, context.page_bottom - bottom_space)
            if again is not None:
                return again
        given = _given(box)
        placed = len(absolute_boxes), len(fixed_boxes)
        result = general(context, box, bottom_space, skip_stack, page_is_empty,
                         absolute_boxes, fixed_boxes, adjoining_margins, first_letter_style,
                         first_line_style, discard, max_lines)
        new_box, resume_at, next_page, margins, through, lines = result
        if (new_box is not None and resume_at is None
                and placed == (len(absolute_boxes), len(fixed_boxes))
                and _plain(new_box, inline_types)
                and _bottom(new_box) <= context.page_bottom - bottom_space):
            kept[id(box)] = (box, given, _copy(new_box), dict(next_page), list(margins),
                             through, lines)
        return result

    block_container_layout.__doc__ = general.__doc__
    return block_container_layout


def _given(box) -> dict:
    """The cell's attributes as the general code is given them (the set of
    removed sides by value: the general code hands the set on to its result)."""
    given = dict(box.__dict__)
    given["remove_decoration_sides"] = frozenset(box.remove_decoration_sides)
    return given


def _same_but_y(given: dict, box) -> bool:
    """Whether ``box`` has the attributes in ``given``, its y aside: the same
    objects, or numbers, strings and sets of the same type and value."""
    now = box.__dict__
    if len(now) != len(given):
        return False
    for key, was in given.items():
        value = now.get(key, _MISSING)
        if value is was or key == "position_y":
            continue
        kind = _VALUES.get(type(was))
        if kind is None or kind != _VALUES.get(type(value)) or value != was:
            return False
    return True


def _again(entry, box, foot: float):
    """The kept result for ``box`` moved to its y now, or None where the cell
    is not given as it was or would not fit above ``foot`` there."""
    _, given, made, next_page, margins, through, lines = entry
    if not _same_but_y(given, box):
        return None
    dy = box.position_y - given["position_y"]
    if not _bottom(made) + dy <= foot:
        return None
    new_box = _copy(made)
    new_box.translate(0, dy)
    box.remove_decoration_sides = set()        # as copy_with_children leaves it
    return new_box, None, dict(next_page), list(margins), through, lines


def _plain(box, inline_types) -> bool:
    """Whether the laid-out cell holds lines of text and inline boxes alone, in
    flow, none waiting on a page number or holding a footnote, and lines that
    are drawn as they are (no ellipsis: weasyprint writes one into a line's
    layout as it draws it, where the copies share it)."""
    line_type = inline_types[0]
    for child in box.children:
        if type(child) is not line_type or (child.text_overflow, child.block_ellipsis) != (
                "clip", "none"):
            return False
        for one in child.descendants(placeholders=True):
            style = one.style
            if (type(one) not in inline_types or one.missing_link or one.footnote
                    or style["position"] != "static" or style["float"] != "none"):
                return False
    return not box.missing_link


def _bottom(box) -> float:
    """Where the laid-out cell's border box ends."""
    return box.position_y + box.margin_top + box.border_height()


def _copy(box):
    """A copy of the laid-out box and its descendants, with sets of removed
    sides of their own (the general code adds to a box's set in place)."""
    new = box.copy()
    new.remove_decoration_sides = set(box.remove_decoration_sides)
    children = getattr(box, "children", None)
    if children:
        new.children = [_copy(child) for child in children]
    return new
