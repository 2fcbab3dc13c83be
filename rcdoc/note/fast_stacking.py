"""weasyprint 70's stacking contexts made without copying the boxes they leave
as they are; for every document rcdoc renders.

What it is for: to paint a page, weasyprint sorts its boxes into stacking
contexts (CSS 2.1 Appendix E), and on the way copies every box that has
children (``stacking._dispatch_children``: ``copy_with_children``), whether a
child was taken out of it (a positioned box, a float, a box that makes a
context of its own) or not. On the note's pages nothing is taken out of most
boxes: the copies, one per line, inline box, cell, row and block, were a fortieth
of the render.

How: the same walk, in the same order, with the same lists of blocks, floats
and contexts filled; a box whose children all come back as they were is
handed on itself instead of a copy of it with the same children.

What it must not do: change what is drawn. The copy and the box are alike but
in one attribute, which ``copy_with_children`` resets on the box it copies:
the set of sides whose decoration a split removed, which only the layout reads
(``layout.percent``), and the layout is over when a page is painted. Nothing
that draws a page writes into its boxes (the links' annotations are set on the
page's own boxes either way). tests/test_fast_stacking.py compares the PDFs
with weasyprint's own, byte for byte.
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
    from weasyprint import stacking
    # _dispatch and StackingContext.from_box read the module's name at each call.
    return [(stacking, "_dispatch_children", _dispatch_children(stacking))]


def _dispatch_children(stacking):
    from weasyprint.formatting_structure import boxes
    parent_box = boxes.ParentBox
    general = stacking._dispatch_children

    def _dispatch_children(box, page, child_contexts, blocks, floats, blocks_and_cells):
        if not isinstance(box, parent_box):
            return box
        dispatch = stacking._dispatch
        new_children = []
        same = True
        for child in box.children:
            result = dispatch(child, page, child_contexts, blocks, floats, blocks_and_cells)
            if result is not None:
                new_children.append(result)
            if result is not child:
                same = False
        return box if same else box.copy_with_children(new_children)

    _dispatch_children.__doc__ = general.__doc__
    return _dispatch_children
