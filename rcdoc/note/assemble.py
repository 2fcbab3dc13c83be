"""The note in parts: render each part with weasyprint, join the parts (rcdoc.note.join).

What it is for: a rebuild after one value change should not lay out the whole
note again. The note is rendered as separate documents ("parts"): the front
matter (cover and summary), one part per stage, and the appendix. A stage's
part depends only on that stage (and the board, templates, date, versions),
so it is rendered in the worker that analyses and draws the stage and filed
in the build cache with it (rcdoc.commands.build, rcdoc.commands.cache). ``assemble``
(rcdoc.note.join) then concatenates the parts' pages and adds what spans the whole note:

- "page x of y": the parts are rendered with that footer box empty; one more
  document of N empty pages (note.html, part "numbers", same CSS) holds only
  the page numbers, and each of its pages is laid over the matching page as
  a form XObject (ISO 32000-1 §8.10), so the text stays extractable;
- the outline: each part's bookmark tree, in order (ISO 32000-1 §12.3.3);
- the links of the front matter to each stage's first page (§12.5.6.5);
- the document information dictionary of the front part (title, author,
  subject, creator, dates) and the fixed first /ID of report.pdf_identifier.

Parts are used only when note.html is the shipped one or an identical copy
(it knows the parts); an own note.html is rendered as one document
(rcdoc.note.pdf.render_pdf).

What it must not do: build contexts, decide what goes in the note, or write
files; it turns contexts into PDF bytes.
"""

from __future__ import annotations

import functools

import hashlib
import json
import os
from collections.abc import Mapping, Sequence
from pathlib import Path

from rcdoc.note import renderer_libs  # noqa: F401 - weasyprint, without ctypes' library search
import weasyprint

from rcdoc.note import deflate, fast_layout, font_scratch, glyphs, note_html, pdf_images, report
from rcdoc.note.overview import own_pages

__all__ = ["can_assemble", "templates_fingerprint", "chunk_key", "chunk_keys", "font_subsetter",
           "render_part", "stage_part", "assemble", "render_note", "project_head", "context_key",
           "appendix_context", "front_context", "charts_context"]

# Bump when what a part holds changes.
# 2: charts as indexed images; 3: missing_glyphs; 4: streams at deflate level 6;
# 5: a schematic's numbers written as pydyf writes them ("0", not "-0"), streams at level 4
_PART_FORMAT = "rcdoc-note-part-5"


def can_assemble(template_dirs: Sequence[Path] = ()) -> bool:
    """True when the note.html in use is the shipped one, or a byte-identical
    copy (README: an override with assets of its own carries a copy); only
    that file knows how to render the parts."""
    search = report._search_path(template_dirs)
    first = next(d for d in search if (d / report._TEMPLATE_NAME).is_file())
    shipped = report.shipped_templates_dir()
    if first == shipped:
        return True
    used = first / report._TEMPLATE_NAME
    if not used.resolve().is_relative_to(first):     # a link leading out: not read here
        return False
    try:
        return used.read_bytes() == (shipped / report._TEMPLATE_NAME).read_bytes()
    except OSError:
        return False


def templates_fingerprint(template_dirs: Sequence[Path] = ()) -> str:
    """Hash of every file in the template folders in use (names and bytes, in order)."""
    h = hashlib.sha256()
    for d in report._search_path(template_dirs):
        h.update(str(d).encode() + b"\0")
        files = []
        for top, dirs, names in os.walk(d):       # links to folders are not followed
            dirs.sort()
            files += [Path(top) / name for name in names]
        for path in sorted(files):
            h.update(path.relative_to(d).as_posix().encode() + b"\0")
            # Read only what the renderer may read: regular files that really
            # lie inside the folder (a link leading out is hashed by name only).
            real = path.resolve()
            if real.is_relative_to(d) and real.is_file():
                try:
                    h.update(real.read_bytes() + b"\0")
                except OSError:
                    h.update(b"?\0")
            else:
                h.update(b"-\0")
    return h.hexdigest()


def chunk_key(stage_key: str, template_dirs: Sequence[Path], epoch: int | None,
              project_dir: Path | None) -> str:
    """The key of a stage's part: its stage key (stage, analysis, board, rcdoc's
    code) plus the templates, the date that goes into the fonts, the project
    folder (files a template may read), the renderer's versions and the font
    subsetter that ran (font_subsetter)."""
    return chunk_keys([stage_key], template_dirs, epoch, project_dir)[0]


def chunk_keys(stage_keys: Sequence[str], template_dirs: Sequence[Path], epoch: int | None,
               project_dir: Path | None) -> list[str]:
    """chunk_key of each of ``stage_keys``: the templates are read once for all."""
    common = [templates_fingerprint(template_dirs), str(epoch),
              str(Path(project_dir).resolve()) if project_dir else "", *_renderer_id()]
    return [hashlib.sha256("\0".join([_PART_FORMAT, key, *common]).encode("utf-8")).hexdigest()
            for key in stage_keys]


@functools.lru_cache(maxsize=1)
def _renderer_id() -> tuple[str, ...]:
    """The renderer's library versions and the font subsetter: fixed for a
    process, and read once (rcdoc.versions)."""
    from rcdoc.versions import version
    versions = []
    for name, package in (("weasyprint", None), ("pydyf", None), ("fonttools", "fontTools")):
        try:
            versions.append(f"{name}={version(name, package)}")
        except Exception:  # noqa: BLE001 - a missing library is part of the key too
            versions.append(f"{name}=?")
    return (*versions, font_subsetter())


def font_subsetter() -> str:
    """Which font subsetter weasyprint runs in this process, with its version:
    "harfbuzz <version>" (HarfBuzz's subsetting library, 4.1 or later, as
    weasyprint requires) or "fonttools <version>". The two write different
    font bytes, so a part's key records which one made it."""
    try:
        from weasyprint.text.ffi import harfbuzz, harfbuzz_subset
        if harfbuzz_subset and harfbuzz.hb_version_atleast(4, 1, 0):
            return f"harfbuzz {_harfbuzz_version()}"
    except (ImportError, AttributeError, OSError):
        pass
    from rcdoc.versions import version
    return f"fonttools {version('fonttools', 'fontTools')}"


@functools.lru_cache(maxsize=1)
def _harfbuzz_version() -> str:
    """HarfBuzz's version string, or "?" where the library is not found by that name.

    Opened by its usual file names, not ctypes.util.find_library: that runs
    ldconfig in a subprocess (and opens /dev/null), which a confined build
    should not do for a cache key."""
    import ctypes
    for name in ("libharfbuzz.so.0", "libharfbuzz.0.dylib", "libharfbuzz-0.dll"):
        try:
            lib = ctypes.CDLL(name)
            lib.hb_version_string.restype = ctypes.c_char_p
            return lib.hb_version_string().decode("ascii", "replace")
        except (OSError, AttributeError):
            continue
    return "?"


def _fetcher(template_dirs, project_dir):
    search = report._search_path(template_dirs)
    allowed = list(search) + ([Path(project_dir)] if project_dir is not None else [])
    return report.make_url_fetcher(allowed)


def _bookmarks(tree) -> list:
    return [(str(label), (int(page), float(x), float(y)), _bookmarks(children), state)
            for label, (page, x, y), children, state in tree]


def render_part(context: Mapping, part: str, *, template_dirs: Sequence[Path] = (),
                fetcher=None, project_dir: Path | None = None,
                source_date_epoch: int | None = None, key: str | None = None,
                page_count: int = 0, image_cache: dict | None = None,
                written=None):
    """One part of the note as a plain dict: ``pdf`` (bytes), ``pages``,
    ``bookmarks`` (weasyprint's tree in PDF points), ``anchors`` (name ->
    (page, x, y)), ``links`` (internal links: (page, target, rect)), ``key`` and
    ``missing_glyphs`` (the characters no font could draw, rcdoc.note.glyphs).

    Internal links are taken out of the part's PDF (their targets are in other
    parts) and recorded in ``links``; assemble() puts them back.

    ``written`` (the laid-out weasyprint document -> a list of such dicts, made
    with ``laid_out``): what is returned instead, each dict with its
    ``missing_glyphs`` (rcdoc.note.front_pages writes a part per page).
    """
    if fetcher is None:
        fetcher = _fetcher(template_dirs, project_dir)
    fast_layout.install()                   # weasyprint 70's short paths, same PDF
    deflate.install()                       # page streams at deflate level 4
    ctx = {**context, "part": part}
    if part == "numbers":
        ctx["page_count"] = page_count
    figures: dict = {}
    search = report._search_path(template_dirs)
    base = next(d for d in search if (d / report._TEMPLATE_NAME).is_file())
    html_class = note_html.html_class(template_dirs, search[-1])
    shipped = html_class is note_html.NoteHTML
    sheet = _shared_css(ctx, template_dirs, str(base) + os.sep, fetcher, source_date_epoch,
                        palette=shipped)
    html = report.render_html({**ctx, "shared_css": sheet is not None,
                               "margin_css": note_html.margin_css(ctx) if shipped else ""},
                              template_dirs=template_dirs,
                              source_date_epoch=source_date_epoch, figures=figures)
    cache = report.cache if image_cache is None else image_cache
    # @font-face fonts: not in /tmp; the shipped templates have none (one configuration).
    with font_scratch.closed(project_dir, shared=shipped) as fonts, \
            glyphs.collecting() as missing:
        document = html_class(string=html, base_url=str(base) + os.sep,
                              url_fetcher=fetcher).render(
            cache=report.figure_images(figures, cache), font_config=fonts,
            stylesheets=[sheet] if sheet is not None else None)
        if written is not None:
            parts = written(document)
        else:
            parts = [laid_out(document, key, source_date_epoch)]
    # Kept with the part (a worker's, a cached one): the command says which they were.
    for one in parts:
        one["missing_glyphs"] = "".join(sorted(missing))
    return parts if written is not None else parts[0]


def laid_out(document, key, source_date_epoch) -> dict:
    """render_part's dict from weasyprint's laid-out document (or a copy of some
    of its pages, ``document.copy``)."""
    scale = 0.75  # CSS px -> PDF pt, as weasyprint writes them (zoom 1)
    links, anchors = [], {}
    for i, page in enumerate(document.pages):
        height = page.height * scale
        kept = []
        for link in page.links:
            kind, target, rect, _box = link
            if kind == "internal":
                x1, y1, x2, y2 = rect
                links.append((i, str(target), (x1 * scale, height - y2 * scale,
                                               x2 * scale, height - y1 * scale)))
            else:
                kept.append(link)
        page.links = kept
        for name, (x, y, _w, _h) in page.anchors.items():
            anchors.setdefault(str(name), (i, x * scale, height - y * scale))
    bookmarks = _bookmarks(document.make_bookmark_tree(scale=scale, transform_pages=True))
    with report._font_timestamp(source_date_epoch or 0):
        pdf = document.write_pdf(finisher=pdf_images.index_images)
    return {"key": key, "pdf": pdf, "pages": len(document.pages), "bookmarks": bookmarks,
            "anchors": anchors, "links": links}


# Parsed note CSS by (text, base URL, folders the fetcher serves): each part of a
# note parsed the same 9 kB of CSS again (a twentieth of a stage's render).
_SHEETS: dict = {}
# What a parsed sheet may not carry from one document to another: fonts and counter
# styles are registered with the document's own configuration, imports fetched once.
_PER_DOCUMENT = ("@font-face", "@counter-style", "@import")


def _shared_css(context: Mapping, template_dirs, base_url: str, fetcher,
                source_date_epoch: int | None = None, palette: bool = False):
    """note.html's CSS (report.render_css) as one weasyprint stylesheet per process,
    or None (the CSS stays in the document) where it holds a rule that belongs to
    one document, or cannot be rendered here (the document's render reports why).

    Handed to weasyprint as a user stylesheet: below the document's own rules (the
    part's overrides, the inline styles), above weasyprint's defaults, as the same
    rules were inside the document (note.css uses no !important). ``palette``: no
    other CSS of the document sets custom properties (the shipped templates): the
    palette's values are put in place of each var() (note_html.inline_palette)."""
    try:
        text = report.render_css(context, template_dirs=template_dirs,
                                 source_date_epoch=source_date_epoch)
    except Exception:  # noqa: BLE001 - the document's render reports template errors
        return None
    if any(rule in text for rule in _PER_DOCUMENT) or "!important" in text:
        return None
    if palette:
        text = note_html.inline_palette(text) or text
    allowed = tuple(str(d) for d in getattr(fetcher, "allowed_dirs", ()))
    key = (hashlib.sha256(text.encode("utf-8")).hexdigest(), base_url, allowed)
    sheet = _SHEETS.get(key)
    if sheet is None:
        if len(_SHEETS) >= 8:
            _SHEETS.clear()
        sheet = _SHEETS[key] = weasyprint.CSS(string=text, base_url=base_url,
                                              url_fetcher=fetcher)
    return sheet


def _head(context: Mapping) -> dict:
    """What a stage's part shows besides the stage: the board and the generator.
    Status and stage count (front matter and metadata only) are left out, so a
    part does not change when another stage does."""
    return {"title": context.get("title", ""), "generator": context.get("generator", ""),
            "board": context.get("board", {}), "status": "pass", "analysis": [],
            "summary": {}, "overview_image": None, "overview_images": [], "appendix": []}


def stage_part(head: Mapping, stage_context: Mapping, *, template_dirs=(), project_dir=None,
               source_date_epoch=None, key=None, fetcher=None) -> dict:
    """A stage's part: the stage on its own, under the note's header and footer."""
    ctx = {**_head(head), "stages": [stage_context]}
    # A stage's figures appear in no other part: an image cache of its own
    # keeps a worker from holding every figure it ever rendered.
    return render_part(ctx, "stage", template_dirs=template_dirs, project_dir=project_dir,
                       source_date_epoch=source_date_epoch, key=key, fetcher=fetcher,
                       image_cache={})


def assemble(parts: Sequence[dict], numbers: dict | None, *, info: Mapping | None,
             pdf_id: bytes, lang: str | None = None) -> bytes:
    """The note's PDF from its parts (in order) and the page-number overlay
    (rcdoc.note.join)."""
    from rcdoc.note import join     # pikepdf: the main process's, not the workers'
    return join.join(parts, numbers, info=info, pdf_id=pdf_id, lang=lang)


def render_note(context: Mapping, *, template_dirs: Sequence[Path] = (),
                project_dir: Path | None = None, source_date_epoch: int | None = None,
                stage_parts: Sequence[dict | None] | None = None,
                stage_keys: Sequence[str | None] | None = None,
                note_parts: dict | None = None, front=None) -> tuple[bytes, list]:
    """The whole note as PDF bytes, from parts. ``stage_parts`` (one per stage,
    or None where a part is missing) are used where their key equals the one in
    ``stage_keys``; the others are rendered here. ``note_parts`` (name -> part)
    holds the appendix and page-number parts of the last build: each is used
    when its key (its context, templates, date, renderer) is unchanged, and the
    parts used are put back in it (to be cached). ``front`` (front context,
    ``note_parts``, the render's keywords -> parts): the front part's pages
    (rcdoc.note.front_pages.front_parts), else the front is one part. Returns
    the bytes and the stage parts used (to be cached)."""
    stages = list(context.get("stages") or [])
    fetcher = _fetcher(template_dirs, project_dir)   # one fetcher for this render
    kw = dict(template_dirs=template_dirs, project_dir=project_dir,
              source_date_epoch=source_date_epoch, fetcher=fetcher)
    used = []
    for i, stage in enumerate(stages):
        want = stage_keys[i] if stage_keys is not None else None
        have = stage_parts[i] if stage_parts is not None else None
        if have is None or want is None or have.get("key") != want:
            have = stage_part(context, stage, key=want, **kw)
        used.append(have)
    front_ctx = front_context(context, template_dirs)
    cover = _reused(note_parts, "cover", cover_context(front_ctx, template_dirs), kw)
    parts = [cover, *(front(front_ctx, note_parts, kw) if front is not None
                      else [_reused(note_parts, "front", front_ctx, kw)])]
    charts = charts_context(context)
    if charts is not None:
        parts.append(_reused(note_parts, "overview", charts, kw))
    elif note_parts is not None:
        note_parts.pop("overview", None)
    parts += used
    if context.get("appendix"):
        parts.append(_reused(note_parts, "appendix", appendix_context(context, context["appendix"]),
                             kw))
    total = sum(p["pages"] for p in parts)
    numbers = _reused(note_parts, "numbers", {**_head(context), "stages": []}, kw,
                      page_count=total)
    from rcdoc.note import join
    info, lang = join.document_info(cover["pdf"])
    board = context.get("board") or {}
    pdf_id = report.pdf_identifier(str(board.get("name", "")), str(board.get("revision", "")))
    return assemble(parts, numbers, info=info, pdf_id=pdf_id, lang=lang), used


# What the shipped front matter (note.html's head, _cover.html, _summary.html) reads of a
# stage: the fields rcdoc.note.page.stage_head gives.
_FRONT_STAGE = ("id", "title", "kind", "status")


def front_context(context: Mapping, template_dirs: Sequence[Path] = ()) -> dict:
    """The front part's context: the note's, each stage reduced to its head (id,
    title, kind, status) and no appendix, so that the front matter can be
    rendered from the results before the stages are drawn (rcdoc.commands.build)
    and is the same part either way. Template folders with partials of their
    own (they may read any stage field) get the whole context."""
    if _own_partials(template_dirs):
        front = dict(context)
    else:
        front = {**context, "appendix": [],
                 "stages": [{k: s.get(k) for k in _FRONT_STAGE} for s in context.get("stages") or []]}
    if own_pages(context.get("overview_images") or []):
        # The summary charts and the change record after them are the next part
        # (charts_context); the cover still names the change record.
        front.update(overview_images=[], overview_image=None, charts_apart=True)
    return front


# What the shipped cover (_cover.html) and note.html's head read of the note's context.
_COVER = ("title", "generator", "board", "status", "stages", "analysis", "changes")


def cover_context(front: Mapping, template_dirs: Sequence[Path] = ()) -> dict:
    """The cover part's context, from the front part's (front_context): what the
    cover shows (the board, the overall verdict, the stages' heads, the analysis
    settings), so that a change that moves no verdict leaves its key as it was
    and a rebuild reuses it. Template folders with partials of their own get the
    front part's whole context."""
    if _own_partials(template_dirs):
        return dict(front)
    return {k: front.get(k) for k in _COVER}


def _own_partials(template_dirs: Sequence[Path]) -> bool:
    return any(p.name != report._TEMPLATE_NAME for d in template_dirs for p in Path(d).glob("*.html"))


def charts_context(context: Mapping) -> dict | None:
    """The context of the part that holds the summary charts where they take pages
    of their own (rcdoc.note.overview.own_pages), and the change record that
    follows them; None where they stay in the front part. Made of the note's head
    and the charts alone, so that it is the same part wherever it is made (a
    rebuild renders it from the charts a worker drew: rcdoc.commands.schedule)."""
    charts = list(context.get("overview_images") or [])
    if not own_pages(charts):
        return None
    return {**_head(context), "stages": [], "overview_images": charts,
            "overview_image": charts[0]["image"], "changes": context.get("changes")}


def appendix_context(head: Mapping, appendix: Sequence) -> dict:
    """The appendix part's context: the note's head (title, generator, board: from
    note_context, or project_head where the appendix is rendered before the
    results are in) and the appendix sections."""
    return {**_head(head), "stages": [], "appendix": list(appendix)}


def context_key(context: Mapping, part: str, *, template_dirs: Sequence[Path] = (),
                source_date_epoch: int | None = None, project_dir: Path | None = None,
                page_count: int = 0) -> str:
    """The key of a part made from ``context`` alone (the appendix, the page
    numbers): a hash of that context (floats exactly, bytes in full) and of
    what chunk_key adds (templates, date, project folder, renderer, subsetter)."""
    text = json.dumps({"part": part, "pages": page_count, "context": context},
                      sort_keys=True, default=_exact, separators=(",", ":"))
    return chunk_key(hashlib.sha256(text.encode("utf-8")).hexdigest(), template_dirs,
                     source_date_epoch, project_dir)


def _exact(obj):
    """JSON for what json does not write itself: bytes and other objects, exactly."""
    if isinstance(obj, (bytes, bytearray)):
        return {"bytes": hashlib.sha256(obj).hexdigest()}
    if hasattr(obj, "tobytes") and hasattr(obj, "dtype"):       # a numpy array or scalar
        return {"array": [str(obj.dtype), list(getattr(obj, "shape", ())),
                          hashlib.sha256(obj.tobytes()).hexdigest()]}
    return {type(obj).__qualname__: repr(obj)}


def _reused(note_parts: dict | None, part: str, context: Mapping, kw: Mapping,
            page_count: int = 0) -> dict:
    """The part ``part`` of ``context``: the one in ``note_parts`` when its key
    matches, else rendered now; ``note_parts`` then holds the part used."""
    key = context_key(context, part, template_dirs=kw["template_dirs"],
                      source_date_epoch=kw["source_date_epoch"],
                      project_dir=kw["project_dir"], page_count=page_count)
    have = (note_parts or {}).get(part)
    if not isinstance(have, dict) or have.get("key") != key:
        have = (_numbers(context, page_count, key, kw) if part == "numbers"
                else render_part(context, part, page_count=page_count, key=key, **kw))
    if note_parts is not None:
        note_parts[part] = have
    return have


def _numbers(context: Mapping, total: int, key: str, kw: Mapping) -> dict:
    """The page-number part: composed from a sample of numbers.SAMPLE_PAGES pages
    where the footer fits its model (rcdoc.note.numbers), else laid out in full."""
    # Imported here: numbers and join load pikepdf, which only the process that
    # joins the note needs (0.09 s of the fork server's imports otherwise).
    from rcdoc.note import numbers
    if total > numbers.SAMPLE_PAGES:
        sample = render_part(context, "numbers", page_count=numbers.SAMPLE_PAGES, **kw)
        pdf = numbers.compose(sample, total)
        if pdf is not None:
            return {"key": key, "pdf": pdf, "pages": total, "bookmarks": [], "anchors": {},
                    "links": []}
    return render_part(context, "numbers", page_count=total, key=key, **kw)


def project_head(project) -> dict:
    """The part of note.note_context a stage's part shows (title, generator, board),
    made from the project alone so that workers can render stage parts."""
    from rcdoc import __version__
    from rcdoc.input.project import paragraphs
    b = project.board
    return {"title": f"Design note: {b.name} rev {b.revision}",
            "generator": f"rcdoc {__version__}",
            "board": {"name": b.name, "revision": b.revision, "date": b.date,
                      "authors": list(b.authors),
                      "notes": list(paragraphs(b.notes)) if b.notes else []}}
