"""A template's own @font-face font is kept, while a part renders, in a scratch
folder inside the project folder (rcdoc.note.font_scratch), removed once the
part is written: nothing in the system's temporary folder, nothing left over,
and the font is the one the PDF carries. Both renders: the note in parts (an
overridden partial) and the note as one document (an own note.html)."""

from __future__ import annotations

import shutil
import tempfile
from pathlib import Path

import matplotlib
import pypdf
import pytest

from rcdoc.commands import cli
from rcdoc.note import font_scratch, report

BOARD = """\
[board]
name = "Font board"
revision = "A"
date = "2026-03-01"

[analysis]
samples = 20

[[stage]]
id = "lp"
title = "Input low-pass"
kind = "rc-lowpass"
parts.r = { ref = "R1", value = "4k7", tolerance = "1%" }
parts.c = { ref = "C1", value = "10 nF", tolerance = "5%", dielectric = "C0G" }
"""

STYLE = ('<style>@font-face { font-family: "Own Serif"; src: url("own.ttf"); }\n'
         '.board-name { font-family: "Own Serif"; }</style>\n')


def _fonts(pdf: Path) -> set[str]:
    names = set()
    for page in pypdf.PdfReader(pdf).pages:
        resources = page.get("/Resources")
        fonts = resources.get_object().get("/Font") if resources is not None else None
        for font in (fonts.get_object() if fonts is not None else {}).values():
            names.add(str(font.get_object().get("/BaseFont", "")))
    return names


@pytest.mark.slow
@pytest.mark.parametrize("whole", [False, True], ids=["parts", "one-document"])
def test_font_face_fonts_stay_in_the_project_folder(tmp_path, monkeypatch, whole):
    proj = tmp_path / "proj"
    proj.mkdir()
    board = proj / "board.toml"
    board.write_text(BOARD, encoding="utf-8")
    tpl = tmp_path / "tpl"
    tpl.mkdir()
    shipped = report.shipped_templates_dir()
    # A font that the note does not use otherwise (matplotlib's copy of DejaVu Serif).
    shutil.copy(Path(matplotlib.get_data_path()) / "fonts" / "ttf" / "DejaVuSerif.ttf",
                tpl / "own.ttf")
    (tpl / "_cover.html").write_text(STYLE + (shipped / "_cover.html").read_text("utf-8"),
                                     encoding="utf-8")
    # Relative URLs resolve against the folder of the note.html in use (README,
    # "Templates"): an unchanged copy keeps the note in parts, a changed one makes it
    # one document.
    (tpl / "note.html").write_text((shipped / "note.html").read_text("utf-8")
                                   + ("<!-- own -->\n" if whole else ""), encoding="utf-8")
    system_tmp = tmp_path / "system-tmp"
    system_tmp.mkdir()
    monkeypatch.setattr(tempfile, "tempdir", str(system_tmp))
    made = []
    real = tempfile.mkdtemp

    def watched(*args, **kwargs):
        made.append(real(*args, **kwargs))
        return made[-1]
    monkeypatch.setattr(tempfile, "mkdtemp", watched)
    rc = cli.main(["build", str(board), "-o", str(tmp_path / "out"), "--templates", str(tpl),
                   "--jobs", "1", "--quiet"])
    assert rc == 0
    scratch = [Path(m) for m in made if Path(m).name.startswith(font_scratch.PREFIX)]
    assert scratch and all(m.parent == proj for m in scratch)       # it was used, there
    assert not [p for p in proj.iterdir() if p.name.startswith(font_scratch.PREFIX)]
    assert not [p for p in system_tmp.iterdir() if p.name.startswith("weasyprint-")]
    # weasyprint names an @font-face font after its family ("Own-Serif-Bold").
    assert any("Own-Serif" in name for name in _fonts(tmp_path / "out" / "board.pdf"))


def test_a_read_only_project_folder_falls_back_to_weasyprints_place(tmp_path, monkeypatch):
    # mkdtemp refused in the project folder (a read-only checkout): weasyprint makes
    # its own folder, in the system's temporary folder, as before; close removes it.
    system_tmp = tmp_path / "system-tmp"
    system_tmp.mkdir()
    monkeypatch.setattr(tempfile, "tempdir", str(system_tmp))

    def refused(*args, **kwargs):
        raise PermissionError("read-only")
    monkeypatch.setattr(font_scratch.tempfile, "mkdtemp", refused)
    fonts = font_scratch.ProjectFonts(tmp_path / "proj")
    fonts.add_font_face({"src": [], "font_family": "Own Serif"}, None)   # no source: a warning
    assert fonts._folder is not None and fonts._folder.parent == system_tmp
    fonts.close()
    assert not any(system_tmp.iterdir())


def test_documents_of_the_shipped_templates_share_one_configuration(monkeypatch):
    monkeypatch.setattr(font_scratch, "_SHARED", [])
    with font_scratch.closed(None, shared=True) as first:
        pass
    with font_scratch.closed(None, shared=True) as second:
        pass
    assert second is first
    with font_scratch.closed(None) as own:            # a template's own: a fresh one
        assert own is not first
    # Handed an @font-face font after all: that document keeps it, no later one sees it.
    with font_scratch.closed(None, shared=True) as third:
        assert third is first
        third.add_font_face({"src": [], "font_family": "Own Serif"}, None)  # a warning
    with font_scratch.closed(None, shared=True) as fourth:
        assert fourth is not first and not fourth.spoilt


def test_a_font_handed_to_the_shared_configuration_stays_in_the_project(tmp_path, monkeypatch):
    # Confinement (the project's rule: no file outside the package, the templates
    # and the project folder): even the shared configuration, should a document
    # hand it an @font-face font, keeps the font in that document's project folder
    # and removes it with the document.
    monkeypatch.setattr(font_scratch, "_SHARED", [])
    system_tmp = tmp_path / "system-tmp"
    system_tmp.mkdir()
    monkeypatch.setattr(tempfile, "tempdir", str(system_tmp))
    proj = tmp_path / "proj"
    proj.mkdir()
    with font_scratch.closed(None, shared=True):
        pass                                          # made before, for another project
    with font_scratch.closed(proj, shared=True) as fonts:
        fonts.add_font_face({"src": [], "font_family": "Own Serif"}, None)  # a warning
        assert fonts._folder is not None and fonts._folder.parent == proj
    assert not any(proj.iterdir()) and not any(system_tmp.iterdir())


@pytest.mark.slow
def test_a_shared_configuration_gives_the_bytes_of_a_fresh_one(monkeypatch):
    # The reference: each part with a configuration of its own (cold), as before.
    from rcdoc.note import assemble
    from test_report import EPOCH, make_context
    ctx = make_context()
    head = assemble._head(ctx)
    parts = [({**head, "stages": ctx["stages"][1:]}, "stage"), (ctx, "front"),
             ({**head, "stages": ctx["stages"][:1]}, "stage"),
             (assemble.appendix_context(ctx, ctx["appendix"]), "appendix")]

    def render(order):
        return [assemble.render_part(c, p, source_date_epoch=EPOCH)["pdf"] for c, p in order]

    monkeypatch.setattr(font_scratch, "_SHARED", [])
    shared = render(parts) + render(parts[::-1])  # cold, then warm from the others
    assert len(font_scratch._SHARED) == 1
    closed = font_scratch.closed
    monkeypatch.setattr(font_scratch, "closed", lambda folder, shared=False: closed(folder))
    fresh = render(parts)
    assert shared[:4] == fresh and shared[4:] == fresh[::-1]
