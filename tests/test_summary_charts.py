"""The summary charts: kept from one build to the next chart by chart, a part of
their own where there are several, and drawn where the command's process of a
rebuild need not load matplotlib."""

from __future__ import annotations

import io
import subprocess
import sys
from pathlib import Path

import pypdf
import pytest
from boards import overview_rows, summary_context
from test_cache import _rendering

from rcdoc.commands import build, schedule
from rcdoc.kinds import load_project
from rcdoc.note import assemble, charts_time, overview
from rcdoc.note.overview import OVERVIEW_ROWS, chart_keys, overview_slices, own_pages
from rcdoc.note.page import overview_charts

ROOT = Path(__file__).resolve().parents[1]


def test_note_context_and_front_matter_need_no_drawing_library():
    # The command's process of a one-value rebuild builds the note's context and
    # renders the front matter only; matplotlib, schemdraw and ziamath are the
    # workers' (their fork server preloads them: rcdoc.commands.preload).
    code = ("import sys, rcdoc.note.page, rcdoc.note.assemble, rcdoc.commands.schedule, "
            "rcdoc.commands.build, rcdoc.note.overview\n"
            "print(sorted(m for m in ('matplotlib', 'schemdraw', 'ziamath') if m in sys.modules))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         cwd=ROOT, check=True).stdout
    assert out.strip() == "[]"
    # The workers' fork server loads what draws, not the renderer: a one-value
    # rebuild's workers only draw, and the server is ready sooner without it (nor
    # the renderer's font tables, nor matplotlib's style sheets or ziamath's LaTeX).
    preload = subprocess.run(
        [sys.executable, "-c", "import sys, rcdoc.commands.preload\n"
         "print(all(m in sys.modules for m in ('matplotlib', 'schemdraw', "
         "'rcdoc.note.charts_freq', 'rcdoc.note.charts_time', 'rcdoc.note.schematic')), "
         "sorted(m for m in ('weasyprint', 'fontTools.ttLib', 'matplotlib.style', "
         "'latex2mathml') if m in sys.modules))"],
        capture_output=True, text=True, cwd=ROOT, check=True).stdout
    assert preload.strip() == "True []"


def test_chart_keys_change_with_what_the_chart_shows():
    rows = overview_rows(2 * OVERVIEW_ROWS - 10)      # two charts
    keys = chart_keys(rows, "code")
    assert len(keys) == len(overview_slices(len(rows))) == 2 and keys[0] != keys[1]
    assert chart_keys(rows, "code") == keys                            # a function of its inputs
    assert chart_keys(rows, "other code") != keys and len(set(chart_keys(rows, "x")) & set(keys)) == 0
    # A stage of the second chart moves inside the span of its kind: the first chart
    # is the same image, its key the same.
    second = overview_slices(len(rows))[1].start
    moved = [dict(r) for r in rows]
    moved[second]["nominal"] = (moved[second]["nominal"] + moved[second]["max"]) / 2
    assert moved[second]["min"] <= moved[second]["nominal"] <= moved[second]["max"]
    new = chart_keys(moved, "code")
    assert new[0] == keys[0] and new[1] != keys[1]
    # A frequency beyond every other of its kind moves the shared axis: both change.
    wide = [dict(r) for r in rows]
    wide[second].update(nominal=1e12, min=1e12, max=1e12)
    assert all(a != b for a, b in zip(chart_keys(wide, "code"), keys))
    # A verdict is part of the row: red or green.
    flipped = [dict(r) for r in rows]
    flipped[0] = {**flipped[0], "status": "fail" if rows[0]["status"] == "pass" else "pass"}
    assert chart_keys(flipped, "code")[0] != keys[0]


def test_charts_taken_from_an_earlier_draw_are_the_ones_drawn_afresh(monkeypatch):
    rows = overview_rows(2 * OVERVIEW_ROWS - 10)
    keys = chart_keys(rows, "code")
    fresh = overview_charts(rows)
    drawn = []
    real = charts_time._overview_figure
    monkeypatch.setattr(charts_time, "_overview_figure",
                        lambda parsed, limits=None: drawn.append(len(parsed)) or real(parsed, limits))
    kept = overview_charts(rows, {keys[0]: fresh[0]["image"], "stale": b"x"}, keys)
    assert len(drawn) == 1                                      # only the second chart drawn
    assert [c["image"] for c in kept] == [c["image"] for c in fresh]
    assert [c["title"] for c in kept] == [c["title"] for c in fresh]
    # Something that is not an image (a damaged cache entry) is drawn again.
    drawn.clear()
    overview_charts(rows, {keys[0]: "not bytes", keys[1]: None}, keys)
    assert len(drawn) == 2


def test_summary_charts_keep_the_last_builds_and_file_their_own():
    from rcdoc.commands.cache import code_fingerprint
    rows = overview_rows(2 * OVERVIEW_ROWS - 10)

    class Metric:
        def __init__(self, name, nominal, lo, hi):
            import numpy as np
            self.name, self.nominal, self.at_hz = name, nominal, None
            self.samples = np.array([lo, hi, nominal])

    class Stage:
        def __init__(self, sid):
            self.id = sid

    class Result:
        def __init__(self, row):
            f = row["frequencies"][0]
            name = {"corner": "corner", "notch": "notch_frequency", "natural": "f0",
                    "ring": "ring_frequency"}[row["kind"]]
            self.metrics = [Metric(name, f["nominal"], f["min"], f["max"])]
            self.stage, self.status = Stage(row["label"]), row["status"]
    results = [Result({**r, "frequencies": [r]}) for r in rows]
    parts: dict = {}
    first = schedule.summary_charts(results, parts)
    keys = chart_keys(overview.overview_rows(results), code_fingerprint())
    assert len(keys) == 2
    assert list(parts["overview-charts"]) == keys
    assert [parts["overview-charts"][k] for k in keys] == [c["image"] for c in first]
    # The next build: nothing drawn where nothing changed.
    parts["overview-charts"] = {k: b"kept " + k.encode() for k in keys}
    again = schedule.summary_charts(results, parts)
    assert [c["image"] for c in again] == [b"kept " + k.encode() for k in keys]


def test_several_summary_charts_are_a_part_of_their_own():
    rows = overview_rows(2 * OVERVIEW_ROWS - 10)
    charts = overview_charts(rows)
    assert own_pages(charts) and not own_pages(charts[:1])
    context = summary_context(rows, charts)
    front = assemble.front_context(context)
    assert front["overview_images"] == [] and front["overview_image"] is None
    apart = assemble.charts_context(context)
    assert apart["overview_images"] == charts and apart["stages"] == []
    # One chart stays with the table, on the front part's pages.
    one = summary_context(rows, charts[:1])
    assert assemble.charts_context(one) is None
    assert assemble.front_context(one)["overview_images"] == charts[:1]
    # The part: each chart on a page with its heading, under the note's running header.
    part = assemble.render_part(apart, "overview")
    reader = pypdf.PdfReader(io.BytesIO(part["pdf"]))
    assert part["pages"] == 2
    for page, chart in zip(reader.pages, charts):
        text = page.extract_text()
        assert chart["title"] in text and "Many · rev A" in text and "Summary" in text


def test_change_record_follows_the_charts_and_the_cover_links_to_it():
    # build --since: the change record comes right after the summary (its charts
    # included), and the cover names it with a link to its page, across parts.
    import pikepdf
    rows = overview_rows(2 * OVERVIEW_ROWS - 10)
    charts = overview_charts(rows)
    title = "Changes since abc1234 (2026-01-01)"
    context = summary_context(rows, charts, changes={"title": title, "blocks": [
        {"type": "text", "title": "Parts", "paragraphs": ["R1: 4.7 kΩ to 5.1 kΩ"]}]})
    assert assemble.charts_context(context)["changes"] == context["changes"]
    assert assemble.front_context(context)["changes"] == context["changes"]   # the cover's line
    pdf, _ = assemble.render_note(context)
    doc = pikepdf.open(io.BytesIO(pdf))
    texts = [page.extract_text() for page in pypdf.PdfReader(io.BytesIO(pdf)).pages]
    assert title in texts[0]                                          # named on the cover
    charts_at = [i for i, t in enumerate(texts) if "Corner, notch and ring frequencies" in t]
    changes_at = next(i for i, t in enumerate(texts) if i > 0 and title in t and "Parts" in t)
    assert charts_at == [changes_at - 2, changes_at - 1]              # charts, then the record
    targets = []
    for annot in doc.pages[0].get("/Annots", []):
        dest = annot.get("/Dest")
        if dest is None and "/A" in annot:
            dest = annot["/A"].get("/D")
        if dest is not None:
            targets.append(doc.pages.index(pikepdf.Page(dest[0])))
    assert targets == [changes_at]


BOARD = """\
[board]
name = "Summary chart board"
revision = "C"
date = "2026-04-01"

[analysis]
samples = 20
seed = 3
points_per_decade = 6
"""

STAGE = """
[[stage]]
id = "f{k}"
title = "Filter {k}"
kind = "rc-lowpass"
parts.r = {{ ref = "R{k}", value = "{r} ohm", tolerance = "1%" }}
parts.c = {{ ref = "C{k}", value = "10 nF", tolerance = "5%", dielectric = "C0G" }}
"""


def _board(n: int, r0: int = 1000, changed: int | None = None) -> str:
    return BOARD + "".join(STAGE.format(k=k, r=r0 + 10 * k + (7 if k == changed else 0))
                           for k in range(n))


@pytest.mark.slow
def test_rebuild_of_a_board_with_several_summary_charts(tmp_path, monkeypatch):
    # A one-value rebuild with the command's pool: the stage analysed here, drawn by
    # a worker, which then draws the summary charts; the front matter, the stage's
    # part and the charts' part rendered here. The note is byte for byte the one a
    # cold serial build makes (common practice: a cache must not show), and the
    # pages are in the note's order.
    n = OVERVIEW_ROWS + 2
    path = tmp_path / "board.toml"
    path.write_text(_board(n), encoding="utf-8")
    out = tmp_path / "out"
    with build.WorkerPool(2, draw=True) as pool:
        pool.warm()
        first = build.analyse_project(load_project(str(path)), draw=True, jobs=2, out_dir=out,
                                      pool=pool)
    assert first.note_parts["overview"]["pages"] == 2
    build.write_outputs(first, out)
    path.write_text(_board(n, changed=n - 1), encoding="utf-8")
    rendered = _rendering(monkeypatch)
    p = load_project(str(path))
    with build.WorkerPool(2, draw=True) as pool:
        pool.warm()
        again = build.analyse_project(p, draw=True, jobs=2, out_dir=out, pool=pool)
    assert again.computed == [f"f{n - 1}"]
    # The front part first (it does not wait for the charts), then the stage's part
    # (while the stage's worker draws the charts), then the charts'.
    assert rendered == ["front", "stage", "overview"]
    assert again.note_parts["overview"]["key"] != first.note_parts["overview"]["key"]
    pdf, _ = build.write_outputs(again, out)
    assert rendered == ["front", "stage", "overview"]        # nothing rendered again
    cold = build.write_outputs(build.analyse_project(p, draw=True), tmp_path / "cold")[0]
    assert Path(pdf).read_bytes() == Path(cold).read_bytes()
    reader = pypdf.PdfReader(pdf)
    texts = [page.extract_text() for page in reader.pages]
    heads = [i for i, t in enumerate(texts) if "Corner, notch and ring frequencies, stages" in t]
    first_stage = next(i for i, t in enumerate(texts) if "Filter 0" in t and "Schematic" in t)
    # Cover, the summary table, then the two charts, each on a page of its own, then stages.
    assert heads == [heads[0], heads[0] + 1] and heads[0] >= 2 and first_stage == heads[1] + 1
