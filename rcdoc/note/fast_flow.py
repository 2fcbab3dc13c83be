"""weasyprint 70's flow tests reading a box's float and position once; for
every document rcdoc renders.

What it is for: ``Box.is_in_normal_flow`` and
``Box.establishes_formatting_context`` are asked for every box, many times
over, and each asked five methods (is_floated, is_absolutely_positioned,
is_running, is_footnote, is_in_note) that read the same two styles again
(sampled, the two took a twenty-fifth of a stage part's render); here the two
styles are read once.

What it must not do: give another answer. The tests are weasyprint 70's own,
in one expression (tests/test_fast_layout.py compares them on every box of the
example board's parts and of its own extremes).
"""

from __future__ import annotations

from rcdoc.note import renderer_libs  # noqa: F401 - weasyprint, without ctypes' library search
import weasyprint  # noqa: E402 - after renderer_libs

__all__ = ["replacements"]

_VERSION = "70.0"


def replacements() -> list:
    """(owner, name, function) in the shape of rcdoc.note.fast_layout's; empty
    for another weasyprint than the one this was written for."""
    if weasyprint.__version__ != _VERSION:
        return []
    from weasyprint.formatting_structure import boxes
    return [(boxes.Box, "is_in_normal_flow", _is_in_normal_flow),
            (boxes.Box, "establishes_formatting_context", _establishes_context(boxes))]


_FLOATS = ("left", "right", "inline-start", "inline-end")
_ABSOLUTE = ("absolute", "fixed")


def _is_in_normal_flow(self):
    """Return whether this box is in normal flow."""
    style = self.style
    floated = style["float"]
    position = style["position"]
    return not (floated in _FLOATS or position in _ABSOLUTE or position[0] == "running()"
                or floated == "footnote" or position[0] == "note()")


def _establishes_context(boxes):
    """Box.establishes_formatting_context with the box's styles read once."""
    BlockBox, BlockContainerBox = boxes.BlockBox, boxes.BlockContainerBox

    def establishes_formatting_context(self):
        style = self.style
        return (style["float"] in _FLOATS or style["position"] in _ABSOLUTE
                or self.is_column
                or (isinstance(self, BlockContainerBox) and not isinstance(self, BlockBox))
                or (isinstance(self, BlockBox) and style["overflow"] != "visible")
                or "flow-root" in style["display"])

    establishes_formatting_context.__doc__ = boxes.Box.establishes_formatting_context.__doc__
    return establishes_formatting_context
