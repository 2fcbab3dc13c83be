"""The example's PDF as a reviewer and a text search read it: headings, fill, numbers.

Renders the example board and a board with a stage of every kind once each and reads
the PDFs back with pypdf (a general-purpose PDF library): headings must extract as
words, every page but the last must be at least a quarter full, and no number may be
printed in exponent form.
"""

from __future__ import annotations

import json
import re
import shutil
import subprocess
from pathlib import Path

import pytest

from rcdoc.commands.cli import main
from rcdoc.kinds import KINDS

pypdf = pytest.importorskip("pypdf")

EXAMPLE = Path(__file__).resolve().parents[1] / "projects" / "greenhouse-controller.toml"

# Left and right page margins of templates/note.css (@page margin), in points.
_SIDE_MARGIN_PT = 18 / 25.4 * 72

# Page furniture: the running header and the footer sit in the outer 8 % of the page
# (the note's margins, templates/note.css); body text is what lies between.
_FURNITURE = 0.08


# The kinds the example leaves out, as a designer would write them.
_EXTRA_STAGES = """
[[stage]]
id = "leak-bandpass"
title = "Leak detector microphone: band-pass"
kind = "rc-bandpass"
notes = "The microphone's hiss band reaches the envelope detector; hum and the converter's clock stay out."
source = "1 kohm"
load = { r = "100 kohm", c = "10 pF" }
parts.c1 = { ref = "C110", value = "1 uF", tolerance = "10%", dielectric = "X7R", voltage = "16 V" }
parts.r1 = { ref = "R110", value = "47k", tolerance = "1%" }
parts.r2 = { ref = "R111", value = "10k", tolerance = "1%" }
parts.c2 = { ref = "C111", value = "10 nF", tolerance = "5%", dielectric = "C0G", voltage = "50 V" }
[[stage.check]]
metric = "corner_low"
max = "10 Hz"
[[stage.check]]
metric = "corner_high"
min = "1 kHz"

[[stage]]
id = "hum-notch"
title = "Flow sensor line: hum notch"
kind = "rc-notch"
source = "100 ohm"
load = { r = "1 Mohm" }
parts.r1 = { ref = "R120", value = "10k", tolerance = "1%" }
parts.r2 = { ref = "R121", value = "10k", tolerance = "1%" }
parts.c3 = { ref = "C122", value = "200 nF", tolerance = "2%", dielectric = "film-pp", voltage = "50 V" }
parts.c1 = { ref = "C120", value = "100 nF", tolerance = "2%", dielectric = "film-pp", voltage = "50 V" }
parts.c2 = { ref = "C121", value = "100 nF", tolerance = "2%", dielectric = "film-pp", voltage = "50 V" }
parts.r3 = { ref = "R122", value = "4.99k", tolerance = "1%" }
[[stage.check]]
metric = "notch_depth"
max = "-20 dB"
"""


def _all_kinds_board(path: Path) -> Path:
    """The example's first stage of each kind (each snubber variant), the extra kinds,
    fewer samples: every page layout the kinds produce, in one short build."""
    head, *chunks = re.split(r"(?m)^(?=\[\[stage\]\]\s*$)", EXAMPLE.read_text(encoding="utf-8"))
    head = re.sub(r"(?m)^samples = \d+", "samples = 300", head)
    seen, kept = set(), []
    for chunk in chunks:
        kind = re.search(r'(?m)^kind = "([^"]+)"', chunk).group(1)
        across = re.search(r'(?m)^across = "([^"]+)"', chunk)
        key = (kind, across.group(1) if across else None)
        if key not in seen:
            seen.add(key)
            kept.append(chunk)
    board = path / "all-kinds.toml"
    board.write_text(head + "".join(kept) + _EXTRA_STAGES, encoding="utf-8")
    return board


def _render(out: Path, board: Path) -> list[dict]:
    assert main(["build", str(board), "-o", str(out)]) == 0
    reader = pypdf.PdfReader(next(out.glob("*.pdf")))
    summary = json.loads(next(out.glob("*.json")).read_text(encoding="utf-8"))
    pages = [_page_lines(page) for page in reader.pages]
    pages[0]["summary"] = summary
    pages[0]["pdf"] = next(out.glob("*.pdf"))
    return pages


@pytest.fixture(scope="module")
def pages(tmp_path_factory):
    return _render(tmp_path_factory.mktemp("pages"), EXAMPLE)


@pytest.fixture(scope="module")
def all_kinds_pages(tmp_path_factory):
    out = tmp_path_factory.mktemp("all-kinds")
    board = _all_kinds_board(out)
    kinds = set(re.findall(r'(?m)^kind = "([^"]+)"', board.read_text(encoding="utf-8")))
    assert kinds == set(KINDS), f"the all-kinds board misses {set(KINDS) - kinds}"
    return _render(out, board)


def test_every_kinds_cache_entries_load_as_rcdoc_data(all_kinds_pages):
    # The build cache's entries are read back by an unpickler that builds rcdoc's
    # data classes, numpy arrays and plain values only (rcdoc.commands.cache): what
    # every kind files (results, drawn blocks, note parts) loads through it, the
    # same objects as pickle's own load.
    import pickle

    from rcdoc.commands.cache import CACHE_DIR_NAME, _load
    entries = sorted((all_kinds_pages[0]["pdf"].parent / CACHE_DIR_NAME).rglob("*.pickle"))
    # A stage of every kind (and of each snubber variant), and the note's parts.
    assert len(entries) > len(KINDS) and any(e.stem == "note-parts" for e in entries)
    for entry in entries:
        plain = pickle.loads(entry.read_bytes())
        assert pickle.dumps(_load(entry), protocol=5) == pickle.dumps(plain, protocol=5)


def _page_lines(page) -> dict:
    """The page's text and the lowest body-text baseline as a fraction of the body height."""
    height = float(page.mediabox.height)
    lo_body, hi_body = _FURNITURE * height, (1.0 - _FURNITURE) * height
    ys: list[float] = []

    def visit(text, cm, tm, font, size):
        y = tm[5] * cm[3] + cm[5]       # baseline in page space (text matrix then CTM)
        if text.strip() and lo_body < y < hi_body:
            ys.append(y)

    text = page.extract_text(visitor_text=visit)
    fill = (hi_body - min(ys)) / (hi_body - lo_body) if ys else 0.0
    return {"text": text, "fill": fill}


@pytest.mark.slow
@pytest.mark.parametrize("board", ["pages", "all_kinds_pages"])
def test_headings_extract_as_words(board, request):
    pages = request.getfixturevalue(board)
    text = "\n".join(p["text"] for p in pages)
    # Headings of the cover, a stage and the appendix (templates/*.html), searched as words.
    for heading in ("DESIGN NOTE", "Summary", "Schematic", "Parts", "Checks", "Assumptions", "Method"):
        assert heading in text, heading
    # Letter-spaced capitals extract as single letters between spaces ("D E S I G N").
    spaced = re.findall(r"\b(?:[A-Z] ){3,}[A-Z]\b", text)
    assert not spaced, spaced[:5]


@pytest.mark.slow
@pytest.mark.parametrize("board", ["pages", "all_kinds_pages"])
def test_no_page_less_than_a_quarter_full(board, request):
    # The note's last page may end where it likes; every other page carries at least a
    # quarter of its body height (a stage's last block never starts a page alone: note.css).
    pages = request.getfixturevalue(board)
    assert len(pages) > 10
    sparse = [(i + 1, round(p["fill"], 2)) for i, p in enumerate(pages[:-1]) if p["fill"] < 0.25]
    assert not sparse, f"pages (number, fill) less than a quarter full: {sparse}"


@pytest.mark.slow
@pytest.mark.parametrize("board", ["pages", "all_kinds_pages"])
def test_no_number_in_exponent_form_or_below_resolution(board, request):
    pages = request.getfixturevalue(board)
    # "2.31e-20", "8.98e-6", "1E+3": the form the note must never print (numbers read
    # with engineering prefixes). Rounding noise below a metric's resolution prints as
    # 0 (or "< resolution" for a stress), never as a long run of zeros.
    found = [(i + 1, m.group(0)) for i, p in enumerate(pages)
             for m in re.finditer(r"\d(?:\.\d+)?[eE][+\-−]?\d+", p["text"])]
    assert not found, found[:10]
    noise = [(i + 1, m.group(0)) for i, p in enumerate(pages)
             for m in re.finditer(r"\b0\.0{7,}\d+", p["text"])]
    assert not noise, noise[:10]


@pytest.mark.slow
@pytest.mark.parametrize("board", ["pages", "all_kinds_pages"])
def test_metric_names_stay_on_one_line(board, request):
    # A checked metric's name (the JSON summary's label) is read in the stage's metrics
    # and checks tables: pypdf extracts a cell that wraps as two lines, so the whole
    # name followed by a value on the same line means the name did not wrap.
    pages = request.getfixturevalue(board)
    text = "\n".join(p["text"] for p in pages)
    labels = {check["label"] for stage in pages[0]["summary"]["stages"]
              for check in stage["checks"] if not check.get("part")}   # part ratings: own table
    assert len(labels) >= 5
    wrapped = sorted(label for label in labels
                     if not re.search(re.escape(label) + r" [−\-+≤≥]?\s?\d", text))
    assert not wrapped, wrapped


def _word_boxes(pdf) -> list[tuple[float, list[tuple[float, float, float, float, str]]]]:
    """Each page's width and word boxes (x0, y0, x1, y1, word) from poppler's
    pdftotext -bbox (pypdf gives where text starts, not where it ends)."""
    if shutil.which("pdftotext") is None:
        pytest.skip("pdftotext (poppler-utils) not installed")
    html = subprocess.run(["pdftotext", "-bbox", str(pdf), "-"], check=True,
                          capture_output=True, text=True).stdout
    pages = []
    for body in html.split("<page ")[1:]:
        width = float(re.match(r'width="([\d.]+)"', body).group(1))
        pages.append((width, [(float(a), float(b), float(c), float(d), w) for a, b, c, d, w in
                              re.findall(r'<word xMin="([\d.]+)" yMin="([\d.]+)" '
                                         r'xMax="([\d.]+)" yMax="([\d.]+)">([^<]*)', body)]))
    return pages


@pytest.mark.slow
@pytest.mark.parametrize("board", ["pages", "all_kinds_pages"])
def test_text_stays_within_the_side_margins(board, request):
    # No table cell or paragraph reaches into the left or right margin.
    pages = _word_boxes(request.getfixturevalue(board)[0]["pdf"])
    outside = [(number, w) for number, (width, words) in enumerate(pages, start=1)
               for x0, _, x1, _, w in words
               if x0 < _SIDE_MARGIN_PT - 0.5 or x1 > width - _SIDE_MARGIN_PT + 0.5]
    assert len(pages) > 10 and sum(len(w) for _, w in pages) > 50 * len(pages)  # boxes read
    assert not outside, outside[:10]


@pytest.mark.slow
@pytest.mark.parametrize("board", ["pages", "all_kinds_pages"])
def test_no_word_runs_into_another(board, request):
    # Tables are laid out with fixed column widths measured from the font
    # (rcdoc/note/table_widths.py): a column too narrow for its content would let
    # a cell's text run over the next cell's. On one line, no two words may overlap.
    overlaps, checked = [], 0
    for number, (_, words) in enumerate(_word_boxes(request.getfixturevalue(board)[0]["pdf"]),
                                        start=1):
        lines: dict[float, list] = {}
        for x0, y0, x1, y1, w in words:
            lines.setdefault(round(y1, 1), []).append((x0, x1, w))
        for row in lines.values():
            row.sort()
            checked += len(row)
            for (a0, a1, aw), (b0, b1, bw) in zip(row, row[1:]):
                if b0 < a1 - 0.3:          # poppler rounds to a tenth of a point
                    overlaps.append((number, aw, bw))
    assert checked > 2000
    assert not overlaps, overlaps[:10]


# Top and bottom page margins of templates/note.css (@page margin), in points.
_TOP_MARGIN_PT, _BOTTOM_MARGIN_PT = 20 / 25.4 * 72, 18 / 25.4 * 72


def _image_boxes(reader) -> list[list[tuple[float, float, float, float]]]:
    """Each page's images as (x0, y0, x1, y1) in points: the unit square an image
    fills, through the transformation in force where the page draws it (PDF 32000-1,
    8.9.4); form XObjects (the page-number overlay) are not images."""
    pages = []
    for page in reader.pages:
        xobjects = page.get("/Resources", {}).get("/XObject", {})
        boxes = []

        def before(op, args, cm, tm, boxes=boxes, xobjects=xobjects):
            if op == b"Do" and xobjects[args[0]].get("/Subtype") == "/Image":
                a, b, c, d, e, f = cm
                xs, ys = (e, e + a, e + c, e + a + c), (f, f + b, f + d, f + b + d)
                boxes.append((min(xs), min(ys), max(xs), max(ys)))

        page.extract_text(visitor_operand_before=before)
        pages.append(boxes)
    return pages


def _outside_body(reader) -> list:
    return [(number, [round(v) for v in box])
            for number, (page, boxes) in enumerate(zip(reader.pages, _image_boxes(reader)), 1)
            for box in boxes
            if box[0] < _SIDE_MARGIN_PT - 0.5 or box[2] > float(page.mediabox.width) - _SIDE_MARGIN_PT + 0.5
            or box[1] < _BOTTOM_MARGIN_PT - 0.5
            or box[3] > float(page.mediabox.height) - _TOP_MARGIN_PT + 0.5]


@pytest.mark.slow
@pytest.mark.parametrize("board", ["pages", "all_kinds_pages"])
def test_charts_stay_within_the_page_body(board, request):
    # No chart reaches into a margin, over the running header or the footer.
    reader = pypdf.PdfReader(request.getfixturevalue(board)[0]["pdf"])
    assert sum(map(len, _image_boxes(reader))) > 20         # the images were found
    assert not _outside_body(reader)


def test_summary_chart_of_many_stages_fits_its_pages():
    # 60 stages: the summary chart in three charts of 20, each on a page with its
    # heading, inside the page body. (One chart of 60 rows was 19 in tall: it ran
    # over the footer and off the page, its heading alone on the page before.)
    import io

    from boards import overview_rows, summary_context
    from rcdoc.note import assemble, charts_time
    rows = overview_rows(60)
    charts = [{"image": im, "title": f"Stage frequencies, part {k + 1}"}
              for k, im in enumerate(charts_time.corner_overview_pages("many", rows))]
    context = summary_context(rows, charts, status="fail")
    reader = pypdf.PdfReader(io.BytesIO(assemble.render_part(context, "front")["pdf"]))
    boxes = _image_boxes(reader)
    assert sum(map(len, boxes)) == 3
    assert not _outside_body(reader)
    for k in range(3):
        heading = next(i for i, page in enumerate(reader.pages)
                       if f"Stage frequencies, part {k + 1}" in page.extract_text())
        assert len(boxes[heading]) == 1, f"chart {k + 1} is not on the page of its heading"


@pytest.mark.slow
def test_words_longer_than_a_line_stay_on_the_page(tmp_path):
    # A hostile board: a board name, a stage title, a stage id, a part's model name
    # and designator, each one word far longer than any line or column. Each breaks
    # where it must (note.css: overflow-wrap); before, the title ran off the page, the
    # summary table gave its first column all the width, so that the kind, the
    # result and the verdict of the stage were not shown at all, and the parts
    # table kept the designator on one line and ran off the page.
    head, first = re.split(r"(?m)^(?=\[\[stage\]\]\s*$)", EXAMPLE.read_text(encoding="utf-8"))[:2]
    long_title, long_id, long_name = "Sensor_" + "X" * 150, "m-" + "y" * 60, "Board" + "Z" * 90
    head = re.sub(r'(?m)^name = ".*"$', f'name = "{long_name}"', head, count=1)
    head = re.sub(r"(?m)^samples = \d+", "samples = 100", head)
    first = re.sub(r'(?m)^title = ".*"$', f'title = "{long_title}"', first, count=1)
    first = re.sub(r'(?m)^id = ".*"$', f'id = "{long_id}"', first, count=1)
    first = first.replace('power = "0.1 W" }', 'power = "0.1 W", model = "' + "Q" * 70 + '" }')
    # A designator of 44 characters, the most a table's first column keeps on one
    # line, in wide letters: too wide for that beside the other columns.
    long_ref = "R12_" + "K" * 40
    first = first.replace('ref = "R12"', f'ref = "{long_ref}"')
    board = tmp_path / "long-words.toml"
    board.write_text(head + first, encoding="utf-8")
    assert "Q" * 70 in first
    pages = _render(tmp_path / "out", board)
    boxes = _word_boxes(pages[0]["pdf"])
    outside = [(number, w[:20]) for number, (width, words) in enumerate(boxes, start=1)
               for x0, _, x1, _, w in words
               if x0 < _SIDE_MARGIN_PT - 0.5 or x1 > width - _SIDE_MARGIN_PT + 0.5]
    assert not outside, outside[:10]
    # The summary shows the stage's every column, its verdict whole.
    summary = pages[1]["text"]
    for word in ("Kind", "Verdict", "RC low-pass", "PASS", "5 of 5"):
        assert word in summary, (word, summary[:600])
    # Nothing of the long words is lost: each is all there, broken over lines.
    text = "".join("".join(p["text"].split()) for p in pages)
    for word in (long_title, long_id, long_name, "Q" * 70, long_ref):
        assert word in text, word
