"""Shorter paths through two of weasyprint 70's painting functions, giving the
same PDF: the backgrounds of boxes that paint none, and the text operators of a
line of text.

What it is for: once a note part is laid out, weasyprint visits every box to
place its backgrounds (``layout.background.layout_box_backgrounds``, some
11 000 boxes for the example board's note, nine in ten with nothing to paint)
and writes each line's glyphs with a Python loop over cffi structures
(``draw.text.draw_first_line``, some 70 000 glyphs):

- A box whose style paints nothing (no background colour or image, no shadow,
  no border or mask image, square corners) gets what the general code gives it
  (its four corner radii ``(0, 0)`` and ``background = None``), decided once
  per style and kept in the style (a computed style's values do not change
  once read). Where none of those properties is cascaded (nor a logical
  corner radius) and none computed yet, their values are the initial ones,
  which paint nothing, and they are not computed here at all (most styles;
  the drawing reads two of them, the border and mask image sources, for
  itself). Its children are visited in the same order. The page box, the
  calls for the canvas background (``style=``, ``layout_children=False``) and
  any box that paints go the general way.
- A line's glyphs are read from Pango's glyph array in one piece (the
  ``PangoGlyphInfo`` structures unpacked with ``struct``, not field by field
  through cffi), and a glyph's operators (its number and the kerning after it)
  kept per font, size, glyph and advance: a glyph's width and text, once a
  font has recorded them, are never written over (but a missing character's
  glyph number, never kept). The same operators are written, in the same
  calls to the stream, and the same widths and ToUnicode text recorded in the
  fonts, in the same order (the fonts' subsets and ToUnicode maps are made
  from them).

  Drawn the general way: a line with an ellipsis, a line with a font drawn
  from images or a bitmap font (emoji, colour and bitmap fonts: their glyphs
  are drawn as images or with other operators), and a line using, after its
  first run, a font the document has not used yet (weasyprint makes it while
  drawing; making it here, before drawing the runs before it, would change
  the order of the log records).

Measured on the example board's note (greenhouse-controller; CPU time, one
process, interleaved, best of four or five, two runs): placing the backgrounds
0.09-0.11 s against 0.04-0.05 s, writing the lines' text 0.150 s against
0.071 s; the whole render 2.245 s against 2.131 s.

What it must not do: change a byte. ``replacements`` gives nothing for another
weasyprint than 70.0; tests/test_fast_paint.py compares the PDFs with
weasyprint's own, on the example board's note and on hostile HTML.
"""

from __future__ import annotations

import struct
from typing import Any, NamedTuple

from rcdoc.note import renderer_libs  # noqa: F401 - weasyprint, without ctypes' library search
import weasyprint  # noqa: E402 - after renderer_libs

__all__ = ["replacements"]

_VERSION = "70.0"
_CORNERS = ("border_top_left_radius", "border_top_right_radius",
            "border_bottom_right_radius", "border_bottom_left_radius")


def replacements() -> list:
    """(owner, name, function) for each short path, in the shape of
    rcdoc.note.fast_layout's; empty for another weasyprint than the one they
    were written for."""
    if weasyprint.__version__ != _VERSION:
        return []
    from weasyprint.draw import text
    from weasyprint.layout import background

    replaced = []
    backgrounds = _box_backgrounds(background)
    # Only background.py holds it (its own recursion and layout_backgrounds read
    # the module's name); the test looks for others in every weasyprint module.
    replaced.append((background, "layout_box_backgrounds", backgrounds))
    first_line = _first_line(text)
    if first_line is not None:
        # draw_text reads the module's name; svg/text.py imports it at each call.
        replaced.append((text, "draw_first_line", first_line))
    return replaced


def _initial_keys(css) -> tuple:
    """The properties _paints_nothing reads, and the logical properties the general
    code reads a corner's radius from (for either direction)."""
    from weasyprint.css.computed_values import PHYSICAL_FUNCTIONS

    logical = {PHYSICAL_FUNCTIONS[name](block="ttb", inline=direction)
               for name in _CORNERS for direction in ("ltr", "rtl")}
    return (*_CORNERS, "border_image_source", "mask_border_source", "background_image",
            "background_color", "box_shadow", *sorted(logical))


def _all_initial(style, css, keys) -> bool:
    """Whether the style's values of ``keys`` are the initial ones, without
    computing them: not computed yet, and not cascaded (a ComputedStyle) or an
    anonymous box's (none is inherited: an AnonymousStyle's are initial).
    (weasyprint writes values into a style itself only into a copy or before
    layout, the table wrapper's: those are in the style, so read. Visibility
    is not asked: hidden or not, the initial values paint nothing.)"""
    kind = type(style)
    if kind is css.ComputedStyle:
        cascaded = style.cascaded
        return not any(key in style or key in cascaded for key in keys)
    if kind is css.AnonymousStyle:
        return not any(key in style for key in keys)
    return False


def _paints_nothing(style, get_color) -> bool:
    """Whether layout_box_backgrounds, for a box of this style (not the page),
    sets nothing but square corners and ``background = None``: the general
    code's tests, in its order, on the style alone. Anything it would fetch
    (an image url, even one that fails to load) counts as painting."""
    for name in _CORNERS:
        rx, ry = style[name]
        if (0, "px") not in (rx, ry):
            return False            # a radius: resolved against the box's size
    if style["border_image_source"][0] != "none" or style["mask_border_source"][0] != "none":
        return False
    if style["visibility"] != "hidden":
        if any(type_ == "url" or value for type_, value in style["background_image"]):
            return False
        if get_color(style, "background_color").alpha != 0:
            return False
    return not style["box_shadow"]


def _box_backgrounds(background):
    """layout.background.layout_box_backgrounds with the short path for a box
    whose style paints nothing."""
    from weasyprint import css
    from weasyprint.draw.color import get_color
    from weasyprint.formatting_structure.boxes import Box

    general = background.layout_box_backgrounds
    keys = _initial_keys(css)
    plain = {name: (0, 0) for name in _CORNERS}
    plain["background"] = None

    def layout_box_backgrounds(page, box, get_image_from_uri, layout_children=True,
                               style=None):
        # Not a Box (an AbsolutePlaceholder passes attributes on to its box): the
        # general way, as are the page and the canvas background's calls.
        if style is not None or not layout_children or box is page \
                or not isinstance(box, Box):
            return general(page, box, get_image_from_uri, layout_children, style)
        box_style = box.style
        nothing = box_style.__dict__.get("_rcdoc_paints_nothing")
        if nothing is None:
            nothing = box_style.__dict__["_rcdoc_paints_nothing"] = (
                _all_initial(box_style, css, keys) or _paints_nothing(box_style, get_color))
        if not nothing:
            return general(page, box, get_image_from_uri, layout_children, style)
        box.__dict__.update(plain)  # background: set last by the general code, read by no child
        for child in box.all_children():
            # Through the module's name, as the general code recurses.
            background.layout_box_backgrounds(page, child, get_image_from_uri)

    layout_box_backgrounds.__doc__ = general.__doc__
    return layout_box_backgrounds


# PangoGlyphInfo: glyph (guint32), geometry (width, x_offset, y_offset: gint32),
# attr (a guint of bit fields, not read).
_GLYPH_INFO = struct.Struct("=8sii4x")      # glyph and width as one key
_UNPACK_GLYPHS = _GLYPH_INFO.iter_unpack
_GLYPH_AND_WIDTH = struct.Struct("=Ii").unpack
_LAST = 2 ** 16 - 1             # the greatest glyph number for a missing character


class _Needs(NamedTuple):
    """What writing a run's glyphs reads from weasyprint's draw.text module and
    Pango, read once by _first_line; a tuple, unpacked into locals once a run."""
    buffer: Any         # ffi.buffer
    pango: Any
    empty: int          # PANGO_GLYPH_EMPTY
    unknown: int        # PANGO_GLYPH_UNKNOWN_FLAG
    from_units: float
    logger: Any


def _first_line(text):
    """draw.text.draw_first_line with each run's glyphs unpacked at once, or
    None where Pango's glyph structure is not the one unpacked here."""
    from weasyprint.pdf.stream import Stream
    from weasyprint.text.fonts import get_pango_font_key

    general = text.draw_first_line
    ffi, pango = text.ffi, text.pango
    if (ffi.sizeof("PangoGlyphInfo") != _GLYPH_INFO.size
            or ffi.offsetof("PangoGlyphInfo", "geometry") != 4
            or ffi.sizeof("PangoGlyph") != 4 or ffi.sizeof("PangoGlyphUnit") != 4):
        return None
    needs = _Needs(ffi.buffer, pango, pango.PANGO_GLYPH_EMPTY,
                   pango.PANGO_GLYPH_UNKNOWN_FLAG, text.FROM_UNITS, text.LOGGER)
    assert needs.empty + 1 == needs.unknown     # below EMPTY: neither (one test per glyph)
    null = ffi.NULL
    old_pango = pango.pango_version() < 14802
    add_font = Stream.add_font

    def draw_first_line(stream, textbox, text_overflow, block_ellipsis, matrix):
        if (text_overflow == "ellipsis" or block_ellipsis != "none"
                or type(stream).add_font is not add_font):
            return general(stream, textbox, text_overflow, block_ellipsis, matrix)
        if not textbox.text.strip():
            return []
        style = textbox.style
        if style["font_size"] < 1e-6:
            return []
        layout = textbox.pango_layout
        pango.pango_layout_set_single_paragraph_mode(layout.layout, True)
        first_line, _ = layout.get_first_line()
        # The runs and their fonts, before anything is written: where a line is
        # drawn the general way, nothing has been done twice (setting the mode and
        # reading the first line again change nothing).
        runs = _line_runs(stream, first_line, style, null, old_pango, get_pango_font_key)
        if runs is None:
            return general(stream, textbox, text_overflow, block_ellipsis, matrix)
        _write_runs(stream, runs, layout, matrix, needs)
        return []

    draw_first_line.__doc__ = general.__doc__
    return draw_first_line


def _line_runs(stream, first_line, style, null, old_pango, get_pango_font_key):
    """A line's runs, as (glyph item, Pango font, font, font size), the fonts
    given where they change (None and 0 in a run drawn in the one before's); or
    None where the line is to be drawn the general way (a font drawn from
    images or a bitmap font, or, after the first run, a font the document has
    not used yet). The first run's font is added to the stream, the first
    thing the general code does too."""
    fonts = stream._fonts
    runs = []
    previous = None
    run = first_line.runs[0]
    while run != null:
        glyph_item = run.data
        run = run.next
        pango_font = glyph_item.item.analysis.font
        if pango_font == previous:
            runs.append((glyph_item, None, None, 0))
            continue
        previous = pango_font
        if runs:
            key, _, font_size = get_pango_font_key(pango_font)
            font = fonts.get(key)
            if font is None:        # made here, its log records would come early
                return None
        else:
            font, font_size = stream.add_font(pango_font)
        if font.bitmap or font.png or font.svg or font.colr:
            return None
        if old_pango:
            font_size = style["font_size"]
        runs.append((glyph_item, pango_font, font, font_size))
    return runs


def _write_runs(stream, runs, layout, matrix, needs):
    """Writes a line's runs (from _line_runs) to the stream: its text matrix,
    each font and size where it changes, and the glyphs' text operators, shown
    in the general code's calls."""
    stream.set_text_matrix(*matrix.values)
    string = ""
    for glyph_item, new_pango_font, new_font, new_size in runs:
        if new_pango_font is not None:
            # The operators kept for this font at this size (see _write_run).
            kept = new_font.__dict__.get("_rcdoc_operators")
            if kept is None:
                kept = new_font.__dict__["_rcdoc_operators"] = {}
            operators = kept.get(new_size)
            if operators is None:
                operators = kept[new_size] = {}
            face = (new_pango_font, new_font, new_size, new_font.widths,
                    new_font.to_unicode, operators)
            if string:
                stream.show_text(string)
            string = ""
            stream.set_font_size(new_font.hash, new_size)
        string = _write_run(stream, glyph_item, string, face, layout, needs)
    stream.show_text(string)


def _write_run(stream, glyph_item, string, face, layout, needs):
    """Writes one run's glyphs, in ``face`` (Pango font, font, size, the font's
    widths and ToUnicode text, the operators kept): returns the text operators
    still to show, ``string`` (what came before, in the same font) followed by
    the run's glyph lists; what comes before a raised or lowered glyph is shown
    with it."""
    pango_font, font, font_size, widths, to_unicode, operators = face
    buffer, pango, EMPTY, UNKNOWN, FROM_UNITS, LOGGER = needs
    known = operators.get
    glyph_and_width_of, LAST = _GLYPH_AND_WIDTH, _LAST     # locals in the loop
    glyph_string = glyph_item.glyphs
    num_glyphs = glyph_string.num_glyphs
    parts = [string, "<"]
    append = parts.append
    glyphs = _UNPACK_GLYPHS(buffer(glyph_string.glyphs, num_glyphs * _GLYPH_INFO.size)) \
        if num_glyphs > 0 else ()
    for i, (glyph_and_width, x_offset, y_offset) in enumerate(glyphs):
        if not (x_offset or y_offset):
            # Drawn before by this font at this size, with this width.
            written = known(glyph_and_width)
            if written is not None:
                append(written)
                continue
        glyph_id, width = glyph_and_width_of(glyph_and_width)
        # Its width and text are the font's for good once drawn: its operators
        # are kept. Not for a missing character (the general code logs each,
        # and writes over the width of its glyph number, one past the font's
        # glyphs or 65535 at most), nor with offsets.
        keep = glyph_id < LAST and not (x_offset or y_offset)
        if glyph_id >= EMPTY:
            # Display zero-width empty glyph.
            if glyph_id == EMPTY:
                append(f">{-width / font_size}<")
                continue
            # Display .notdef and log warning for missing glyphs.
            if glyph_id & UNKNOWN:
                glyph_id = _notdef(font, widths, glyph_id - UNKNOWN, width, font_size,
                                   FROM_UNITS, LOGGER)
        if glyph_id not in to_unicode:
            to_unicode[glyph_id] = _glyph_text(glyph_item, i, layout)
        offset = x_offset / font_size
        if y_offset:
            _show_raised(stream, parts, glyph_id, offset, y_offset)
            written = ""
        else:
            written = f">{-offset}<{glyph_id:04x}" if offset else f"{glyph_id:04x}"

        # Get glyph logical widths.
        logical_width = widths.get(glyph_id)
        if logical_width is None:
            pango.pango_font_get_glyph_extents(
                pango_font, glyph_id, stream.ink_rect, stream.logical_rect)
            logical_width = widths[glyph_id] = round(
                stream.logical_rect.width * 1000 * FROM_UNITS / font_size)

        # Set kerning, word spacing, letter spacing.
        kerning = logical_width + offset - width * 1000 * FROM_UNITS / font_size
        if kerning:
            written += f">{int(kerning)}<"
        append(written)
        # (The x advance the general code adds up is read by emoji alone.)
        if keep:
            operators[glyph_and_width] = written
    return _closed(parts)


def _notdef(font, widths, codepoint, width, font_size, from_units, logger):
    """The glyph number a character no font has is drawn with (.notdef), as the
    general code gives it: the character logged, the glyph's width recorded in
    the font's ``widths`` (and as glyph 0's if that has none)."""
    logger.warning(
        '.notdef glyph rendered for Unicode string unsupported by '
        'fonts: "%s" (U+%04X)', chr(codepoint), codepoint)
    glyph_id = font.get_unused_glyph_id(codepoint)
    widths[glyph_id] = round(width * 1000 * from_units / font_size)
    if 0 not in widths:
        widths[0] = widths[glyph_id]
    return glyph_id


def _glyph_text(glyph_item, i, layout):
    """The text the run's glyph ``i`` draws, for the font's ToUnicode map, the
    first time the font draws the glyph: the bytes the general code slices
    from the layout's UTF-8 text, from the glyph's cluster to the next one
    (the one before, right to left) or the run's end."""
    item = glyph_item.item
    glyph_string = glyph_item.glyphs
    clusters = glyph_string.log_clusters
    t1 = clusters[i]
    if item.analysis.level % 2:  # rtl
        t2 = item.length if i == 0 else clusters[i - 1]
    else:
        t2 = item.length if i == glyph_string.num_glyphs - 1 else clusters[i + 1]
    offset = item.offset
    return layout.text.encode()[offset + t1:offset + t2].decode()


def _show_raised(stream, parts, glyph_id, offset, y_offset):
    """Shows a raised or lowered glyph (a mark) with its own text operators, as
    the general code writes them, after showing the glyph lists before it
    (``parts``, left holding a new, empty list)."""
    rise = y_offset / 1000
    string = _closed(parts)
    if string:
        stream.show_text(string)
    stream.set_text_rise(-rise)
    string = ""
    if offset:
        string = f"{-offset}"
    string += f"<{glyph_id:04x}>"
    stream.show_text(string)
    stream.set_text_rise(0)
    parts[:] = ["<"]


def _closed(parts):
    """``parts`` (operators, then glyph lists, the last one open) as one string,
    the last list closed, or removed if empty."""
    string = "".join(parts)
    if string[-1] == "<":
        return string[:-1]
    return string + ">"
