"""What the tests of the renderer's short paths (rcdoc.note.fast_layout and the
modules it installs: fast_paint, fast_margins, fast_tables) share: weasyprint's
own functions put back for a test, a counter of calls, and weasyprint's log
records gathered (the short paths must log what weasyprint's own code logs, in
the same order)."""

from __future__ import annotations

import logging

import pytest

from rcdoc.note import fast_layout


@pytest.fixture()
def general():
    """weasyprint's own functions for the test (fast_layout may have installed
    the short paths); the short paths back after it."""
    was = fast_layout.installed()
    fast_layout.uninstall()
    yield
    if was:
        fast_layout.install()


def counted(counts, function, key):
    """``function``, adding one to ``counts[key]`` at each call."""
    def wrapper(*args, **kwargs):
        counts[key] += 1
        return function(*args, **kwargs)
    return wrapper


class LogRecords(logging.Handler):
    """The (level, message) of every record logged to it, in order."""

    def __init__(self):
        super().__init__(logging.DEBUG)
        self.seen = []

    def emit(self, record):
        self.seen.append((record.levelname, record.getMessage()))


def rendered(html: str, attributes, **options) -> tuple:
    """The PDF of ``html``, ``attributes(document)`` (what a test compares of
    the laid-out boxes), weasyprint's log records and the page count."""
    import weasyprint
    logger = logging.getLogger("weasyprint")
    records = LogRecords()
    logger.addHandler(records)
    try:
        document = weasyprint.HTML(string=html, **options).render()
        pdf = document.write_pdf()
    finally:
        logger.removeHandler(records)
    return pdf, attributes(document), records.seen, len(document.pages)


def same_parts(runs: tuple, reference: list) -> None:
    """Each of ``runs`` (render_parts outputs) has the reference's pages and
    PDF bytes, part by part."""
    for run in runs:
        for a, b in zip(run, reference, strict=True):
            assert a["pages"] == b["pages"] >= 1
            assert a["pdf"] == b["pdf"]


def long_table_stage(ctx: dict) -> dict:
    """The first stage of a note context with one long table instead of its blocks
    (split over pages, its rows striped and its last row bordered by the note's
    CSS), as the example board's sweeps give."""
    rows = [[f"point {i}", "≤ 1 dB", f"{i / 7:.2f} dB", "fail" if i % 9 == 4 else "pass"]
            for i in range(70)]
    return {**ctx["stages"][0], "id": "long", "blocks": [
        {"type": "table", "title": "Sweep", "columns": ["Point", "Requirement", "Worst",
                                                      "Verdict"], "rows": rows,
         "note": "Every point of the sweep."}]}


def note_parts(ctx: dict, *stages: dict) -> list[tuple[str, dict]]:
    """(part, context) of a note context's front matter, its stages in one part,
    each of ``stages`` in a part of its own, and its appendix."""
    from rcdoc.note import assemble
    head = assemble._head(ctx)
    return [("front", ctx), ("stage", {**head, "stages": ctx["stages"]}),
            *(("stage", {**head, "stages": [stage]}) for stage in stages),
            ("appendix", assemble.appendix_context(ctx, ctx["appendix"]))]


def render_parts(parts: list[tuple[str, dict]]) -> list[dict]:
    """Each of ``parts`` rendered (rcdoc.note.assemble.render_part), at the tests'
    fixed date."""
    from rcdoc.note import assemble
    from test_report import EPOCH
    return [assemble.render_part(context, part, source_date_epoch=EPOCH)
            for part, context in parts]
