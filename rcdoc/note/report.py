"""Render the design note: a context dict -> HTML (jinja2) -> PDF (weasyprint).

What it is for: turning the report context the pipeline has assembled into a
PDF, confined (only ``data:`` URLs and files inside the template folders and
the project folder may be read), reproducible (same context -> same bytes) and
written atomically (a failed render leaves any earlier PDF untouched).

What it must not do: compute anything about the circuits, decide verdicts,
draw charts or read the project file. It formats what it is given.

The context (the pipeline fills it; every string is plain text and is escaped)::

    {
     "title": "Design note: <board name> rev <revision>",
     "generator": "rcdoc 0.1.0",
     "board": {"name": str, "revision": str, "date": "YYYY-MM-DD",
               "authors": [str], "notes": [paragraph, ...]},
     "status": "pass" | "fail",
     "analysis": [[label, value], ...],
     "summary": {"columns": [str, ...],
                 "rows": [{"id": stage id, "cells": [str, ...]}, ...]},
     "overview_images": [{"image": str | bytes, "title": str}, ...],  # the summary
                        # chart, one per page (at most 25 stages each)
     "overview_image": str | bytes | None,    # the first of them (older templates)
     "stages": [{"id": str, "title": str, "kind": str, "status": "pass"|"fail",
                 "notes": [paragraph, ...],
                 "safety": None | {"voltage": "325 V", "head": "Mains voltage: ...",
                            "items": [str, ...]},   # head optional (rcdoc.note.safety)
                 "caution": None | {"title": "Unstable", "items": [str, ...]},
                 "blocks": [block, ...]}],
     "appendix": [{"title": str, "blocks": [block, ...]}],
     "changes": None | {"title": str, "blocks": [block, ...]},   # after the summary
    }

A block is one of::

    {"type": "figure", "title": str, "image": str | bytes, "caption": str,
     "width": "full"|"half"|"natural"}   # natural: own size, shrunk only to fit
    {"type": "table", "title": str, "columns": [str], "rows": [[str]], "note": str|None}
    {"type": "text", "title": str, "paragraphs": [str]}

Summary rows: the chosen shape is ``{"id": stage id, "cells": [...]}``; the
first cell (the stage title) links to ``#stage-<id>``. A plain list of cells is
accepted too; row *i* then links to ``stages[i]``. In every table a cell equal
to ``"pass"`` or ``"fail"`` becomes a verdict badge and a cell that reads as a
number (``"10.2 kHz"``, ``"-39.8 dB"``, ``"99.7 %"``) is right-aligned.
Keys marked ``| None`` (and ``safety``, ``caution``, ``overview_image(s)``, ``appendix``, ``changes``,
``caption``, ``width``, ``note``, block ``title``) may also be left out.

Figures are embedded as ``<img src="data:image/svg+xml;base64,...">``: on six
matplotlib figures per page it was measured faster than inline ``<svg>`` (see
FIGURE_EMBEDDING), and it keeps each SVG's ids in its own document.
"""

from __future__ import annotations

import base64
import contextlib
import contextvars
import functools
import hashlib
import logging
import mimetypes
import os
import re
from collections.abc import Mapping, Sequence
from datetime import datetime, timezone
from pathlib import Path
from urllib.parse import urlsplit
from urllib.request import url2pathname

import jinja2
import jinja2.bccache
import jinja2.sandbox
from rcdoc.note import renderer_libs  # noqa: F401 - weasyprint, without ctypes' library search
import weasyprint
from markupsafe import Markup, escape
from weasyprint.urls import URLFetcher, URLFetcherResponse

from rcdoc.errors import ProjectError
from rcdoc.files import write_atomic
from rcdoc.note import (compiled_templates, deflate, fast_layout, font_scratch, note_html,
                        pdf_images, table_widths)

__all__ = [
    "render_document",
    "render_html",
    "render_css",
    "make_url_fetcher",
    "shipped_templates_dir",
    "ConfinedFetcher",
]

LOG = logging.getLogger(__name__)

#: One image cache for every document rendered in this process (weasyprint
#: parses each distinct image once; the stack notes advise sharing it).
cache: dict = {}

#: "img" embeds each figure as a base64 data: URL, "inline" pastes the <svg>.
#: Measured on one stage of six matplotlib SVG figures (6 pages, CPU time of a
#: fresh process, three runs each): "img" 2.0-2.4 s, "inline" 3.3-3.8 s; the
#: two PDFs came out byte-identical. "img" also keeps each figure's ids to itself.
FIGURE_EMBEDDING = "img"

_TEMPLATE_NAME = "note.html"

#: The PNG figures of the HTML being rendered (URL -> PNG bytes), when its caller
#: will hand them to weasyprint through the image cache (render_html(figures=...)).
_FIGURES: contextvars.ContextVar[dict | None] = contextvars.ContextVar("figures", default=None)


# --------------------------------------------------------------------------
# Where the templates are


def shipped_templates_dir() -> Path:
    """The templates folder that comes with rcdoc.

    A wheel ships it as package data at ``rcdoc/templates``; an editable
    install (or a checkout) has it at ``<repo root>/templates``.
    """
    package_dir = Path(__file__).resolve().parent.parent
    for candidate in (package_dir / "templates", package_dir.parent / "templates"):
        if (candidate / _TEMPLATE_NAME).is_file():
            return candidate
    raise FileNotFoundError(
        f"rcdoc's templates are missing: looked in {package_dir / 'templates'} "
        f"and {package_dir.parent / 'templates'}"
    )


# --------------------------------------------------------------------------
# Confined fetching


class ConfinedFetcher(URLFetcher):
    """A weasyprint URL fetcher that serves ``data:`` URLs and local files
    inside the allowed folders, and refuses everything else.

    ``fetched`` lists the URLs served, ``refused`` the URLs turned down; both
    are kept so tests (and curious users) can see what the renderer asked for.
    A refusal raises, which weasyprint logs through the ``logging`` module and
    then skips the resource.
    """

    def __init__(self, allowed_dirs: Sequence[Path]):
        # No network handlers are ever used: fetch() below never calls urllib
        # except for the in-memory data: handler.
        super().__init__(allowed_protocols=("data", "file"))
        self.allowed_dirs = tuple(Path(d).resolve() for d in allowed_dirs)
        self.fetched: list[str] = []
        self.refused: list[str] = []

    def _refuse(self, url: str, why: str) -> None:
        self.refused.append(url)
        LOG.info("refused to fetch %s: %s", url[:200], why)
        raise PermissionError(f"rcdoc does not fetch {url[:200]}: {why}")

    def _inside(self, path: Path) -> bool:
        return any(path.is_relative_to(d) for d in self.allowed_dirs)

    def fetch(self, url, headers=None):  # noqa: D401 - weasyprint's signature
        scheme = url.split(":", 1)[0].lower() if ":" in url else ""
        if scheme == "data":
            response = super().fetch(url, headers)
            self.fetched.append(url[:64])
            return response
        if scheme != "file":
            self._refuse(url, "only data: URLs and files in the template or project folders")
        parts = urlsplit(url)
        if parts.netloc not in ("", "localhost"):
            self._refuse(url, "not a local file")
        # resolve() follows every symlink, so a link pointing out of an
        # allowed folder is judged by where it really leads.
        try:
            path = Path(url2pathname(parts.path)).resolve()
        except (OSError, ValueError, RuntimeError):
            self._refuse(url, "not a usable path")
        if not self._inside(path):
            self._refuse(url, "outside the template and project folders")
        if not path.is_file():
            # Refuse devices, fifos and folders (a fifo would hang the render).
            self._refuse(url, "not a regular file")
        self.fetched.append(url)
        mime = mimetypes.guess_type(path.name)[0] or "application/octet-stream"
        return URLFetcherResponse(
            path.as_uri(), body=path.read_bytes(), headers={"Content-Type": mime}
        )


def make_url_fetcher(allowed_dirs: Sequence[Path]) -> ConfinedFetcher:
    """A fetcher confined to ``allowed_dirs`` (see ConfinedFetcher)."""
    return ConfinedFetcher(allowed_dirs)


# --------------------------------------------------------------------------
# Template helpers

# A number, optionally signed or bounded, optionally a range, then a short
# unit: "10.2 kHz", "-39.8 dB", "≤ 1.2 mW", "99.7 %", "9.65 – 10.9 kHz", "1e-3".
_NUMBER = r"[+\-−±]?\d+(?:[.,]\d+)?(?:[eE][+\-−]?\d+)?"
_NUMERIC_RE = re.compile(
    rf"^\s*(?:[<>≤≥≈~]\s*)?{_NUMBER}(?:\s*(?:–|-|…|\.\.|to)\s*{_NUMBER})?"
    r"\s*[%°µΩa-zA-Z/·²]{0,10}\s*$"
)


def _is_numeric(cell) -> bool:
    return isinstance(cell, (int, float)) or (
        isinstance(cell, str) and bool(_NUMERIC_RE.match(cell))
    )


def _is_verdict(cell) -> bool:
    return cell in ("pass", "fail")


_XML_PROLOG_RE = re.compile(r"^\s*(?:<\?xml[^>]*\?>\s*)?(?:<!DOCTYPE[^>]*>\s*)?", re.S)


def _figure_markup(svg: str | bytes, alt: str = "") -> Markup:
    """The HTML that shows one figure: SVG text, or PNG bytes (charts are
    raster: weasyprint lays out a chart's thousands of SVG paths about twenty
    times slower than the same chart as a PNG). Figures come from rcdoc's chart
    and schematic modules, never from the user's file."""
    if isinstance(svg, bytes):
        figures = _FIGURES.get()
        if figures is not None and pdf_images.palette_png(svg) is not None:
            # A short URL: the image waits in weasyprint's image cache (figure_images),
            # so the HTML parser never walks the base64 of every chart.
            url = pdf_images.FIGURE_SCHEME + hashlib.sha256(svg).hexdigest()
            figures[url] = svg
            return Markup('<img class="chart" src="{}" alt="{}" />').format(url, alt)
        data = base64.b64encode(svg).decode("ascii")
        return Markup('<img class="chart" src="data:image/png;base64,{}" alt="{}" />').format(
            Markup(data), alt)
    if FIGURE_EMBEDDING == "inline":
        return Markup(_XML_PROLOG_RE.sub("", svg, count=1))
    figures = _FIGURES.get()
    if figures is not None and "<text" not in svg:
        # The schematics (text as outlines) too wait in the image cache: their base64
        # was two thirds of a stage's HTML, and the HTML parser walked every character
        # of it. An SVG with text elements needs the document's fonts: a data: URL.
        url = pdf_images.FIGURE_SCHEME + hashlib.sha256(svg.encode("utf-8")).hexdigest()
        figures[url] = svg
        return Markup('<img class="chart" src="{}" alt="{}" />').format(url, alt)
    data = base64.b64encode(svg.encode("utf-8")).decode("ascii")
    return Markup('<img class="chart" src="data:image/svg+xml;base64,{}" alt="{}" />').format(
        Markup(data), alt
    )


_QUANTITY_RE = re.compile(
    r"(?<![\w.])([+\-−±]?\d[\d.,]*(?:[eE][+\-−]?\d+)?)"  # a number
    r" ([^\s\d&<;,()][^\s<&;,()]{0,7})(?=$|[\s,;)&])"     # a space and a short unit
)


def _keep_units(cell, kind: str | None = None) -> Markup:
    """Escape a table cell and keep each number with its unit on one line
    ("546 µs" never breaks between 546 and µs); the text itself is unchanged.
    ``kind``: the cell's classes; a cell that does not wrap at all ("nw", "num")
    needs no span (a fifth of a stage's elements, each styled and laid out)."""
    escaped = str(escape(cell))
    if kind and {"nw", "num"} & set(str(kind).split()):
        return Markup(escaped)
    return Markup(_QUANTITY_RE.sub(r'<span class="nw">\1 \2</span>', escaped))


def _column_kinds(columns: Sequence, rows: Sequence[Sequence]) -> list[str]:
    """Per column: "verdict" when every filled cell is pass/fail, "num" when
    every filled non-verdict cell reads as a number (right-aligned), else ""."""
    kinds = []
    for j in range(len(columns)):
        cells = [r[j] for r in rows if j < len(r) and str(r[j]).strip() not in ("", "—", "-", "–")]
        values = [c for c in cells if not _is_verdict(c)]
        if cells and not values:
            kinds.append("verdict")
        elif values and all(_is_numeric(c) for c in values):
            kinds.append("num")
        else:
            kinds.append("")
    return kinds


def _layout_rows(blocks: Sequence[Mapping]) -> list[list[Mapping]]:
    """Blocks in rows: two consecutive half-width figures share a row, every
    other block has a row of its own."""
    rows: list[list[Mapping]] = []
    for block in blocks or []:
        half = block.get("type") == "figure" and block.get("width") == "half"
        if half and rows and len(rows[-1]) == 1 and rows[-1][0].get("_half"):
            rows[-1] = [rows[-1][0]["block"], block]
            continue
        rows.append([{"_half": True, "block": block}] if half else [block])
    return [[r[0]["block"]] if "_half" in r[0] else r for r in rows]


def _summary_rows(context: Mapping) -> list[dict]:
    """Summary rows as ``{"id": ..., "cells": [...]}`` whatever shape came in."""
    stages = context.get("stages") or []
    rows = []
    for i, row in enumerate((context.get("summary") or {}).get("rows") or []):
        if isinstance(row, Mapping):
            rows.append({"id": row.get("id"), "cells": list(row.get("cells") or [])})
        else:
            sid = stages[i].get("id") if i < len(stages) else None
            rows.append({"id": sid, "cells": list(row)})
    return rows


def _palette_css() -> str:
    """CSS custom properties from rcdoc.note.palette.CSS_VARS, if present,
    so the note and the charts share one palette; note.css has fallbacks."""
    try:
        from rcdoc.note import palette  # noqa: PLC0415 - optional module
    except ImportError:
        return ""
    css_vars = getattr(palette, "CSS_VARS", None)
    if isinstance(css_vars, str):
        return css_vars
    if isinstance(css_vars, Mapping):
        decls = "".join(
            f"{k if k.startswith('--') else '--' + k}: {v}; " for k, v in css_vars.items()
        )
        return f":root {{ {decls}}}"
    return ""


@contextlib.contextmanager
def _font_timestamp(epoch: int):
    """Pin the time fontTools writes into each subset font's ``head.modified``.

    Without HarfBuzz-subset weasyprint subsets fonts with fontTools, which
    stamps the current time into every embedded font unless
    SOURCE_DATE_EPOCH is set (fontTools.misc.timeTools.timestampNow); that
    alone made two renders of one context differ. The variable is set only
    for the duration of the write (rendering runs one document per process
    at a time, so the process-wide change is not raced).
    """
    old = os.environ.get("SOURCE_DATE_EPOCH")
    os.environ["SOURCE_DATE_EPOCH"] = str(int(epoch))
    try:
        yield
    finally:
        if old is None:
            del os.environ["SOURCE_DATE_EPOCH"]
        else:
            os.environ["SOURCE_DATE_EPOCH"] = old


def _w3c_date(epoch: int) -> str:
    return datetime.fromtimestamp(int(epoch), tz=timezone.utc).strftime("%Y-%m-%dT%H:%M:%SZ")


def pdf_identifier(board_name: str, revision: str) -> bytes:
    """A fixed PDF /ID: the first 32 hex digits of SHA-256 of board name and revision, so a
    re-render of the same board revision keeps its identity (and its bytes)."""
    digest = hashlib.sha256(f"{board_name}\x00{revision}".encode("utf-8")).hexdigest()
    return digest[:32].encode("ascii")


# --------------------------------------------------------------------------
# Rendering


class _ConfinedLoader(jinja2.FileSystemLoader):
    """A file loader that will not follow a link out of its template folders."""

    def get_source(self, environment, template):
        source, filename, uptodate = super().get_source(environment, template)
        real = Path(filename).resolve()
        if not any(real.is_relative_to(Path(d).resolve()) for d in self.searchpath):
            raise jinja2.TemplateNotFound(f"{template} (it leads outside the template folders)")
        return source, filename, uptodate


class _Precompiled(jinja2.BytecodeCache):
    """jinja2's bytecode cache interface, for one thing: the code of a shipped
    template compiled ahead (rcdoc.note.compiled_templates: the same code,
    bytecode kept by Python's imports), where the template read is that
    template, unchanged, from the shipped folder. Nothing is ever stored."""

    def __init__(self, shipped: Path, settings: str):
        self.shipped, self.settings = shipped, settings

    def get_bucket(self, environment, name, filename, source):
        bucket = jinja2.bccache.Bucket(environment, "", self.get_source_checksum(source))
        if filename is not None and Path(filename).parent == self.shipped:
            bucket.code = compiled_templates.code(name, bucket.checksum, filename,
                                                  self.settings, jinja2.__version__)
        return bucket

    def load_bytecode(self, bucket) -> None:
        pass

    def dump_bytecode(self, bucket) -> None:
        pass

    def set_bucket(self, bucket) -> None:
        pass


def _codegen_settings(env: jinja2.Environment) -> str:
    """What of an environment shapes the code jinja2 makes of a template."""
    names = ("block_start_string", "block_end_string", "variable_start_string",
             "variable_end_string", "comment_start_string", "comment_end_string",
             "line_statement_prefix", "line_comment_prefix", "trim_blocks", "lstrip_blocks",
             "newline_sequence", "keep_trailing_newline", "optimized", "autoescape",
             "sandboxed", "is_async")
    return repr((type(env).__name__, *(getattr(env, n) for n in names),
                 sorted(env.extensions), sorted(env.filters), sorted(env.tests)))


def _environment(search_path: Sequence[Path]) -> jinja2.Environment:
    # One environment per template search path and process: it keeps the
    # compiled templates (compiling them for every part of the note took a
    # twentieth of its render); jinja2 reloads a template whose file changed.
    return _made_environment(tuple(Path(p) for p in search_path))


@functools.lru_cache(maxsize=8)
def _made_environment(search_path: tuple[Path, ...]) -> jinja2.Environment:
    # Every template (shipped or --templates) runs in jinja2's immutable
    # sandbox: no attribute starting with "_", no Python internals (globals,
    # code, frames), no str.format escape, no mutation of lists or dicts. A
    # template folder from a pull request cannot reach the environment, files
    # or processes; what it tries ends as a SecurityError, reported as a
    # template error with its file and line.
    env = jinja2.sandbox.ImmutableSandboxedEnvironment(
        loader=_ConfinedLoader([str(p) for p in search_path]),
        autoescape=True,  # everything: a user's text may hold HTML
        undefined=jinja2.StrictUndefined,  # a misspelt name is an error, not blank
        trim_blocks=True,
        lstrip_blocks=True,
        keep_trailing_newline=True,
    )
    env.tests["numeric"] = _is_numeric
    env.tests["verdict"] = _is_verdict
    env.filters["figure"] = _figure_markup
    env.filters["layout_rows"] = _layout_rows
    env.filters["keep_units"] = _keep_units
    env.globals["column_kinds"] = _column_kinds
    env.globals["column_widths"] = table_widths.widths
    env.bytecode_cache = _Precompiled(search_path[-1], _codegen_settings(env))
    return env


def _template_frame(tb, template_dirs: Sequence[Path]):
    """The innermost traceback frame that ran template code: (file, line)."""
    found = None
    dirs = [str(d).rstrip(os.sep) + os.sep for d in template_dirs]
    while tb is not None:
        filename = tb.tb_frame.f_code.co_filename
        if any(filename.startswith(d) for d in dirs):
            found = (filename, tb.tb_lineno)
        tb = tb.tb_next
    return found


def _search_path(template_dirs: Sequence[Path]) -> list[Path]:
    """User template folders first, then the shipped one."""
    for d in template_dirs:
        if not Path(d).is_dir():
            raise ProjectError("template folder not found", file=str(d))
    return [Path(d).resolve() for d in template_dirs] + [shipped_templates_dir()]


def render_html(
    context: Mapping,
    *,
    template_dirs: Sequence[Path] = (),
    source_date_epoch: int | None = None,
    figures: dict | None = None,
) -> str:
    """The note as an HTML string (templates/note.html rendered with context).

    With ``figures`` (a dict), palette PNG and SVG figures are referred to by a
    short ``rcdoc-figure:`` URL and put in ``figures`` (URL -> PNG bytes or SVG
    text) for ``figure_images``; without it every figure is a ``data:`` URL.
    Template mistakes (syntax, undefined names, missing templates) raise
    ProjectError naming the template file and line.
    """
    search_path = _search_path(template_dirs)
    env = _environment(search_path)
    extra = _extras(context, source_date_epoch)
    token = _FIGURES.set(figures)
    try:
        template = env.get_template(_TEMPLATE_NAME)
        return template.render({**context, **extra})
    except jinja2.TemplateSyntaxError as exc:
        where = exc.filename or exc.name or _TEMPLATE_NAME
        raise ProjectError(f"line {exc.lineno}: {exc.message}", file=where) from exc
    except jinja2.TemplateNotFound as exc:
        frame = _template_frame(exc.__traceback__, search_path)
        where, line = frame if frame else (_TEMPLATE_NAME, None)
        at = f"line {line}: " if line else ""
        raise ProjectError(
            f"{at}template {exc.name!r} not found in {', '.join(map(str, search_path))}",
            file=where,
        ) from exc
    except Exception as exc:  # noqa: BLE001 - sorted out below
        frame = _template_frame(exc.__traceback__, search_path)
        user_dirs = [str(Path(d).resolve()) for d in template_dirs]
        from_user = frame is not None and any(
            frame[0].startswith(d.rstrip(os.sep) + os.sep) for d in user_dirs
        )
        if isinstance(exc, jinja2.TemplateError) or from_user:
            where, line = frame if frame else (_TEMPLATE_NAME, "?")
            message = getattr(exc, "message", None) or str(exc)
            raise ProjectError(
                f"line {line}: {type(exc).__name__}: {message}", file=where
            ) from exc
        raise  # a bug in rcdoc (context or shipped template), not the user's
    finally:
        _FIGURES.reset(token)


def _extras(context: Mapping, source_date_epoch: int | None) -> dict:
    """What the templates see besides the context (note.html and note.css alike)."""
    return {
        "created": _w3c_date(source_date_epoch) if source_date_epoch is not None else None,
        "summary_rows": _summary_rows(context),
        "palette_css": Markup(_palette_css()),
    }


def render_css(context: Mapping, *, template_dirs: Sequence[Path] = (),
               source_date_epoch: int | None = None) -> str:
    """The CSS that note.html puts in its <style> ahead of the part's own rules: the
    palette and note.css (a template too), rendered with ``context`` as note.html does."""
    env = _environment(_search_path(template_dirs))
    extra = _extras(context, source_date_epoch)
    css = env.get_template("note.css").render({**context, **extra})
    return f"{extra['palette_css']}\n{css}"


def figure_images(figures: Mapping[str, bytes], cache: dict) -> dict:
    """``cache`` (weasyprint's image cache, URL -> image) with an image for each
    figure of ``figures`` (from render_html) it lacks; returns ``cache``."""
    for url, data in figures.items():
        if url not in cache:
            cache[url] = (pdf_images.svg_image(url, data) if isinstance(data, str)
                          else pdf_images.IndexedPNG(url, data))
    return cache


def epoch_of(source_date_epoch: int | None) -> int | None:
    """The note's date: as given, else ``SOURCE_DATE_EPOCH`` from the environment, else None."""
    if source_date_epoch is None and os.environ.get("SOURCE_DATE_EPOCH", "").strip():
        try:
            return int(os.environ["SOURCE_DATE_EPOCH"])
        except ValueError as exc:
            raise ProjectError(
                f"SOURCE_DATE_EPOCH must be whole seconds, got {os.environ['SOURCE_DATE_EPOCH']!r}"
            ) from exc
    return source_date_epoch


def render_document(context: dict, out_path: Path, *, template_dirs: Sequence[Path] = (),
                    project_dir: Path | None = None,
                    source_date_epoch: int | None = None) -> None:
    """Render the note as one document and write it atomically to ``out_path``
    (rcdoc.note.pdf.render_pdf chooses between this and the note in parts).

    ``template_dirs`` are searched before the shipped templates. Files may be
    read only from those folders and ``project_dir``. ``source_date_epoch``
    (seconds, UTC) dates the PDF; without it the PDF carries no dates.
    """
    figures: dict = {}
    html = render_html(context, template_dirs=template_dirs,
                       source_date_epoch=source_date_epoch, figures=figures)
    search_path = _search_path(template_dirs)
    allowed = list(search_path) + ([Path(project_dir)] if project_dir is not None else [])
    fetcher = make_url_fetcher(allowed)
    board = context.get("board") or {}
    # Relative URLs in a template resolve against the folder of the first
    # note.html found, where an override's own assets live.
    base = next(d for d in search_path if (d / _TEMPLATE_NAME).is_file())
    html_class = note_html.html_class(template_dirs, search_path[-1])
    document = html_class(string=html, base_url=str(base) + os.sep, url_fetcher=fetcher)
    fast_layout.install()                   # weasyprint 70's short paths, same PDF
    deflate.install()                       # page streams at deflate level 4
    pdf_id = pdf_identifier(str(board.get("name", "")), str(board.get("revision", "")))

    with _font_timestamp(source_date_epoch or 0), font_scratch.closed(project_dir) as fonts:
        pdf_bytes = document.write_pdf(pdf_identifier=pdf_id, font_config=fonts,
                                       cache=figure_images(figures, cache),
                                       finisher=pdf_images.index_images)  # charts indexed again
    write_note(out_path, pdf_bytes)


def write_note(out_path: Path, data: bytes) -> None:
    """Write the note atomically; a file-system failure is the user's to fix (exit 2)."""
    try:
        write_atomic(Path(out_path), data)
    except OSError as exc:
        raise ProjectError(f"cannot write the note: {exc.strerror or exc}",
                           file=str(out_path)) from exc
