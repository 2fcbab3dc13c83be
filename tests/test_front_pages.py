"""A long summary as one part per page (rcdoc.note.front_pages): a rebuild lays out
again only the pages whose rows changed, and gives the bytes a cold build gives.

Checks are "common practice" for build caches (what is kept must not show: the
same bytes as without it) and the pages are compared with the table laid out
whole, as the note had it before it came in pages (the same rows on each page,
each link at the same place).
"""

from __future__ import annotations

import pytest

from rcdoc.note import assemble, join
from rcdoc.note.front_pages import PAGES, front_parts

pytestmark = pytest.mark.slow

KW = dict(template_dirs=(), project_dir=None, source_date_epoch=0, fetcher=None)
KINDS = ["RC low-pass", "Multiple-feedback low-pass", "RC ladder"]


def _key_result(i: int, long: set, changed: bool = False) -> str:
    if i in long:       # three lines in its column
        return ("Corner frequency: 1.71 kHz (1.62 kHz … 1.81 kHz), settling to 12 bits "
                "within 2.4 ms of the step, ripple 0.3 mV at the PWM frequency")
    # A changed value: other digits, the same widths (DejaVu's digits share one advance).
    return f"Corner frequency: {1 + i % 9}.{i % 7}{7 if changed else 1} kHz"


def _front(n: int, long=(), changed: int | None = None, verdicts=None) -> dict:
    rows = []
    for i in range(n):
        cells = [f"Input {i}: anti-alias filter" + (" of the spare channel" if i % 5 == 0 else ""),
                 KINDS[i % 3],
                 _key_result(i, set(long), i == changed),
                 f"{i % 4} of {i % 4}", (verdicts or {}).get(i, "pass")]
        rows.append({"id": f"in-{i}", "cells": cells})
    return {"title": "Design note: Test board rev A", "generator": "rcdoc test",
            "board": {"name": "Test board", "revision": "A", "date": "2026-01-01",
                      "authors": ["Bench"], "notes": []},
            "status": "pass", "analysis": [], "appendix": [], "changes": None,
            "stages": [{"id": r["id"], "title": r["cells"][0], "kind": r["cells"][1],
                        "status": r["cells"][4]} for r in rows],
            "summary": {"columns": ["Stage", "Kind", "Key result (spread)", "Checks passed",
                                    "Verdict"], "rows": rows},
            "overview_images": [], "overview_image": None, "charts_apart": True}


def _rendering(monkeypatch) -> list:
    rendered, real = [], assemble.render_part

    def recorded(context, part, **kw):
        page = context.get("summary_page")
        rendered.append((part, page["first"] if page else None,
                         len(context["summary"]["rows"])))
        return real(context, part, **kw)
    monkeypatch.setattr(assemble, "render_part", recorded)
    return rendered


def _joined(parts) -> bytes:
    return join.join(parts, None, info={"/Title": "t"}, pdf_id=b"0" * 32)


def _rows(part) -> list[str]:
    return sorted({t for _p, t, _r in part["links"] if t.startswith("stage-")})


def test_pages_are_the_pages_of_the_whole_table():
    front = _front(70, long={3, 40})
    whole = assemble.render_part(front, "front", **KW)          # as before: one part
    pages = front_parts(front, {}, KW)
    assert whole["pages"] == len(pages) >= 3
    assert [p["pages"] for p in pages] == [1] * len(pages)
    for i, page in enumerate(pages):
        # The same rows, each link (a title's lines) at the same place on its page.
        mine = sorted((t, tuple(round(v, 2) for v in r)) for _p, t, r in page["links"])
        theirs = sorted((t, tuple(round(v, 2) for v in r)) for p, t, r in whole["links"]
                        if p == i)
        assert mine == theirs and mine
    assert [p["rows"] for p in pages][0][0] == 0 and pages[-1]["rows"][1] == 69


def test_a_rebuild_lays_out_again_only_the_page_of_the_changed_row(monkeypatch):
    note_parts: dict = {}
    first = front_parts(_front(70), note_parts, KW)
    assert len(first) >= 3 and note_parts[PAGES]["pages"] == first
    second_page = first[1]["rows"]
    changed = second_page[0] + 2
    rendered = _rendering(monkeypatch)
    again = front_parts(_front(70, changed=changed), note_parts, KW)
    # The changed page, from its first row to the first row of the next page.
    assert rendered == [("front", second_page[0], second_page[1] - second_page[0] + 2)]
    assert again[0] is first[0] and again[2:] == first[2:] and again[1] is not first[1]
    cold = front_parts(_front(70, changed=changed), {}, KW)
    assert _joined(again) == _joined(cold)
    # Nothing changed: nothing laid out.
    rendered.clear()
    assert front_parts(_front(70, changed=changed), note_parts, KW) == again
    assert rendered == []


def test_a_row_that_moves_the_page_break_lays_the_table_out_whole(monkeypatch):
    note_parts: dict = {}
    first = front_parts(_front(70), note_parts, KW)
    last_of_first = first[0]["rows"][1]
    rendered = _rendering(monkeypatch)
    # Three lines instead of one in the first page's last row: it goes to the next page.
    again = front_parts(_front(70, long={last_of_first}), note_parts, KW)
    assert rendered[0][1] == 0 and rendered[-1] == ("front", 0, 70)
    assert again[0]["rows"][1] < last_of_first
    cold = front_parts(_front(70, long={last_of_first}), {}, KW)
    assert [p["rows"] for p in again] == [p["rows"] for p in cold]
    assert _joined(again) == _joined(cold)


def test_stripes_and_header_of_a_page_from_an_odd_row():
    pages = front_parts(_front(70), {}, KW)
    odd = next(p for p in pages if p["rows"][0] % 2)
    note_parts = {PAGES: {"pages": pages}}
    # Laid out again on its own (its key changed by hand): the same bytes.
    stale = dict(odd, key="stale")
    note_parts[PAGES]["pages"] = [stale if p is odd else p for p in pages]
    again = front_parts(_front(70), note_parts, KW)
    assert again[pages.index(odd)] is not odd
    assert again[pages.index(odd)]["pdf"] == odd["pdf"]


def test_another_number_of_rows_lays_the_table_out_whole(monkeypatch):
    note_parts: dict = {}
    front_parts(_front(70), note_parts, KW)
    rendered = _rendering(monkeypatch)
    again = front_parts(_front(69), note_parts, KW)
    assert rendered == [("front", 0, 69)]
    assert _joined(again) == _joined(front_parts(_front(69), {}, KW))


def test_what_stays_one_part(tmp_path):
    # Charts in the front part, or templates of the user's own: the part "front".
    with_charts = {**_front(70), "charts_apart": False}
    note_parts: dict = {}
    parts = front_parts(with_charts, note_parts, KW)
    assert len(parts) == 1 and parts[0]["pages"] >= 3 and "front" in note_parts
    assert PAGES not in note_parts
    own = tmp_path / "templates"
    own.mkdir()
    (own / "_cover.html").write_text("<section>cover</section>", encoding="utf-8")
    parts = front_parts(_front(70), {}, {**KW, "template_dirs": (own,)})
    assert len(parts) == 1 and parts[0]["pages"] >= 3
    # A summary without a stage to link a row to.
    bare = _front(70)
    bare["summary"]["rows"][5]["id"] = None
    assert len(front_parts(bare, {}, KW)) == 1


def test_pages_whose_rows_cannot_be_told_stay_one_part(monkeypatch):
    # Where the links do not tell a page's rows, the table is one part, and the
    # next build lays it out whole again at once (one render, not a page first).
    import rcdoc.note.front_pages as front_pages
    monkeypatch.setattr(front_pages, "_rows_by_page", lambda part, table: {})
    note_parts: dict = {}
    parts = front_parts(_front(70), note_parts, KW)
    assert len(parts) == 1 and parts[0]["pages"] >= 3 and "rows" not in parts[0]
    rendered = _rendering(monkeypatch)
    again = front_parts(_front(70, changed=40), note_parts, KW)
    assert rendered == [("front", 0, 70)] and len(again) == 1
