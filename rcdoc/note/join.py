"""Join the note's parts into one PDF: pages in order, page numbers laid over
them, the outline, the links between parts, the document information.

The parts are PDFs that weasyprint wrote one by one (rcdoc.note.assemble);
joining them is plain PDF object work, done with pikepdf (qpdf): 4x less CPU
than pypdf for the 156 pages of a 40-stage note, whose rebuild after one value
change is mostly fixed costs like this one.

Reproducible: the same parts give the same bytes. The first file identifier
is the note's own (report.pdf_identifier, the same for every revision of the
note); the second is a hash of the file as written (it changes with the
content, as ISO 32000-1 §14.4 asks of it): the first 16 bytes of its SHA-256,
put in place of qpdf's fixed placeholder (its ``static_id``), which has the
same length, so no offset moves. qpdf's own content hash (``deterministic_id``,
MD5 over the file as it writes it) cost 7 ms of a 156-page note's join, the
SHA-256 after it 2 ms (SHA extensions where the CPU has them); where the
placeholder is not found exactly once, qpdf's hash is used.
"""

from __future__ import annotations

import hashlib
import io
from typing import Mapping, Sequence

import pikepdf
from pikepdf import Array, Dictionary, Name, OutlineItem, PageLocation, Pdf, String

from rcdoc import teardown

__all__ = ["join", "document_info"]


def document_info(pdf: bytes) -> tuple[dict[str, str], str | None]:
    """The document information dictionary (as "/Key" -> text) and /Lang of ``pdf``."""
    with Pdf.open(io.BytesIO(pdf)) as doc:
        info = {str(k): str(v) for k, v in doc.docinfo.items()}
        lang = doc.Root.get("/Lang")
        return info, (str(lang) if lang is not None else None)


def _overlay(out: Pdf, page: pikepdf.Page, over: pikepdf.Page, name: str) -> None:
    """Lay page ``over`` (of another document) on ``page`` as a form XObject.

    Named by the caller: the pages of one part share one resource dictionary,
    so each page's form needs a name of its own."""
    form = out.copy_foreign(over.as_form_xobject())
    page.add_resource(form, Name.XObject, Name(name))
    page.contents_add(out.make_stream(b"q\n"), prepend=True)
    page.contents_add(out.make_stream(b"\nQ\nq " + name.encode() + b" Do Q\n"))


def _link(out: Pdf, rect, target, x: float, y: float) -> Dictionary:
    """An internal link: a Link annotation with an explicit XYZ destination
    (ISO 32000-1 §12.5.6.5, §12.3.2.2), no border."""
    return out.make_indirect(Dictionary(
        Type=Name.Annot, Subtype=Name.Link, Rect=Array([float(v) for v in rect]),
        Border=Array([0, 0, 0]), Dest=Array([target, Name.XYZ, float(x), float(y), 0])))


def _outline_items(tree, offset: int) -> list[OutlineItem]:
    items = []
    for label, (i, x, y), children, state in tree:
        item = OutlineItem(str(label), offset + int(i), PageLocation.XYZ,
                           left=float(x), top=float(y), zoom=0)
        item.is_closed = state == "closed"
        item.children.extend(_outline_items(children, offset))
        items.append(item)
    return items


def _saved(out: Pdf, version: str, **identifier) -> bytes:
    buf = io.BytesIO()
    out.save(buf, compress_streams=True, object_stream_mode=pikepdf.ObjectStreamMode.generate,
             min_version=version, **identifier)
    return buf.getvalue()


# The second file identifier qpdf writes with static_id (QPDFWriter's fixed value for
# tests), as the hex string it writes it in.
_PLACEHOLDER = b"<31415926535897932384626433832795>"


def _with_content_id(pdf: bytes) -> bytes | None:
    """``pdf`` with the placeholder second identifier replaced by the first 16 bytes
    of the SHA-256 of ``pdf`` (placeholder in place); None where the placeholder is
    not there exactly once."""
    if pdf.count(_PLACEHOLDER) != 1:
        return None
    digest = hashlib.sha256(pdf).hexdigest()[:32].encode("ascii")
    return pdf.replace(_PLACEHOLDER, b"<" + digest + b">")


def join(parts: Sequence[dict], numbers: dict | None, *, info: Mapping | None,
         pdf_id: bytes, lang: str | None = None) -> bytes:
    """The note's PDF from its parts (in order; see assemble.render_part for
    what a part holds) and the page-number part laid over the pages."""
    out = Pdf.new()
    sources = []       # kept open until the note is written: pages refer into them
    try:
        offsets, anchors = [], {}
        for part in parts:
            offsets.append(len(out.pages))
            src = Pdf.open(io.BytesIO(part["pdf"]))
            sources.append(src)
            out.pages.extend(src.pages)
            for name, (i, x, y) in part["anchors"].items():
                anchors.setdefault(name, (offsets[-1] + i, x, y))
        if numbers is not None:
            over = Pdf.open(io.BytesIO(numbers["pdf"]))
            sources.append(over)
            for i in range(min(len(out.pages), len(over.pages))):
                _overlay(out, out.pages[i], over.pages[i], f"/RcPageNumber{i + 1}")
        with out.open_outline() as outline:
            for part, offset in zip(parts, offsets):
                outline.root.extend(_outline_items(part["bookmarks"], offset))
        for part, offset in zip(parts, offsets):
            for i, target, rect in part["links"]:
                if target not in anchors:
                    continue
                page_i, x, y = anchors[target]
                page = out.pages[offset + i]
                if "/Annots" not in page.obj:
                    page.obj.Annots = out.make_indirect(Array())
                page.obj.Annots.append(_link(out, rect, out.pages[page_i].obj, x, y))
        if info:
            out.docinfo = out.make_indirect(Dictionary(
                {str(k): String(str(v)) for k, v in info.items()}))
        if lang:
            out.Root.Lang = String(lang)
        ident = String(pdf_id.decode("ascii"))
        out.trailer.ID = Array([ident, ident])
        # Object streams: the parts' many small objects (font widths, graphics
        # states) packed and compressed; the note is a PDF 1.5 file or later.
        version = max((src.pdf_version for src in sources), default="1.5")
        pdf = _with_content_id(_saved(out, version, static_id=True))
        return pdf if pdf is not None else _saved(out, version, deterministic_id=True)
    finally:
        for src in sources:
            src.close()
        out.close()
        # Where the process ends without teardown (the rcdoc command), the joined
        # document's objects are not freed one by one first (rcdoc.teardown).
        teardown.keep(out)
