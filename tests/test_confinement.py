"""Confined rendering: a hostile project and template override read nothing outside.

The note's HTML is printed by weasyprint, which would otherwise follow any URL
in the document (files anywhere, the network). rcdoc hands it a fetcher
(rcdoc.note.report.make_url_fetcher) that serves data: URLs and files inside the
template folders and the project folder only, and escapes every user string.

This test builds a note end to end through the command line from a project
whose board name, notes and stage title hold HTML and file/network URLs, with
a user template override whose CSS points at files outside, at a symbolic link
leading outside and at the network. It then checks three things:

1. the HTML comes out as literal text in the PDF;
2. the fetcher refused every outside URL and served only allowed ones;
3. a Python audit hook (PEP 578) watching every file opened and every socket
   during the build saw no file outside the allowed places opened, nothing
   written outside the output folder, and no network use at all.
"""

from __future__ import annotations

import os
import shutil
import sys
from pathlib import Path

import matplotlib
import pytest
from pypdf import PdfReader

from rcdoc.commands import cli

from rcdoc.note import report

# ------------------------------------------------------------------ the audit hook

_WATCH: list | None = None          # events are recorded only while a list is set here


def _hook(event, args):
    if _WATCH is None:
        return
    if event == "open":
        path, mode, flags = args
        if mode is None:            # os.open: the flags say whether it writes
            writes = flags & (os.O_WRONLY | os.O_RDWR | os.O_CREAT | os.O_APPEND)
            mode = "w" if writes else "r"
        if isinstance(path, (str, bytes, os.PathLike)):
            _WATCH.append(("open", os.fsdecode(path), mode))
    elif event == "urllib.Request":
        _WATCH.append((event, str(args[0])[:200], ""))
    elif event.startswith("socket.") or event == "http.client.connect":
        _WATCH.append((event, repr(args)[:200], ""))


_HOOKED = False


def _install_hook():
    global _HOOKED
    if not _HOOKED:                 # audit hooks cannot be removed; add ours once
        sys.addaudithook(_hook)
        _HOOKED = True


# A 1×1 PNG (inside the template folder: allowed, and must be served).
PNG = bytes.fromhex(
    "89504e470d0a1a0a0000000d4948445200000001000000010806000000"
    "1f15c4890000000d49444154789c6360f8cf00000301010018dd8db00000000049454e44ae426082")

BOARD_NAME = 'Pump <b>bold</b> & "co" <img src="file:///etc/hostname">'
NOTES = ('See <link rel="stylesheet" href="http://example.invalid/x.css"> and '
         '<img src="file://{secret}"> and <iframe src="file:///etc/hostname"></iframe>.')
TITLE = "<script>alert(1)</script> ADC <i>filter</i>"


def _toml_string(text: str) -> str:
    return '"' + text.replace("\\", "\\\\").replace('"', '\\"') + '"'


@pytest.fixture
def hostile(tmp_path):
    outside = tmp_path / "outside"
    outside.mkdir()
    secret = outside / "secret.css"
    secret.write_text("body { color: red }", encoding="utf-8")
    secret_png = outside / "secret.png"
    secret_png.write_bytes(PNG)

    proj_dir = tmp_path / "proj"
    proj_dir.mkdir()
    proj = proj_dir / "board.toml"
    proj.write_text(
        "[board]\n"
        f"name = {_toml_string(BOARD_NAME)}\n"
        'revision = "A"\ndate = "2026-01-01"\n'
        f"notes = {_toml_string(NOTES.format(secret=secret))}\n"
        "[analysis]\nsamples = 20\n"
        "[[stage]]\n"
        'id = "adc0"\n'
        f"title = {_toml_string(TITLE)}\n"
        'notes = "<a href=\\"file:///etc/hostname\\">link</a>"\n'
        'kind = "rc-lowpass"\n'
        'parts.r = { ref = "R1", value = "4k7" }\n'
        'parts.c = { ref = "C1", value = "10 nF" }\n',
        encoding="utf-8")

    # The override: the shipped cover with a style block that reaches out.
    tpl = tmp_path / "tpl"
    tpl.mkdir()
    shipped = report.shipped_templates_dir()
    (tpl / "ok.png").write_bytes(PNG)
    # Relative URLs resolve against the folder of the note.html in use, so the
    # override carries a copy of it (README, "Templates").
    shutil.copy(shipped / "note.html", tpl / "note.html")
    os.symlink(secret_png, tpl / "link.png")
    style = (
        "<style>\n"
        f'@import url("file://{secret}");\n'
        '@import url("http://example.invalid/import.css");\n'
        "@font-face { font-family: evil; src: url(\"file:///etc/hostname\"); }\n"
        "html { background-image: url(\"ok.png\"); }\n"
        f"body {{ background-image: url(\"file://{secret_png}\"); }}\n"
        ".cover { background-image: url(\"link.png\"); }\n"
        ".board-name { background-image: url(\"../outside/secret.png\"); }\n"
        ".kicker { background-image: url(\"http://example.invalid/bg.png\"); }\n"
        "</style>\n")
    (tpl / "_cover.html").write_text(
        style + (shipped / "_cover.html").read_text(encoding="utf-8"), encoding="utf-8")
    return {"proj": proj, "tpl": tpl, "outside": outside, "secret": secret,
            "secret_png": secret_png, "out": tmp_path / "out", "shipped": shipped}


def _under(path: str, folders) -> bool:
    p = Path(os.path.abspath(path))
    return any(p.is_relative_to(Path(f).resolve()) or p.is_relative_to(Path(f).absolute())
               for f in folders)


@pytest.mark.slow
def test_hostile_text_and_override_read_nothing_outside(hostile, monkeypatch):
    fetchers = []
    real = report.make_url_fetcher

    def spy(dirs):
        fetcher = real(dirs)
        fetchers.append(fetcher)
        return fetcher
    monkeypatch.setattr(report, "make_url_fetcher", spy)

    global _WATCH
    _install_hook()
    events: list = []
    _WATCH = events
    try:
        rc = cli.main(["build", str(hostile["proj"]), "-o", str(hostile["out"]),
                       "--templates", str(hostile["tpl"]), "--quiet", "--jobs", "1"])
    finally:
        _WATCH = None
    assert rc in (0, 1)

    # 1. User text is literal text in the note.
    pdf = hostile["out"] / "board.pdf"
    text = "".join(page.extract_text() for page in PdfReader(pdf).pages)
    flat = " ".join(text.split())
    for literal in ("Pump <b>bold</b> & \"co\"", '<img src="file:///etc/hostname">',
                    '<link rel="stylesheet" href="http://example.invalid/x.css">',
                    "<script>alert(1)</script> ADC <i>filter</i>",
                    '<a href="file:///etc/hostname">link</a>'):
        assert literal in flat, f"{literal!r} is not in the note's text"

    # 2. The fetcher served only data: URLs and files in the allowed folders,
    #    and refused everything that leads outside.
    (fetcher,) = fetchers
    allowed = [hostile["tpl"], hostile["shipped"], hostile["proj"].parent]
    served_files = [u for u in fetcher.fetched if not u.startswith("data:")]
    assert all(u.startswith("file://") for u in served_files)
    assert all(_under(u[len("file://"):], allowed) for u in served_files)
    assert any(u.endswith("/tpl/ok.png") for u in served_files)   # the allowed one was served
    refused = " ".join(fetcher.refused)
    for url in (f"file://{hostile['secret']}", "http://example.invalid/import.css",
                "file:///etc/hostname", f"file://{hostile['secret_png']}", "link.png",
                "outside/secret.png", "http://example.invalid/bg.png"):
        assert url in refused, f"{url} was not refused"
    # User text never became a request: the escaped URLs are not even asked for.
    assert "example.invalid/x.css" not in refused

    # 3. What the process really opened while building (the audit hook).
    opened = [(p, m) for kind, p, m in events if kind == "open"]
    assert opened, "the audit hook saw nothing; it is not watching"
    forbidden = [hostile["outside"], Path("/etc/hostname")]
    assert not [p for p, _ in opened if _under(p, forbidden)
                or _under(os.path.realpath(p), forbidden)]
    # Reads: the project, the templates, rcdoc and its libraries (Python's
    # prefix), matplotlib's own cache and configuration. Writes: the output folder only.
    readable = allowed + [hostile["out"], sys.prefix, sys.base_prefix,
                          Path(__file__).resolve().parents[1],
                          matplotlib.get_cachedir(), matplotlib.get_configdir()]
    # The scratch folder for @font-face fonts (the hostile cover has one) is made in
    # the project folder, not the system's temporary folder (rcdoc.note.font_scratch).
    strays = [p for p, m in opened if not _under(p, readable)]
    assert not strays, f"opened outside the allowed places: {strays[:5]}"
    writes = [p for p, m in opened if any(c in str(m) for c in "wax+")]
    assert writes and all(_under(p, [hostile["out"]]) for p in writes), writes
    # data: URLs go through urllib's in-memory handler; anything else is the network.
    requests = [url for kind, url, _ in events if kind == "urllib.Request"]
    assert all(url.startswith("data:") for url in requests), requests
    sockets = [e for e in events if e[0].startswith(("socket.", "http."))]
    assert not sockets, sockets


def test_fetcher_refuses_a_folder_a_fifo_and_a_parent_escape(tmp_path):
    # The fetcher on its own: a fifo inside an allowed folder would hang the
    # render if opened; "..", a folder and a foreign host are refused as well.
    inside = tmp_path / "inside"
    inside.mkdir()
    (inside / "a.css").write_text("p {}", encoding="utf-8")
    os.mkfifo(inside / "pipe.css")
    (tmp_path / "secret.css").write_text("p {}", encoding="utf-8")
    fetch = report.make_url_fetcher([inside])
    assert fetch.fetch((inside / "a.css").as_uri())
    for url in ((inside / "pipe.css").as_uri(), inside.as_uri(),
                f"file://{inside}/../secret.css", "file://otherhost/etc/hostname",
                "ftp://example.invalid/x", "https://example.invalid/x"):
        with pytest.raises(Exception):
            fetch.fetch(url)
        assert fetch.refused[-1] == url
    assert fetch.fetched == [(inside / "a.css").as_uri()]
    shutil.rmtree(inside)


def test_a_template_link_leading_outside_is_not_followed(tmp_path):
    # A --templates folder holding a symbolic link to a file elsewhere must not
    # make jinja read that file (common practice: confine by resolved path).
    import jinja2

    from rcdoc.note.report import _environment
    secret = tmp_path / "elsewhere" / "secret.html"
    secret.parent.mkdir()
    secret.write_text("SECRET", encoding="utf-8")
    user = tmp_path / "templates"
    user.mkdir()
    (user / "_cover.html").symlink_to(secret)
    env = _environment([user])
    with pytest.raises(jinja2.TemplateNotFound):
        env.get_template("_cover.html")
