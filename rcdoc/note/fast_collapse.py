"""weasyprint 70's collapsing of adjoining vertical margins, in one pass; for
every document rcdoc renders.

What it is for: ``layout.block.collapse_margin`` is asked for every block and
line of a page (8 500 times in the example's note), and made a list and two
generators each time to take the largest positive margin and the most
negative one: 1.6 µs a call where the same answer takes 0.2–0.4 µs.

What it must not do: change a value, or its type. The answer is the same
margins added in the same way: the largest of zero and the margins not below
zero (the first of equal ones, as ``max`` keeps it: the integer zero before a
float zero), plus the smallest of zero and those not above zero; a NaN is
neither (tests/test_fast_collapse.py against weasyprint's own).
"""

from __future__ import annotations

from rcdoc.note import renderer_libs  # noqa: F401 - weasyprint, without ctypes' library search
import weasyprint  # noqa: E402 - after renderer_libs

__all__ = ["replacements", "collapse_margin"]

_VERSION = "70.0"


def replacements() -> list:
    """(owner, name, function) in the shape of rcdoc.note.fast_layout's; empty
    for another weasyprint than the one this was written for."""
    if weasyprint.__version__ != _VERSION:
        return []
    from weasyprint.layout import block
    # Only layout.block calls it, through its own namespace.
    return [(block, "collapse_margin", collapse_margin)]


def collapse_margin(adjoining_margins):
    """Get the amount of collapsed margin for a list of adjoining margins."""
    positive = negative = 0
    for margin in adjoining_margins:
        if margin >= 0:
            if margin > positive:
                positive = margin
        elif margin < negative:
            negative = margin
    return positive + negative
