"""The note as a PDF file: in parts (rcdoc.note.assemble) when the shipped
note.html is in use, else as one document (rcdoc.note.report).

It sits above both so that neither imports the other's caller; it writes the
file atomically and never draws or analyses.
"""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path

from rcdoc.note import assemble, front_pages, report


def render_pdf(context: dict, out_path: Path, *, template_dirs: Sequence[Path] = (),
               project_dir: Path | None = None, source_date_epoch: int | None = None,
               stage_parts=None, stage_keys=None, note_parts: dict | None = None):
    """Render the note and write it atomically to ``out_path``.

    With the shipped note.html the note is rendered in parts and assembled:
    ``stage_parts`` are stage parts made earlier (by the build's workers or its
    cache), used where their key equals ``stage_keys``; ``note_parts`` the
    appendix and page-number parts of the last build, reused where unchanged
    and updated with the ones used (rcdoc.note.assemble.render_note; a long summary
    one part per page, rcdoc.note.front_pages). Returns the stage parts
    used (None when rendered as one document). ``source_date_epoch`` (seconds,
    UTC) dates the PDF; without it ``SOURCE_DATE_EPOCH`` is used, and without
    that the PDF carries no dates.
    """
    out_path = Path(out_path)
    epoch = report.epoch_of(source_date_epoch)
    if assemble.can_assemble(template_dirs):
        pdf_bytes, used = assemble.render_note(
            context, template_dirs=template_dirs, project_dir=project_dir,
            source_date_epoch=epoch, stage_parts=stage_parts, stage_keys=stage_keys,
            note_parts=note_parts, front=front_pages.front_parts)
        report.write_note(out_path, pdf_bytes)
        return used
    report.render_document(context, out_path, template_dirs=template_dirs,
                           project_dir=project_dir, source_date_epoch=epoch)
    return None
