"""Run a whole project: load, analyse every stage, write the note and the summary.

The library side of ``rcdoc build`` and ``rcdoc check``; the command line only
parses options and prints. Outputs are written atomically, after everything
that can fail has been done, so a failed build leaves existing files untouched.
"""

from __future__ import annotations

import os
import tempfile
from dataclasses import dataclass
from pathlib import Path
from typing import Callable

from .analyse import StageResult, analyse_stage
from .errors import ProjectError
from .model import Project
from .project import load_project


@dataclass
class Outcome:
    project: Project
    results: list[StageResult]

    @property
    def status(self) -> str:
        return "fail" if any(r.status != "pass" for r in self.results) else "pass"


def analyse_project(project: Project, *, progress: Callable[[str], None] | None = None,
                    jobs: int = 1) -> Outcome:
    results = []
    for st in project.stages:
        if progress:
            progress(st.id)
        try:
            results.append(analyse_stage(st, project.analysis))
        except ProjectError as exc:
            if not exc.path:
                exc.path = st.path
            raise exc.located(project.file)
    return Outcome(project, results)


def write_atomic(path: Path, data: bytes) -> None:
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=path.parent)
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
        os.replace(tmp, path)
    except BaseException:
        if os.path.exists(tmp):
            os.unlink(tmp)
        raise


def output_dir(project_file: str, out: str | None) -> Path:
    return Path(out) if out else Path(project_file).parent / "build"


def source_date_epoch(project: Project) -> int:
    """The note's timestamp: SOURCE_DATE_EPOCH if set, else the board date at midnight UTC."""
    import datetime as dt
    env = os.environ.get("SOURCE_DATE_EPOCH", "").strip()
    if env.isdigit():
        return int(env)
    d = dt.date.fromisoformat(project.board.date)
    return int(dt.datetime(d.year, d.month, d.day, tzinfo=dt.timezone.utc).timestamp())


def write_outputs(outcome: Outcome, out_dir: Path, *, template_dirs=(),
                  extra_appendix=()) -> tuple[Path, Path]:
    """Render the PDF and the JSON; both land only if both could be made."""
    from .note import note_context
    from .report import render_pdf
    from .summary import summary, to_json
    project = outcome.project
    stem = Path(project.file).stem
    pdf_path, json_path = out_dir / f"{stem}.pdf", out_dir / f"{stem}.json"
    json_bytes = to_json(summary(project, outcome.results)).encode("utf-8")
    context = note_context(project, outcome.results, extra_appendix=extra_appendix)
    out_dir.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=f".{stem}.", suffix=".pdf.tmp", dir=out_dir)
    os.close(fd)
    tmp_path = Path(tmp)
    try:
        render_pdf(context, tmp_path, template_dirs=list(template_dirs),
                   project_dir=Path(project.file).resolve().parent,
                   source_date_epoch=source_date_epoch(project))
        write_atomic(json_path, json_bytes)
        os.replace(tmp_path, pdf_path)
    finally:
        if tmp_path.exists():
            tmp_path.unlink()
    return pdf_path, json_path


def load_all(files: list[str], *, samples=None, seed=None) -> list[Project]:
    """Validate every file before anything runs: one bad file stops the whole command."""
    return [load_project(f, samples=samples, seed=seed) for f in files]
