"""The summary table of a long note as one part per page, so that a rebuild lays
out again only the pages whose rows changed.

What it is for: where the summary charts take pages of their own (a board of
many stages, rcdoc.note.overview.own_pages), the front part holds only the
summary table, one row per stage. A one-value rebuild changes one row (its
key result), and the whole table was laid out again: 40 rows, two pages, a
fifth of the command's CPU in the 40-stage bench board's rebuild. Here:

- where no part of the last build serves (a cold build, another number of
  rows, another page break), the table is laid out whole, as before, and each
  of its pages is written as a part of its own (``document.copy``), filed with
  the rows it holds;
- in a rebuild, a page whose rows (and the row after them, which decides where
  the page ends), column widths and position in the table are unchanged is
  taken as it is; another is laid out again from its own rows and the row
  after them (``summary_page``: from that row on, with the whole table's
  column kinds and widths), and its first page written: the same page, as long
  as it ends before the same row, which is checked (the whole table is laid
  out again otherwise).

A page laid out from its own rows is the page of the whole table: the table's
widths are given (rcdoc.note.table_widths, for all rows), its stripes follow
the row's place in the whole table, the running header's section is set as the
title sets it, and a table that goes on over a page repeats its head, as the
page after the title does.

What it must not do: split a summary it cannot place row by row (rows without
a stage to link to, or an id twice), one whose columns have no measured widths,
one that shares its part with the summary charts or the change record, or one
rendered with templates of the user's own: those stay one part ("front").
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from pathlib import Path

from rcdoc.note import assemble, report, table_widths

__all__ = ["front_parts", "PAGES"]

#: Where note_parts (rcdoc.commands.cache files them) keeps the summary's pages:
#: {"pages": [part, ...], "missing_glyphs": str}, each part with the indices of its
#: first and last row ("rows").
PAGES = "front-pages"


def front_parts(front: Mapping, note_parts: dict | None, kw: Mapping) -> list[dict]:
    """The parts of the front matter (assemble.front_context's ``front``), in order:
    one per page of a summary that may be split, else the one part "front"
    (assemble._reused). ``note_parts`` holds the last build's and is given the
    ones used; ``kw``: template_dirs, project_dir, source_date_epoch, fetcher."""
    table = _table(front, kw["template_dirs"])
    if table is None:
        if note_parts is not None:
            note_parts.pop(PAGES, None)
        return [assemble._reused(note_parts, "front", front, kw)]
    filed = (note_parts or {}).get(PAGES)
    pages = _kept_pages(front, table, filed.get("pages") if isinstance(filed, dict) else None,
                        kw)
    if pages is None:
        pages = _whole(front, table, kw)
    if note_parts is not None:
        note_parts.pop("front", None)
        note_parts[PAGES] = {"pages": pages, "missing_glyphs": "".join(sorted(
            {c for page in pages for c in page.get("missing_glyphs", "")}))}
    return list(pages)


class _Table:
    """The summary's rows and the whole table's column kinds and widths."""

    def __init__(self, columns: list, rows: list[dict], kinds: list, widths):
        self.columns, self.rows, self.kinds, self.widths = columns, rows, kinds, widths
        self.row_of = {f"stage-{row['id']}": i for i, row in enumerate(rows)}


def _table(front: Mapping, template_dirs: Sequence[Path]) -> _Table | None:
    """The summary of ``front`` where it may be split into pages, else None."""
    if not front.get("charts_apart") or front.get("overview_images"):
        return None
    if any(Path(d).is_dir() and any(Path(d).iterdir()) for d in template_dirs):
        return None
    columns = list((front.get("summary") or {}).get("columns") or [])
    rows = report._summary_rows(front)
    ids = [row["id"] for row in rows]
    if not columns or len(rows) < 2 or not all(isinstance(i, str) and i for i in ids) \
            or len(set(ids)) != len(ids):
        return None
    cells = [row["cells"] for row in rows]
    kinds = report._column_kinds(columns, cells)
    widths = table_widths.widths(columns, cells, kinds, True)
    if widths is None:
        return None
    return _Table(columns, rows, kinds, widths)


def _page_context(front: Mapping, table: _Table, first: int, stop: int) -> dict:
    """The front part's context for rows ``first`` to ``stop`` (excluded) of the table."""
    return {**front, "summary": {"columns": table.columns, "rows": table.rows[first:stop]},
            "summary_page": {"first": first, "kinds": table.kinds, "widths": table.widths}}


def _page_key(front: Mapping, table: _Table, first: int, last: int, kw: Mapping) -> str:
    """The key of the page holding rows ``first`` to ``last``: its context with the
    row after them (it decides where the page ends)."""
    ctx = _page_context(front, table, first, last + 2)
    return assemble.context_key(ctx, "front-page", template_dirs=kw["template_dirs"],
                                source_date_epoch=kw["source_date_epoch"],
                                project_dir=kw["project_dir"])


def _rows_by_page(part: dict, table: _Table) -> dict[int, list[int]]:
    """The table's rows on each page of a laid-out part, by the links of their titles."""
    pages: dict[int, list[int]] = {}
    for page, target, _rect in part["links"]:
        row = table.row_of.get(target)
        if row is not None and row not in pages.get(page, []):
            pages.setdefault(page, []).append(row)
    return pages


def _whole(front: Mapping, table: _Table, kw: Mapping) -> list[dict]:
    """Every page of the table laid out whole, each its own part; or one part of
    them all, without rows (so that the next build lays it out whole again at
    once), where a page's rows cannot be told by their links."""
    def written(document) -> list[dict]:
        epoch = kw["source_date_epoch"]
        parts = [assemble.laid_out(document.copy([page]), None, epoch)
                 for page in document.pages]
        firsts = []
        for part in parts:
            rows = sorted({row for held in _rows_by_page(part, table).values() for row in held})
            if not rows:
                return [assemble.laid_out(document, None, epoch)]   # no row to place it by
            firsts.append((rows[0], rows[-1]))
        expected = 0
        for first, last in firsts:
            if first != expected:
                return [assemble.laid_out(document, None, epoch)]
            expected = last + 1
        if expected != len(table.rows):
            return [assemble.laid_out(document, None, epoch)]
        for part, (first, last) in zip(parts, firsts):
            part["rows"] = (first, last)
            part["key"] = _page_key(front, table, first, last, kw)
        return parts

    return assemble.render_part(_page_context(front, table, 0, len(table.rows)), "front",
                                written=written, **kw)


def _kept_pages(front: Mapping, table: _Table, last_build, kw: Mapping) -> list[dict] | None:
    """The pages of the last build, each taken as it is or laid out again from its
    own rows; None where they do not serve (another number of rows, a page that
    no longer ends where it did)."""
    if not isinstance(last_build, list) or not last_build:
        return None
    spans = [page.get("rows") if isinstance(page, dict) else None for page in last_build]
    expected = 0
    for span in spans:
        if not (isinstance(span, tuple) and len(span) == 2 and span[0] == expected
                and span[1] >= span[0]):
            return None
        expected = span[1] + 1
    if expected != len(table.rows):
        return None
    pages = []
    for page, (first, last) in zip(last_build, spans):
        key = _page_key(front, table, first, last, kw)
        if page.get("key") == key:
            pages.append(page)
            continue
        again = _one_page(front, table, first, last, key, kw)
        if again is None:
            return None
        pages.append(again)
    return pages


def _one_page(front: Mapping, table: _Table, first: int, last: int, key: str,
              kw: Mapping) -> dict | None:
    """The page holding rows ``first`` to ``last``, laid out from them and the row
    after them; None where it does not end before that row."""
    final = last == len(table.rows) - 1

    def written(document) -> list[dict]:
        if (len(document.pages) != 1) if final else (len(document.pages) < 2):
            return []
        part = assemble.laid_out(document.copy([document.pages[0]]), key,
                                 kw["source_date_epoch"])
        held = _rows_by_page(part, table).get(0, [])
        if sorted(held) != list(range(first, last + 1)):
            return []
        part["rows"] = (first, last)
        return [part]

    parts = assemble.render_part(_page_context(front, table, first, last + 2), "front",
                                 written=written, **kw)
    return parts[0] if parts else None
