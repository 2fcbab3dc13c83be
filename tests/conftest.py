"""Shared test configuration: the ``slow`` marker and its guard.

``python -m pytest -q -m "not slow"`` is the quick run (under a minute on two
idle cores); ``python -m pytest -q`` (what CI runs) runs everything. A test is
marked slow when it renders a note to PDF or runs a command on a whole board
(a few seconds or more each). The guard below fails a test that writes a PDF
into its ``tmp_path`` without the marker, so the quick run stays quick as
tests are added.
"""

from __future__ import annotations

import pytest


def _pdfs_in(directory) -> list[str]:
    found = []
    for path in sorted(directory.rglob("*.pdf")):
        # A rendered note embeds fonts (tens of kilobytes); the stand-ins some
        # tests write to prove a file is left alone are a few bytes.
        if path.is_file() and path.stat().st_size >= 4096:     # a folder may take the name
            with path.open("rb") as fh:
                if fh.read(5) == b"%PDF-":
                    found.append(path.name)
    return found


@pytest.fixture(autouse=True)
def _pdf_renders_are_marked_slow(request):
    if request.node.get_closest_marker("slow") or "tmp_path" not in request.fixturenames:
        yield
        return
    # Asked for before the test runs, so tmp_path is torn down after this check.
    tmp_path = request.getfixturevalue("tmp_path")
    yield
    pdfs = _pdfs_in(tmp_path)
    if pdfs:
        pytest.fail(
            f"{request.node.nodeid} renders a PDF ({', '.join(pdfs)}) but is not marked "
            "@pytest.mark.slow (see DEVELOPERS.md, Tests)",
            pytrace=False,
        )
