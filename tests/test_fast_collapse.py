"""Tests of rcdoc.note.fast_collapse: weasyprint 70's collapsing of adjoining
vertical margins in one pass.

The reference is weasyprint itself: its own ``collapse_margin``, which must give
the same value of the same type for every list of margins (CSS 2.1 §8.3.1: the
largest positive margin plus the most negative one; zero where there are
none), and the same PDF where pages are full of collapsing margins.
"""

from __future__ import annotations

import itertools
import math

import pytest
import weasyprint

from rcdoc.note import fast_collapse
from weasyprint_own import general  # noqa: F401 - a fixture

_VALUES = [0, 0.0, -0.0, 3, 3.0, -3, -3.0, 2.5, -2.5, 1e-12, -1e-12, 1e300, -1e300,
           math.inf, -math.inf, math.nan]


def _own():
    from weasyprint.layout import block
    return block.__dict__["collapse_margin"]


def _same(a, b) -> bool:
    if isinstance(a, float) and math.isnan(a):
        return isinstance(b, float) and math.isnan(b)
    return type(a) is type(b) and a == b and math.copysign(1, a) == math.copysign(1, b)


def test_replacements_are_for_weasyprint_70_only(general, monkeypatch):
    from weasyprint.layout import block
    [(owner, name, function)] = fast_collapse.replacements()
    assert (owner, name, function) == (block, "collapse_margin", fast_collapse.collapse_margin)
    assert function is not _own()
    monkeypatch.setattr(weasyprint, "__version__", "71.0")
    assert fast_collapse.replacements() == []


@pytest.mark.parametrize("n", [0, 1, 2, 3])
def test_every_list_of_margins_collapses_as_weasyprints_own(general, n):
    own = _own()
    checked = 0
    for margins in itertools.product(_VALUES, repeat=n):
        margins = list(margins)
        assert _same(fast_collapse.collapse_margin(margins), own(margins)), margins
        checked += 1
    assert checked == len(_VALUES) ** n
    # Tuples and generators are read as lists are (weasyprint passes lists).
    assert fast_collapse.collapse_margin((4, -1.5, 2)) == own([4, -1.5, 2]) == 2.5


def test_pages_of_collapsing_margins_are_weasyprints_own(general, monkeypatch):
    # Nested blocks whose margins adjoin (parent and first child, last child and
    # parent, empty blocks collapsing through, negative margins, a page break).
    blocks = "".join(
        f"<div style='margin: {a}px 0 {b}px'><p style='margin: {b}px 0 {a}px'>text {i}</p>"
        f"<div style='margin: {-a}px 0 {a - b}px'></div></div>"
        for i, (a, b) in enumerate(itertools.product((0, 3, 7.5, -2), (0, 4, -6.25))))
    html = f"<style>@page {{ size: 200px 160px }} body {{ font: 8px sans-serif }}</style>{blocks * 4}"
    reference = weasyprint.HTML(string=html).write_pdf()
    from weasyprint.layout import block
    calls = []

    def counted(margins):
        calls.append(margins)
        return fast_collapse.collapse_margin(margins)

    monkeypatch.setattr(block, "collapse_margin", counted)
    assert weasyprint.HTML(string=html).write_pdf() == reference
    assert len(calls) > 200 and any(len(m) >= 2 for m in calls)
