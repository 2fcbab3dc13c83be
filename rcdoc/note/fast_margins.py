"""The margin boxes of a page (running heads and feet) laid out once for all
the pages that show the same ones, for weasyprint 70; the same boxes, so the
same PDF.

What it is for: weasyprint makes the margin boxes of every page anew
(``layout.page.make_margin_boxes``): for each of the sixteen places a style
(each page has a page type, and so styles, of its own), its content, its width
from the min- and max-content widths of the boxes beside it, and the layout of
its text. Most pages of a part of the note show the same three texts as the
page before; that took 7.5 % of the note's render.

Here each page's boxes are still built as weasyprint builds them (the content
of each margin box: ``string()``, counters, quotes, running elements), but

- a margin style is replaced by an earlier page's (the *kept* one, its values
  computed already) where the two must have the same values: the same
  declarations cascaded onto the margin box and onto the page, whose style it
  inherits (compared by value, in any order; their weights too where a logical
  property such as margin-inline-start competes with its physical one), the
  same root element's style and base URL, and the two page styles' values the
  same wherever either has one (a page style is read while its page is made,
  the first page's before the size of the viewport is known).
- where the built boxes are the same as on an earlier page (the same classes,
  kept styles, texts and used lengths, on a page of the same margins and
  size), a copy of that page's laid-out boxes is handed out instead of laying
  them out again (``Box.deepcopy``, as weasyprint copies boxes). Each copied
  line of text has a Pango layout of its own, made to draw it as weasyprint
  makes it for a measured line: drawing may change a line's layout (a block
  ellipsis is written into its text). Only margin boxes holding lines of text
  are copied; for any other content (an image, a leader, a running element)
  the page's margin boxes are weasyprint's own function's, and for a style
  with a leader (which changes its anonymous style while built) too.

Kept styles and boxes belong to the document's layout context: nothing is
kept from one document to the next. For the example board's note (65 pages,
15 parts), 29 pages take copies: not a part's first page (its ``@page :first``
rules), nor its second (the first laid out with the styles the pages after it
share), nor the page numbers' ten (their texts differ). The render's
instructions: 1.6 % fewer (cachegrind).

What it must not do: change a value. ``replacements`` gives nothing for
another weasyprint than 70.0; tests/test_fast_margins.py compares the margin
boxes and the PDFs with weasyprint's own, for the note's parts and for margin
boxes that change from page to page.
"""

from __future__ import annotations

import collections
import copy

from rcdoc.note import renderer_libs  # noqa: F401 - weasyprint, without ctypes' library search
import weasyprint  # noqa: E402 - after renderer_libs

__all__ = ["replacements", "counts"]

_VERSION = "70.0"
_KEPT = "_rcdoc_margins"      # the layout context's attribute holding what is kept

# Pages whose laid-out margin boxes were copied ("reused"), laid out here and kept
# ("laid_out"), or left to weasyprint's own function ("general"); for the tests.
counts: collections.Counter = collections.Counter()


def replacements() -> list:
    """(owner, name, function) for every module namespace that holds
    weasyprint's make_margin_boxes; nothing for another weasyprint."""
    if weasyprint.__version__ != _VERSION:
        return []
    from weasyprint import layout
    from weasyprint.layout import page
    current = page.make_margin_boxes
    own = getattr(current, "_rcdoc_own", current)
    new = _make_margin_boxes(page, own)
    # layout/__init__.py imported the function by name: each name is replaced.
    return [(module, "make_margin_boxes", new) for module in (page, layout)
            if module.__dict__.get("make_margin_boxes") is current]


class _Uncacheable(Exception):
    """A built margin box the copies may not stand for."""


class _Kept:
    """One document's kept margin styles and laid-out margin boxes."""

    def __init__(self):
        self.page_styles: dict = {}     # page style key -> kept page styles
        self.styles: dict = {}          # margin style key -> kept margin style
        self.equal: dict = {}           # id(page style) -> (page style, kept one)
        self.boxes: dict = {}           # built boxes' key -> laid-out boxes
        self.frozen: dict = {}          # id(declared value) -> (value, its key)
        self.chosen: dict = {}          # id(margin style) -> (margin style, kept one)
        self.logical = _logical_names()

    def cascaded_key(self, style) -> tuple:
        """The style's cascaded declarations, compared by value, in no order
        (a style computes each property from its own). Their weights
        (origin, specificity) choose between a logical property and its physical
        one (margin-inline-start and margin-left): kept where the style has one."""
        frozen = self.frozen
        items = []
        logical = False
        for name, (value, _) in style.cascaded.items():
            if type(value) is str:
                items.append((name, value))
            else:
                known = frozen.get(id(value))
                if known is None or known[0] is not value:
                    known = frozen[id(value)] = (value, _frozen(value))
                items.append((name, known[1]))
            logical = logical or name in self.logical
        if logical:
            items = [(name, key, _frozen(style.cascaded[name][1])) for name, key in items]
        # In any order: the rules that set them may come in another order.
        items.sort()
        return tuple(items)


def _frozen(value):
    """A key equal for values that compute the same: strings, numbers, tuples
    and lists of them by value (with their types), anything else by identity
    (tokens: the same declaration's)."""
    kind = type(value)
    if kind is str:
        return value
    if kind is int or kind is bool or value is None:
        return (kind, value)
    if kind is float:
        return (kind, repr(value))          # -0.0 is not 0.0 once written
    if isinstance(value, (tuple, list)):
        return (kind, *(_frozen(item) for item in value))
    return (id, id(value))                  # alive: its style is kept, or read now


def _logical_names() -> frozenset:
    """The logical properties (margin-inline-start...), as ComputedStyle names
    the one that may set a physical property."""
    from weasyprint.css.computed_values import PHYSICAL_FUNCTIONS
    return frozenset(function(block="ttb", inline=direction)
                     for function in PHYSICAL_FUNCTIONS.values()
                     for direction in ("ltr", "rtl"))


def _common_key(style) -> tuple:
    return (id(style.root_style), style.base_url, id(style.font_config),
            id(style.initial_page_sizes), style.pseudo_type)


def _same_values(a, b) -> bool:
    """Whether two page styles of the same declarations have the same value for
    every property either has computed (the other's computed now, as it would
    be when read)."""
    for key in set(a) | set(b):
        x, y = a[key], b[key]
        if type(x) is not type(y) or x != y:
            return False
    return True


def _has_leader(style) -> bool:
    # leader() sets white-space on the margin style's anonymous style itself
    # (weasyprint 70, build.compute_content_list), which the next page's text
    # would then have.
    content = style["content"]
    return not isinstance(content, str) and any(kind == "leader()" for kind, _ in content)


def _kept_page_style(kept: _Kept, style):
    """The kept page style with ``style``'s values (``style`` itself if none)."""
    known = kept.equal.get(id(style))
    if known is not None and known[0] is style:
        return known[1]
    key = (kept.cascaded_key(style), id(style.parent_style), _common_key(style))
    candidates = kept.page_styles.setdefault(key, [])
    for candidate in candidates:
        if candidate is style or _same_values(style, candidate):
            break
    else:
        candidates.append(style)
        candidate = style
    kept.equal[id(style)] = (style, candidate)
    return candidate


def _margin_styles(kept: _Kept, context, page, keywords):
    """Each margin box's style, a kept one where it has the same values; None
    where the page's margin boxes are left to weasyprint."""
    from weasyprint.css import ComputedStyle

    page_style = page.style
    # The styles as set for the page type, read from weasyprint's StyleFor: asked
    # for by calling it, each would compute its display (StyleFor.__call__); only
    # the ones kept are asked for so, as make_box asks.
    computed = getattr(context.style_for, "_computed_styles", None)
    if type(page_style) is not ComputedStyle or computed is None:
        return None
    kept_page = _kept_page_style(kept, page_style)
    out = {}
    page_type = page.page_type
    for keyword in keywords:
        style = computed.get((page_type, keyword))
        if style is None:
            out[keyword] = None
            continue
        if type(style) is not ComputedStyle or style.parent_style is not page_style:
            return None
        # A style seen on an earlier page (page types that cascade the same values
        # may share their styles: rcdoc.note.fast_layout) has its kept one.
        known = kept.chosen.get(id(style))
        if known is not None and known[0] is style:
            out[keyword] = known[1]
            continue
        key = (keyword, kept.cascaded_key(style), id(kept_page), _common_key(style))
        kept_style = kept.styles.get(key)
        if kept_style is None:
            style = context.style_for(page_type, keyword)      # as make_box asks for it
            if _has_leader(style):
                return None
            kept_style = kept.styles[key] = style
        kept.chosen[id(style)] = (style, kept_style)
        out[keyword] = kept_style
    return out


def _signature(box, styles: tuple) -> tuple:
    """What a built margin box's layout depends on, besides its page's margins
    and size: its class, attributes, children, and its style (kept ones only)."""
    from weasyprint.formatting_structure import boxes

    if type(box) not in (boxes.MarginBox, boxes.LineBox, boxes.TextBox):
        raise _Uncacheable(type(box).__name__)
    out = [type(box)]
    for name, value in box.__dict__.items():
        if name == "children":
            value = tuple(_signature(child, styles) for child in value)
        elif name == "style":
            if not any(value is style for style in styles):
                raise _Uncacheable(name)
            value = id(value)
        elif name == "cached_counter_values":
            # The page's counters, set on the margin box for target-counter()
            # lookups; its layout reads none. Given to the copy (below).
            continue
        elif name == "remove_decoration_sides":
            value = frozenset(value)
        elif type(value) is float:
            value = repr(value)
        elif value is not None and type(value) not in (str, int, bool):
            raise _Uncacheable(name)
        out.append((name, type(value), value))
    return tuple(out)


def _copied(box):
    """A copy of a laid-out box (weasyprint's ``Box.deepcopy``) whose lines of
    text have Pango layouts of their own to make when drawn, as weasyprint's
    lines have once measured: drawing a line may change its layout (a block
    ellipsis is written into its text), and each copy is drawn on a page of
    its own."""
    from weasyprint.formatting_structure import boxes

    box = box.deepcopy()
    for child in box.descendants():
        if isinstance(child, boxes.TextBox) and child.pango_layout is not None:
            layout = child.pango_layout = copy.copy(child.pango_layout)
            # What weasyprint's Layout.deactivate drops, and what rcdoc's own
            # short paths (fast_layout's, "_rcdoc_*") keep on it for a drawing.
            for name in [name for name in layout.__dict__
                         if name in ("layout", "language", "style") or name[:7] == "_rcdoc_"]:
                del layout.__dict__[name]
    return box


# The sixteen margin boxes in weasyprint 70's order: each side's three (its
# prefix, whether it is vertical, its suffixes), then the four corners.
_SIDES = (("top", False, ("left", "center", "right")),
          ("bottom", False, ("left", "center", "right")),
          ("left", True, ("top", "middle", "bottom")),
          ("right", True, ("top", "middle", "bottom")))
_CORNERS = ("@top-left-corner", "@top-right-corner", "@bottom-left-corner",
            "@bottom-right-corner")
_KEYWORDS = tuple(f"@{prefix}-{suffix}" for prefix, _, suffixes in _SIDES
                  for suffix in suffixes) + _CORNERS
_NOT_GENERATED = ("normal", "inhibit", "none")


def _make_margin_boxes(page_module, own):
    """make_margin_boxes with kept styles and laid-out boxes (see the module's
    docstring); its body weasyprint 70's own, in the same order."""

    def make_margin_boxes(context, page, state):
        kept = context.__dict__.get(_KEPT)
        if kept is None:
            kept = context.__dict__[_KEPT] = _Kept()
        styles = _margin_styles(kept, context, page, _KEYWORDS)
        if styles is None:
            counts["general"] += 1
            yield from own(context, page, state)
            return
        margins = _PageMargins(page_module, context, page, state, styles)
        built = margins.build()
        try:
            key = margins.key(built)
        except _Uncacheable:
            # (Their content is built again there: for it alone, weasyprint's
            # messages on it, such as a target-counter()'s missing anchor, twice.)
            counts["general"] += 1
            yield from own(context, page, state)
            return
        laid_out = kept.boxes.get(key)
        if laid_out is None:
            counts["laid_out"] += 1
            laid_out = margins.lay_out(built)
            # This page draws the boxes laid out (their lines' Pango layouts as
            # measured); copies are kept, for the pages that show the same.
            kept.boxes[key] = [_copied(box) for box in laid_out]
            yield from laid_out
            return
        counts["reused"] += 1
        yield from _copies(built, laid_out)

    make_margin_boxes.__doc__ = own.__doc__
    make_margin_boxes._rcdoc_own = own
    return make_margin_boxes


def _copies(built: list, laid_out: list):
    """Copies of an earlier page's laid-out boxes, one for each of this page's
    generated boxes, with this page's counters (which the key leaves out)."""
    generated = [box for box in built if box is not None]
    for box, original in zip(generated, laid_out, strict=True):
        copied = _copied(original)
        copied.cached_counter_values = box.cached_counter_values
        yield copied


class _PageMargins:
    """One page's margin boxes, built and laid out as weasyprint 70's
    make_margin_boxes does it, with the margin styles chosen beforehand
    (``_margin_styles``)."""

    def __init__(self, page_module, context, page, state, styles: dict):
        """The page's styles, the functions of weasyprint's it calls, and the
        containing blocks and places of its margin boxes."""
        self.page_module = page_module
        self.context, self.page, self.state, self.styles = context, page, state, styles
        self.anonymous = page.style.anonymous_style
        # weasyprint's module functions, read when called (as its own code reads
        # them): rcdoc.note.fast_layout replaces resolve_percentages.
        self.resolve_percentages = page_module.resolve_percentages
        self.standardize = page_module._standardize_page_based_counters
        margin_top, margin_bottom = page.margin_top, page.margin_bottom
        margin_left, margin_right = page.margin_left, page.margin_right
        max_box_width = page.border_width()
        max_box_height = page.border_height()
        self.sizes = (margin_top, margin_bottom, margin_left, margin_right, max_box_width,
                      max_box_height)
        page_end_x = margin_left + max_box_width
        page_end_y = margin_top + max_box_height
        # Each side's (containing block, position_x, position_y), each corner's
        # (width, height, position_x, position_y), as weasyprint places them.
        self.side_places = (((max_box_width, margin_top), margin_left, 0),
                            ((max_box_width, margin_bottom), margin_left, page_end_y),
                            ((margin_left, max_box_height), 0, margin_top),
                            ((margin_right, max_box_height), page_end_x, margin_top))
        self.corner_places = ((margin_left, margin_top, 0, 0),
                              (margin_right, margin_top, page_end_x, 0),
                              (margin_left, margin_bottom, 0, page_end_y),
                              (margin_right, margin_bottom, page_end_x, page_end_y))
        # Each margin box's containing block, in _KEYWORDS' order.
        self.blocks = [place[0] for place in self.side_places for _ in range(3)]
        self.blocks += [(width, height) for width, height, _, _ in self.corner_places]

    def make_box(self, at_keyword, containing_block):
        """weasyprint's make_box, with the style chosen beforehand."""
        from weasyprint.formatting_structure import boxes, build

        style = self.styles[at_keyword]
        if style is None:
            # doesn't affect counters
            style = self.anonymous
        self.standardize(style, at_keyword)
        box = boxes.MarginBox(at_keyword, style)
        box.is_generated = style["content"] not in _NOT_GENERATED
        if box.is_generated:
            # @margins mustn't manipulate page-context counters
            context = self.context
            margin_state = copy.deepcopy(self.state)
            quote_depth, counter_values, counter_scopes, _page_groups = margin_state
            counter_scopes.append(set())
            build.update_counters(margin_state, box.style)
            box.children = build.content_to_boxes(
                box.style, box, quote_depth, counter_values,
                context.get_image_from_uri, context.target_collector,
                context.counter_style, context, self.page)
            box.process_whitespace()
            box.process_text_transform()
            box = build.create_anonymous_boxes(box)
        self.resolve_percentages(box, containing_block)
        if not box.is_generated:
            box.width = box.height = 0
            for side in ("top", "right", "bottom", "left"):
                box._reset_spacing(side)
        return box

    def build(self) -> list:
        """The generated boxes built, in weasyprint's order, None for the others.

        A box not generated has no size nor spacing (make_box), only its
        style's counters put right: it is built (``lay_out``) only to lay the
        others out."""
        built = []
        styles, anonymous, standardize = self.styles, self.anonymous, self.standardize
        for at_keyword, containing_block in zip(_KEYWORDS, self.blocks):
            style = styles[at_keyword] or anonymous
            standardize(style, at_keyword)
            if style["content"] in _NOT_GENERATED:
                built.append(None)
            else:
                built.append(self.make_box(at_keyword, containing_block))
        return built

    def key(self, built: list) -> tuple:
        """What the built boxes' layout depends on: the page's margins and
        size, and each box's signature (False where none is generated);
        raises _Uncacheable for a box the copies may not stand for."""
        return (self.sizes,
                tuple(False if box is None else
                      _signature(box, (box.style, box.style.anonymous_style))
                      for box in built))

    def lay_out(self, built: list) -> list:
        """The rest of weasyprint's make_margin_boxes: the boxes not generated
        built, the boxes' sizes and places, then their content's layout."""
        every = [self.make_box(at_keyword, containing_block) if box is None else box
                 for box, at_keyword, containing_block in zip(built, _KEYWORDS, self.blocks)]
        generated_boxes = self._placed_sides(every) + self._placed_corners(every)
        layout = self.page_module.margin_box_content_layout
        return [layout(self.context, self.page, box) for box in generated_boxes]

    def _placed_sides(self, every: list) -> list:
        """The generated boxes of the four sides, sized and placed, as
        weasyprint does it: each side's three together."""
        compute_variable_dimension = self.page_module.compute_variable_dimension
        compute_fixed_dimension = self.page_module.compute_fixed_dimension
        context = self.context
        generated_boxes = []
        for index, ((prefix, vertical, _), (containing_block, position_x, position_y)) in (
                enumerate(zip(_SIDES, self.side_places))):
            side_boxes = every[3 * index:3 * index + 3]
            if vertical:
                fixed_outer, variable_outer = containing_block
            else:
                variable_outer, fixed_outer = containing_block
            if not any(box.is_generated for box in side_boxes):
                continue
            # We need the three boxes together for the variable dimension:
            compute_variable_dimension(context, side_boxes, vertical, variable_outer)
            for box, offset in zip(side_boxes, [0, 0.5, 1]):
                if not box.is_generated:
                    continue
                box.position_x = position_x
                box.position_y = position_y
                if vertical:
                    box.position_y += offset * (variable_outer - box.margin_height())
                else:
                    box.position_x += offset * (variable_outer - box.margin_width())
                compute_fixed_dimension(context, box, fixed_outer, not vertical,
                                        prefix in ("top", "left"))
                generated_boxes.append(box)
        return generated_boxes

    def _placed_corners(self, every: list) -> list:
        """The generated corner boxes, sized and placed, as weasyprint does it."""
        compute_fixed_dimension = self.page_module.compute_fixed_dimension
        context = self.context
        generated_boxes = []
        for box, at_keyword, (cb_width, cb_height, position_x, position_y) in zip(
                every[12:], _CORNERS, self.corner_places):
            if not box.is_generated:
                continue
            box.position_x = position_x
            box.position_y = position_y
            compute_fixed_dimension(context, box, cb_height, True, "top" in at_keyword)
            compute_fixed_dimension(context, box, cb_width, False, "left" in at_keyword)
            generated_boxes.append(box)
        return generated_boxes
