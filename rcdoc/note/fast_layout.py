"""Shorter paths through some of weasyprint 70's hottest small functions, and
one shaping of each line of text instead of two, for every document rcdoc
renders; each gives the same values, so the same PDF.

What it is for: a stage part of the note has few boxes (some 200 per page),
but weasyprint walks each through general code written for every CSS
feature; three small functions called for every box took a fifth of a
stage's render (sampled: computed styles a tenth, used lengths from
percentages a twelfth, the flow tests a twenty-fifth):

- ``ComputedStyle.__missing__`` computes a property the first time it is
  read. For a property no rule sets (most of them, on most elements) the
  answer is the parent's value (inherited properties) or the initial value;
  the general code first runs the checks for logical properties, variables,
  math functions and the properties with rules of their own. Here such a
  property takes the short way unless it is one of those (the general code
  then runs as before); the logical property that may set a physical one is
  named once per property and direction, not at each read, and the initial
  values, none of which holds a math function, are not searched for one at each
  read. (These two: 343 M instructions fewer of 21.24 G in one render of the
  example's note, startup included, 1.6 %; cachegrind.)
- ``layout.percent.resolve_percentages`` sets a box's margins, paddings and
  sizes from their computed values, one small function call per property; here
  the same in one loop, the general ``percentage`` kept for anything but
  lengths, percentages and ``auto``, and the answers kept per style and
  containing block (most calls, for table cells and their lines, copy them).
- ``layout.float.avoid_collisions``, asked three times for each line, is
  arithmetic on the containing block and the line's margins where there is no
  float to avoid (``context.excluded_shapes`` empty): done so for lines, each
  sum in weasyprint's order. (253 M instructions fewer, 1.2 %, as above.)
- ``text.line_break.strut`` (a line's height and baseline) is kept per style.
- ``layout.page.set_page_type_computed_styles`` made styles for every page
  and its 16 margin boxes, each computed property by property again (the page
  type holds the page's index); here a page type onto which the same @page
  rules cascade the same values takes the styles of the first such page made
  once the first page's size is known (a viewport unit read before that is
  read against A4). (The example's note: the styles of 27 page types instead
  of 65, 486 styles instead of 1 170; 2.4 % fewer instructions in its render.)
- ``text.line_break.Layout.setup`` made a Pango context and a font
  description for every piece of text, and again to draw it; here both are
  kept per font configuration (a context per direction and language, a
  description per font), made as weasyprint makes them.
- A line's Pango layout is kept from its layout to its drawing. weasyprint
  drops it once the line is measured (``Layout.deactivate``) and makes and
  shapes it again to draw (``reactivate``): every line of text was shaped
  twice. Here the one measured is drawn, where it is what ``reactivate``
  would make again: the same style, no justification spacing, and no
  paragraph separator in the text (the drawing sets Pango's single-paragraph
  mode, which the kept layout then has from the start). Drawn, it is dropped
  as before. (For the example's note, 4 864 Pango layouts instead of 7 942;
  its render 2.39 s of CPU against 2.49 s, best of fourteen, interleaved.)

Installed with these modules of rcdoc.note (``_COMPANIONS``): fast_cascade
(selector matching kept per element signature), fast_flow (the flow tests
reading a box's float and position once), fast_paint (backgrounds, a line's
glyphs), fast_margins (running heads and feet), fast_tables (collapsed
borders), fast_cells (a cell laid out once where an attempt was dropped),
fast_collapse (adjoining margins), fast_stacking (stacking contexts without
copies) and fast_write (pydyf's numbers and streams).

What it must not do: change a value. ``install`` patches nothing for another
weasyprint than 70.0 (those functions may differ there) and says so by
returning False; tests/test_fast_layout.py compares each with weasyprint's own
on the example board's parts and on its own extremes, and the PDFs byte for
byte.
"""

from __future__ import annotations

import importlib

from rcdoc.note import renderer_libs  # noqa: F401 - weasyprint, without ctypes' library search
import weasyprint  # noqa: E402 - after renderer_libs

__all__ = ["install", "uninstall", "installed"]
_COMPANIONS = ("fast_cascade", "fast_flow", "fast_paint", "fast_margins", "fast_tables",
               "fast_cells", "fast_collapse", "fast_stacking", "fast_write")
# Measured (interleaved, best of 3): with the shared font configuration and the palette
# put in place, a stage part in a fifth less CPU time; used lengths and struts kept per
# style, a 40-stage note's front matter 12-17 % less, a stage part 3-5 %.

_VERSION = "70.0"
_SAVED: list = []      # (owner, name, weasyprint's own) while installed


def installed() -> bool:
    """Whether the short paths are in place."""
    return bool(_SAVED)


def install() -> bool:
    """Put the short paths in place (once per process); False where the
    weasyprint in use is not the one they were written for."""
    if _SAVED:
        return True
    if weasyprint.__version__ != _VERSION:
        return False
    for owner, name, new in _replacements():
        _SAVED.append((owner, name, owner.__dict__[name]))
        setattr(owner, name, new)
    return True


def uninstall() -> None:
    """weasyprint's own functions back (tests compare the two)."""
    while _SAVED:
        owner, name, old = _SAVED.pop()
        setattr(owner, name, old)


def _replacements() -> list:
    from weasyprint.css import ComputedStyle
    from weasyprint.formatting_structure import boxes
    from weasyprint.layout import (absolute, block, column, float as floats, grid, inline,
                                   page, percent, table)

    replaced = [(ComputedStyle, "__missing__", _computed_missing(ComputedStyle.__missing__))]
    from weasyprint.text import line_break
    replaced.append((line_break.Layout, "setup", _layout_setup(line_break)))
    replaced.extend((line_break.Layout, name, function)
                    for name, function in _kept_layouts(line_break).items())
    from weasyprint.css import computed_values, units
    kept_strut = _kept_strut(line_break.strut)
    for module in (line_break, computed_values, units, inline):
        if module.__dict__.get("strut") is line_break.strut:
            replaced.append((module, "strut", kept_strut))
    replaced.append((page, "set_page_type_computed_styles", _shared_page_styles(page)))
    for name in _COMPANIONS:        # modules of their own (see the module's docstring)
        replaced.extend(importlib.import_module(f"rcdoc.note.{name}").replacements())
    from weasyprint.layout import flex, replaced as replaced_boxes
    shorter = {"resolve_percentages": (percent, _resolve_percentages(percent)),
               "avoid_collisions": (floats, _avoid_collisions(floats, boxes))}
    # Layout modules imported these by name: each such name is replaced (flex.py and
    # replaced.py read them from their modules at each call).
    for module in (percent, absolute, block, column, flex, floats, grid, inline, page,
                   replaced_boxes, table):
        for name, (home, new) in shorter.items():
            if module.__dict__.get(name) is home.__dict__[name]:
                replaced.append((module, name, new))
    return replaced


def _shared_page_styles(page):
    """layout.page.set_page_type_computed_styles with the styles of an earlier
    page type handed out again where the same @page rules gave the same cascaded
    values to the page and each of its margin boxes.

    weasyprint's page type holds the page's index, so every page had styles of
    its own, computed property by property as its 16 margin boxes were made and
    resolved (1 170 styles for the example's 65 pages). Two page types that the
    same declarations cascade onto compute the same values (a computed style is
    made of its cascaded values, its parent's style, the root's and the base URL
    alone, as weasyprint shares element styles); what the layout writes into a
    page's styles (the propagated overflow, the page counters made standard) is
    the same on every page and gives the same style when written again."""
    general = page.set_page_type_computed_styles

    def set_page_type_computed_styles(page_type, html, style_for):
        # Until the first page's size is known, a viewport unit is read against A4
        # (css.units): the styles made before then are not handed out again.
        if style_for.initial_page_sizes["area"] is None:
            return general(page_type, html, style_for)
        style_for.add_page_declarations(page_type)
        mine = {pseudo: cascaded for (element, pseudo), cascaded
                in style_for.get_cascaded_styles().items() if element == page_type}
        seen = style_for.__dict__.setdefault("_rcdoc_page_styles", [])
        base_url = html.base_url
        for cascades, url, styles in seen:
            if url == base_url and cascades == mine:
                computed = style_for.get_computed_styles()
                for pseudo, style in styles.items():
                    computed[page_type, pseudo] = style
                return
        # As weasyprint's own: the page inherits from the root element, its margin
        # boxes from the page.
        style_for.set_computed_styles(page_type, root=html.etree_element,
                                      parent=html.etree_element, base_url=base_url)
        for pseudo in mine:
            if pseudo:
                style_for.set_computed_styles(page_type, pseudo_type=pseudo,
                                              root=html.etree_element, parent=page_type,
                                              base_url=base_url)
        computed = style_for.get_computed_styles()
        seen.append((mine, base_url, {pseudo: computed[page_type, pseudo]
                                      for pseudo in (None, *mine) if (page_type, pseudo) in computed}))

    set_page_type_computed_styles.__doc__ = general.__doc__
    return set_page_type_computed_styles


def _computed_missing(general):
    """ComputedStyle.__missing__ with the short way for a property whose value
    needs none of the general path's special cases."""
    from weasyprint.css import INHERITED, INITIAL_NOT_COMPUTED, Pending
    from weasyprint.css.computed_values import COMPUTER_FUNCTIONS, PHYSICAL_FUNCTIONS
    from weasyprint.css.functions import check_math
    from weasyprint.css.properties import INITIAL_VALUES

    # Properties with code of their own in the general path: the ones that set
    # or read another (display, float, position), page and the propagated text
    # decorations. (Custom properties, "__*", too.)
    own_code = frozenset({"display", "float", "position", "page",
                          *(k for k in INITIAL_VALUES if k.startswith("text_decoration_"))})
    no_weight = (0, 0, (0, 0, 0))
    logical_keys = {}       # (physical property, direction): its logical property
    # Initial values that are their computed values and hold no math function
    # (weasyprint's initial values are set once, on import).
    plain_initial = frozenset(key for key, value in INITIAL_VALUES.items()
                              if key not in INITIAL_NOT_COMPUTED and not check_math(value))

    def __missing__(self, key):
        if key in own_code or key[:2] == "__":
            return general(self, key)
        cascaded = self.cascaded
        if key in cascaded:
            value, weight = cascaded[key]
            if isinstance(value, Pending) or value in ("inherit", "initial"):
                return general(self, key)
        else:
            value, weight = None, no_weight
        logical = PHYSICAL_FUNCTIONS.get(key)
        if logical is not None:
            # A logical property (margin-inline-start...) that sets this one; its
            # name depends on the property and the direction alone, kept for both.
            direction = self["direction"]
            logical_key = logical_keys.get((key, direction))
            if logical_key is None:
                logical_key = logical_keys[key, direction] = logical(block="ttb",
                                                                     inline=direction)
            if logical_key in cascaded and cascaded[logical_key][1] >= weight:
                return general(self, key)
        if value is None:
            if key in INHERITED:
                parent = self.parent_style
                if parent is None:
                    return general(self, key)
                value = parent[key]         # the parent's computed value
                if check_math(value):
                    return general(self, key)
                self[key] = value
                return value
            value = INITIAL_VALUES[key]
            if key in plain_initial:
                self[key] = value
                return value
            if key not in INITIAL_NOT_COMPUTED:     # a math function
                return general(self, key)
        if check_math(value):
            return general(self, key)
        if key in COMPUTER_FUNCTIONS:
            value = COMPUTER_FUNCTIONS[key](self, key, value)
        self[key] = value
        return value

    __missing__.__doc__ = general.__doc__
    return __missing__


_USED = ("margin_left", "margin_right", "margin_top", "margin_bottom", "padding_left",
         "padding_right", "padding_top", "padding_bottom", "width", "min_width", "max_width",
         "height", "min_height", "max_height")
_BORDERS = ("border_top_width", "border_right_width", "border_bottom_width",
            "border_left_width")


def _resolve_percentages(percent):
    """layout.percent.resolve_percentages in one loop (same reads, same order),
    its results kept per style and containing block size: a style's values do
    not change once read, and table cells and their lines share styles and
    widths, so most calls copy a kept answer onto the box."""
    from weasyprint.formatting_structure import boxes

    Box, PageBox = boxes.Box, boxes.PageBox
    resolve = _one_by_one(percent)

    def resolve_percentages(box, containing_block):
        if isinstance(containing_block, Box):
            cb_width = containing_block.width
            cb_height = containing_block.height
        else:
            cb_width, cb_height = containing_block
        style = box.style
        kept = style.__dict__.get("_rcdoc_used")
        if kept is None:
            kept = style.__dict__["_rcdoc_used"] = {}
        key = (cb_width, cb_height, isinstance(box, PageBox))
        values = kept.get(key)
        if values is None:
            resolve(box, style, cb_width, cb_height, key[2])
            if style["box_sizing"] == "content-box":    # the sizes do not read the borders
                kept[key] = ({name: getattr(box, name) for name in _USED},
                             {name: style[name] for name in _BORDERS},
                             style["border_collapse"] == "collapse")
            return
        used_values, borders, collapse = values
        attributes = box.__dict__
        attributes.update(used_values)
        if not collapse:
            attributes.update(borders)
        else:       # a width resolved with the table's collapsed borders stays
            for name, value in borders.items():
                if not hasattr(box, name):
                    attributes[name] = value

    resolve_percentages.__doc__ = percent.resolve_percentages.__doc__
    return resolve_percentages


def _one_by_one(percent):
    """The used lengths of a box set one by one from its style, as weasyprint's
    resolve_percentages sets them."""
    from math import inf

    from weasyprint.css.functions import check_math

    percentage = percent.percentage
    adjust_box_sizing = percent.adjust_box_sizing
    minimums = ("min_width", "min_height")

    def used(box, style, name, refer_to):
        # resolve_one_percentage
        value = style[name]
        unit = getattr(value, "unit", None)
        if unit == "px":
            value = value.value
        elif unit == "%":
            value = refer_to * value.value / 100
        else:
            value = percentage(value, style, refer_to)
        if value == "auto" and name in minimums:
            value = 0
        setattr(box, name, value)

    def resolve(box, style, cb_width, cb_height, page_box):
        maybe_height = cb_height if page_box else cb_width
        used(box, style, "margin_left", cb_width)
        used(box, style, "margin_right", cb_width)
        used(box, style, "margin_top", maybe_height)
        used(box, style, "margin_bottom", maybe_height)
        used(box, style, "padding_left", cb_width)
        used(box, style, "padding_right", cb_width)
        used(box, style, "padding_top", maybe_height)
        used(box, style, "padding_bottom", maybe_height)
        used(box, style, "width", cb_width)
        used(box, style, "min_width", cb_width)
        used(box, style, "max_width", cb_width)
        if cb_height == "auto":
            height = style["height"]
            if height == "auto" or check_math(height) or height.unit == "%":
                box.height = "auto"
            else:
                assert height.unit.lower() == "px"
                box.height = height.value
            used(box, style, "min_height", 0)
            used(box, style, "max_height", inf)
        else:
            used(box, style, "height", cb_height)
            used(box, style, "min_height", cb_height)
            used(box, style, "max_height", cb_height)
        collapse = style["border_collapse"] == "collapse"
        for prop in ("border_top_width", "border_right_width",
                     "border_bottom_width", "border_left_width"):
            if not (collapse and hasattr(box, prop)):
                setattr(box, prop, style[prop])
        adjust_box_sizing(box, "width")
        adjust_box_sizing(box, "height")

    return resolve


def _avoid_collisions(floats, boxes):
    """layout.float.avoid_collisions for a line where there is no float to avoid
    (``context.excluded_shapes`` empty), any other case on weasyprint's path. Its
    loop finds no shape: the bounds are the containing block's content box moved
    in by the line's margins (``outer`` false, as inline.py asks), the line, not
    floated, at the left bound (right, right to left); the sizes it computes first
    (margin and border boxes) serve only shapes and floats."""
    general = floats.avoid_collisions
    LineBox = boxes.LineBox

    def avoid_collisions(context, box, containing_block, outer=True):
        if (outer or context.excluded_shapes or not isinstance(box, LineBox)
                or box.style["float"] != "none"):
            return general(context, box, containing_block, outer)
        margin_left, margin_top = box.margin_left, box.margin_top
        # containing_block.content_box_x(), its sums in their order
        max_left_bound = (containing_block.position_x + containing_block.margin_left
                          + containing_block.padding_left + containing_block.border_left_width)
        max_right_bound = max_left_bound + containing_block.width
        max_left_bound += margin_left
        max_right_bound -= box.margin_right
        rtl = containing_block.style["direction"] == "rtl"     # a line starts at the right
        position_x = (max_right_bound if rtl else max_left_bound) - margin_left
        position_y = box.position_y + margin_top        # box.border_box_y()
        return position_x, position_y - margin_top, max_right_bound - max_left_bound

    avoid_collisions.__doc__ = general.__doc__
    return avoid_collisions


# What ends a paragraph for Pango (pango_find_paragraph_boundary: LF, CR, U+2029),
# and what else may force a line break inside one (Unicode line breaking, UAX #14:
# VT, FF, NEL, U+2028). A text with none of them is one line in single-paragraph
# mode or not: only there is that mode set while the line is measured.
_BREAKS = ("\n", "\r", "\u2029", "\x0b", "\x0c", "\x85", "\u2028")


def _kept_layouts(line_break):
    """Layout.set_text, deactivate and reactivate such that a line's Pango
    layout, measured, is the one drawn (see the module's docstring)."""
    pango = line_break.pango
    Layout = line_break.Layout
    general_set_text, general_deactivate = Layout.set_text, Layout.deactivate
    general_reactivate = Layout.reactivate

    def set_text(self, text, justify=False):
        single = not any(mark in text for mark in _BREAKS)
        # The mode belongs to the Pango layout at hand: setup may have made another.
        if self.__dict__.get("_rcdoc_single") != (self.layout, single):
            pango.pango_layout_set_single_paragraph_mode(self.layout, single)
            self._rcdoc_single = (self.layout, single)
        general_set_text(self, text, justify)

    def deactivate(self):
        single = self.__dict__.get("_rcdoc_single")
        if (self.__dict__.pop("_rcdoc_drawn", False) or single is None
                or single != (self.__dict__.get("layout"), True)):
            self.__dict__.pop("_rcdoc_single", None)
            self.__dict__.pop("_rcdoc_kept", None)
            general_deactivate(self)
        else:               # measured: kept for the drawing
            self._rcdoc_kept = True

    def reactivate(self, style):
        kept = self.__dict__.pop("_rcdoc_kept", False)
        if not (kept and style is self.style and not self.justification_spacing):
            if kept:
                general_deactivate(self)
            self.__dict__.pop("_rcdoc_single", None)
            general_reactivate(self, style)
        self._rcdoc_drawn = True        # the deactivate that follows the drawing drops it

    for new, general in ((set_text, general_set_text), (deactivate, general_deactivate),
                         (reactivate, general_reactivate)):
        new.__doc__ = general.__doc__
    return {"set_text": set_text, "deactivate": deactivate, "reactivate": reactivate}


def _kept_strut(general):
    """text.line_break.strut kept per style: weasyprint keeps its answer per font
    configuration under a key made of fourteen of the style's values turned into
    a string, made anew at each of a line's many calls; a style's values do not
    change once read, so its answer is the same at every call."""

    def strut(style):
        kept = style.__dict__.get("_rcdoc_strut")
        if kept is None:
            kept = style.__dict__["_rcdoc_strut"] = general(style)
        return kept

    strut.__doc__ = general.__doc__
    return strut


def _kept_contexts(line_break):
    """A function giving a style's Pango context and language, made once per font
    configuration, direction and language (as Layout.setup makes them)."""
    pango, ffi, gobject = line_break.pango, line_break.ffi, line_break.gobject
    LST_TO_ISO, PANGO_DIRECTION = line_break.LST_TO_ISO, line_break.PANGO_DIRECTION
    unicode_to_char_p = line_break.unicode_to_char_p

    def context_of(style, contexts):
        if style["font_language_override"] != "normal":
            lang = LST_TO_ISO.get(style["font_language_override"].lower(),
                                  style["font_language_override"])
        elif style["lang"]:
            lang = style["lang"]
        else:
            lang = None
        direction = style["direction"]
        kept = contexts.get((direction, lang))
        if kept is None:
            pango_context = ffi.gc(
                pango.pango_font_map_create_context(style.font_config.font_map),
                gobject.g_object_unref)
            pango.pango_context_set_round_glyph_positions(pango_context, False)
            pango.pango_context_set_base_dir(pango_context, PANGO_DIRECTION[direction])
            if lang:
                lang_p, lang_text = unicode_to_char_p(lang)
            if lang and lang_text:
                language = pango.pango_language_from_string(lang_p)
                pango.pango_context_set_language(pango_context, language)
            else:
                language = pango.pango_language_get_default()
            kept = contexts[(direction, lang)] = (pango_context, language)
        return kept

    return context_of


def _layout_setup(line_break):
    """text.line_break.Layout.setup with the Pango context and font description
    kept per font configuration: weasyprint made both anew for every piece of text
    (and again to draw it). A context is kept per direction and language and never
    changed once made (Pango layouts read it, weasyprint sets it up only here); a
    layout takes a copy of the description it is given."""
    pango, ffi, gobject = line_break.pango, line_break.ffi, line_break.gobject
    font_features, get_font_description = line_break.font_features, line_break.get_font_description
    units = line_break.FROM_UNITS
    context_of = _kept_contexts(line_break)

    def setup(self, style):
        self.style = style
        self.first_line_direction = 0
        font_config = style.font_config
        kept = font_config.__dict__.get("_rcdoc_pango")
        if kept is None:
            kept = font_config.__dict__["_rcdoc_pango"] = ({}, {})
        contexts, descriptions = kept
        pango_context, self.language = context_of(style, contexts)

        assert not isinstance(style["font_family"], str), "font_family should be a list"
        key = (tuple(style["font_family"]), style["font_style"], style["font_stretch"],
               style["font_weight"], style["font_size"], style["font_variant_caps"],
               style["font_variation_settings"])
        try:
            font_description = descriptions.get(key)
        except TypeError:                   # a value that cannot be a key: made each time
            key, font_description = None, None
        if font_description is None:
            font_description = get_font_description(style)
            if key is not None:
                descriptions[key] = font_description
        self.layout = ffi.gc(pango.pango_layout_new(pango_context), gobject.g_object_unref)
        pango.pango_layout_set_auto_dir(self.layout, False)
        pango.pango_layout_set_font_description(self.layout, font_description)

        if style["text_decoration_line"] != "none":
            metrics = ffi.gc(
                pango.pango_context_get_metrics(pango_context, font_description,
                                                self.language),
                pango.pango_font_metrics_unref)
            self.ascent = units * pango.pango_font_metrics_get_ascent(metrics)
            self.underline_position = units * (
                pango.pango_font_metrics_get_underline_position(metrics))
            self.strikethrough_position = units * (
                pango.pango_font_metrics_get_strikethrough_position(metrics))
            self.underline_thickness = units * (
                pango.pango_font_metrics_get_underline_thickness(metrics))
            self.strikethrough_thickness = units * (
                pango.pango_font_metrics_get_strikethrough_thickness(metrics))
        else:
            self.ascent = None
            self.underline_position = None
            self.strikethrough_position = None

        features = font_features(
            style["font_kerning"], style["font_variant_ligatures"],
            style["font_variant_position"], style["font_variant_caps"],
            style["font_variant_numeric"], style["font_variant_alternates"],
            style["font_variant_east_asian"], style["font_feature_settings"])
        if features:
            features = ",".join(f"{key} {value}" for key, value in features.items()).encode()
            attr = font_config.font_features.setdefault(
                features, pango.pango_attr_font_features_new(features))
            attr_list = pango.pango_attr_list_new()
            pango.pango_attr_list_insert(attr_list, attr)
            pango.pango_layout_set_attributes(self.layout, attr_list)

    setup.__doc__ = line_break.Layout.setup.__doc__
    return setup
