"""Run a whole project: load, analyse (and draw) every stage, write the note and the summary.

The library side of ``rcdoc build`` and ``rcdoc check``; the command line only
parses options and prints. Outputs are written atomically, after everything
that can fail has been done, so a failed build leaves existing files untouched.

Speed: each stage is analysed and, for a build, drawn into its note blocks
and (with ``jobs`` > 1) rendered into its own part of the PDF (rcdoc.note.assemble).
That work runs in units (rcdoc.commands.workers) in a pool of processes (``jobs``;
'forkserver' or 'spawn' start, never threads: matplotlib is not thread-safe),
in the order rcdoc.commands.schedule sets, and each stage's finished work is
filed in the build cache (rcdoc.commands.cache) under a hash of everything it
depends on, so a rebuild redoes only the stages that changed
and lays out only their pages, the front matter and the appendix.
Results are gathered in stage order, so the output does not depend on
``jobs`` or on what came from the cache.

What it must not do: compute physics, draw, or format; it orchestrates.
"""

from __future__ import annotations

import contextlib
import os
from dataclasses import dataclass, field
from pathlib import Path
from typing import Callable

from rcdoc.analysis.analyse import StageResult
from rcdoc.commands import schedule
from rcdoc.commands.cache import StageCache, stage_key
from rcdoc.commands.workers import WorkerPool, _draw_unit, _stage_unit
from rcdoc.errors import ProjectError
from rcdoc.files import commit, make_temp, refuse_folder, remove_stale_temps
from rcdoc.input.model import Project
from rcdoc.kinds import load_project


@dataclass
class Outcome:
    project: Project
    results: list[StageResult]
    # Per-stage note contexts (rcdoc.note.page.stage_context), when the stages were drawn.
    contexts: list[dict] | None = None
    # Stages taken from the build cache, and stages analysed in this run.
    cached: list[str] = field(default_factory=list)
    computed: list[str] = field(default_factory=list)
    # Per-stage rendered note parts (rcdoc.note.assemble), or None where not made yet.
    parts: list | None = None
    # Cache entries to file once the outputs are written (a failed build writes nothing).
    pending: Callable[[], None] | None = None
    # Seconds each stage analysed in this run took (its unit of work; none for cached stages).
    seconds: dict[str, float] = field(default_factory=dict)
    # The note's cover, front, appendix and page-number parts of the last build, or made
    # beside the stages in this one (filed again by pending).
    note_parts: dict = field(default_factory=dict)
    # The summary chart, when drawn already (one item: rcdoc.note.page.note_context).
    overview: tuple | None = None
    # Each stage's cache key (rcdoc.commands.cache.stage_key), where there is a cache.
    keys: list | None = None
    # The JSON summary and the parts list, made already (``prepare``), by name.
    prepared: dict = field(default_factory=dict)
    # Characters no installed font drew in the note written (write_outputs; rcdoc.note.glyphs).
    missing_glyphs: set = field(default_factory=set)

    def commit_cache(self) -> None:
        if self.pending is not None:
            self.pending()
            self.pending = None

    @property
    def status(self) -> str:
        return "fail" if any(r.status != "pass" for r in self.results) else "pass"


def stages_to_analyse(project: Project, out_dir: Path | None) -> int:
    """How many stages of ``project`` have no entry in the build cache of
    ``out_dir`` (a quick look at file names: an unreadable entry counts as there)."""
    if out_dir is None:
        return len(project.stages)
    cache = StageCache.for_output(out_dir, project.file)
    return sum(not cache.has(stage_key(st, project)) for st in project.stages)


def _part_keys(project: Project, template_dirs, keys=None) -> list[str]:
    """The key each stage's part of the note must carry (rcdoc.note.assemble.chunk_key)."""
    from rcdoc.note.assemble import chunk_keys
    epoch = source_date_epoch(project)
    project_dir = Path(project.file).resolve().parent
    return chunk_keys([keys[i] if keys and keys[i] else stage_key(st, project)
                       for i, st in enumerate(project.stages)],
                      list(template_dirs), epoch, project_dir)


def analyse_project(project: Project, *, progress: Callable[[str], None] | None = None,
                    jobs: int = 1, draw: bool = False, out_dir: Path | None = None,
                    template_dirs=(),
                    on_done: Callable[[str, float | None], None] | None = None,
                    pool: WorkerPool | None = None, front: bool = True) -> Outcome:
    """Analyse every stage; with ``draw`` also make each stage's note blocks.

    ``jobs`` > 1 runs stages in that many worker processes, which (with
    ``draw``) also render each stage's part of the note with ``template_dirs``
    (rcdoc.note.assemble). ``out_dir`` enables the build cache in
    ``out_dir/.rcdoc-cache``; without ``draw`` (check, diff) only the analysis
    half of an entry is read and filed, and a later build draws what it lacks.
    ``on_done(stage_id, seconds)`` is called as each stage is done (seconds None: cached).
    ``pool`` (a WorkerPool) is the command's pool, shared with its other project
    files; without it, a pool is started for this project and ended with it.
    ``front``: with workers, render the front matter while they draw (not where
    the command adds to it afterwards: ``build --since``).
    """
    stages = list(project.stages)
    n = len(stages)
    prepared: dict = {}
    results: list = [None] * n
    contexts: list = [None] * n
    parts: list = [None] * n
    cache = StageCache.for_output(out_dir, project.file) if out_dir is not None else None
    keys = [stage_key(st, project) for st in stages] if cache is not None else [None] * n
    todo, cached, todraw = _from_cache(cache, keys, stages, draw, results, contexts, parts)
    if on_done:
        for sid in cached:
            on_done(sid, None)
    original_parts = list(parts)
    seconds: dict[str, float] = {}

    def settle(i: int, answer) -> None:
        if answer[0] == "error":
            _, message, path, file = answer
            raise ProjectError(message, path=path or stages[i].path, file=file).located(project.file)
        results[i], contexts[i], parts[i] = answer[1], answer[2], answer[3]
        seconds[stages[i].id] = answer[4]
        if on_done:
            on_done(stages[i].id, answer[4])

    note_parts = cache.get_note_parts() if cache is not None and draw else {}
    part_jobs, redo, appendix = ([None] * n, [], None)
    if draw and int(jobs or 1) > 1:
        part_jobs, redo = _part_jobs(project, template_dirs, keys, todo, todraw, parts)
    workers = max(1, min(int(jobs or 1), len(todo) + len(redo) + len(todraw)))
    if workers > 1 and part_jobs and part_jobs[0] is not None:
        appendix = schedule.appendix_job(project, template_dirs, part_jobs[0], note_parts)
    overview = None
    if (front and workers == 1 and pool is not None and pool.warmed and len(todo) == 1
            and not todraw and not redo and part_jobs[todo[0]] is not None):
        overview = schedule.one_beside_front(pool, project, todo[0], part_jobs[todo[0]], settle,
                                             results, note_parts, progress,
                                             meanwhile=lambda: prepare(project, results, prepared))
    elif workers == 1:
        overview = _serially(project, todo, todraw, draw, front, settle, results, contexts, parts,
                             note_parts, progress)
    else:
        with contextlib.ExitStack() as stack:    # a pool of its own ends with this project
            shared = pool or stack.enter_context(WorkerPool(workers, draw=draw))
            overview = schedule.run_pool(shared, project, draw, (todo, redo, todraw), part_jobs,
                                 progress, settle, results, contexts, parts, appendix,
                                 note_parts, front)

    def file_entries():
        for i in range(n):
            if i in todo or i in todraw or parts[i] is not original_parts[i]:
                cache.put(keys[i], results[i], contexts[i], parts[i])
        if draw:       # check and diff leave the other entries to the next build
            if note_parts:
                cache.put_note_parts(note_parts)
            cache.prune()
    pending = file_entries if cache is not None else None
    return Outcome(project, results, contexts if draw else None, cached=cached,
                   computed=[stages[i].id for i in todo], parts=parts if draw else None,
                   pending=pending, seconds=seconds, note_parts=note_parts, overview=overview,
                   keys=keys if cache is not None else None, prepared=prepared)


def _serially(project, todo, todraw, draw: bool, front: bool, settle, results, contexts, parts,
              note_parts, progress) -> tuple | None:
    """Analyse (with ``draw``, also draw) the stages in this process; with ``draw``
    and ``front``, draw the summary charts too (those of the last build whose rows
    did not change are kept). Returns Outcome's ``overview``."""
    stages = project.stages
    for i in todo:
        if progress:
            progress(stages[i].id)
        settle(i, _stage_unit(stages[i], project, draw, bode=draw))
    for i in todraw:
        results[i], contexts[i], parts[i] = _draw_unit(results[i], project)
    return (schedule.summary_charts(results, note_parts),) if draw and front else None


def _from_cache(cache, keys, stages, draw, results, contexts, parts):
    """Fill what the build cache holds; returns the stages to analyse, the ids
    taken from the cache, and the cached stages still to draw."""
    todo, cached = [], []
    todraw = []            # analysed (by check or diff) but not drawn yet
    for i, st in enumerate(stages):
        hit = cache.get(keys[i]) if cache is not None else None
        if hit is not None:
            results[i], contexts[i] = hit
            parts[i] = cache.parts.get(keys[i])
            cached.append(st.id)
            if draw and contexts[i] is None:
                todraw.append(i)
        else:
            todo.append(i)
    return todo, cached, todraw


def _part_jobs(project: Project, template_dirs, keys, todo, todraw, parts):
    """Stage parts of the note are rendered where there are workers to spread
    them over (a serial build leaves them to write_outputs: same bytes).
    Returns each stage's part job (or None) and the cached stages whose part
    must be made again."""
    n = len(project.stages)
    from rcdoc.note.assemble import can_assemble, project_head
    try:
        use_parts = can_assemble(list(template_dirs))
    except ProjectError:
        use_parts = False
    if not use_parts:
        return [None] * n, []
    head = project_head(project)
    pkeys = _part_keys(project, template_dirs, keys)
    epoch = source_date_epoch(project)
    project_dir = Path(project.file).resolve().parent
    part_jobs = [(head, list(template_dirs), project_dir, epoch, k) for k in pkeys]
    redo = [i for i in range(n) if i not in todo and i not in todraw
            and (parts[i] is None or parts[i].get("key") != pkeys[i])]
    return part_jobs, redo


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


def note_paths(project: Project, out_dir: Path) -> tuple[Path, Path, Path]:
    """The files a build writes for ``project`` in ``out_dir``: the note, the JSON
    summary and the parts list."""
    stem = Path(project.file).stem
    return out_dir / f"{stem}.pdf", out_dir / f"{stem}.json", out_dir / f"{stem}-parts.csv"


def check_note_paths(project: Project, out_dir: Path) -> None:
    """Refuse, before any work, a note, JSON or parts list whose name a folder has."""
    for path in note_paths(project, out_dir):
        refuse_folder(path, "a folder has the name of a file the build writes; "
                            "move it or write elsewhere with -o")


def write_outputs(outcome: Outcome, out_dir: Path, *, template_dirs=(),
                  extra_appendix=(), changes=None) -> tuple[Path, Path]:
    """Render the PDF and the JSON; both land only if both could be made."""
    from rcdoc.note import glyphs
    from rcdoc.note.page import note_context
    from rcdoc.note.pdf import render_pdf
    project = outcome.project
    pdf_path, json_path, csv_path = note_paths(project, out_dir)
    made = outcome.prepared or prepare(project, outcome.results, {})
    json_bytes, csv_bytes = made["json"], made["csv"]
    if outcome.contexts is not None:
        context = note_context(project, outcome.results, extra_appendix=extra_appendix,
                               stage_contexts=outcome.contexts, changes=changes,
                               overview=outcome.overview)
    else:
        context = note_context(project, outcome.results, extra_appendix=extra_appendix,
                               changes=changes)
    made = [d for d in (out_dir, *out_dir.parents) if not d.exists()]
    out_dir.mkdir(parents=True, exist_ok=True)
    remove_stale_temps(out_dir)          # left by a build that was killed
    tmp_path = make_temp(out_dir, pdf_path.name)
    json_tmp = make_temp(out_dir, json_path.name)
    csv_tmp = make_temp(out_dir, csv_path.name)
    done = False
    try:
        with glyphs.collecting() as missing:     # a note rendered here as one document
            used = render_pdf(context, tmp_path, template_dirs=list(template_dirs),
                              project_dir=Path(project.file).resolve().parent,
                              source_date_epoch=source_date_epoch(project),
                              stage_parts=outcome.parts,
                              stage_keys=(_part_keys(project, template_dirs, outcome.keys)
                                          if outcome.contexts is not None else None),
                              note_parts=outcome.note_parts)
        if used is not None and outcome.parts is not None:
            outcome.parts[:] = used     # filed in the cache by commit_cache below
        # And those of the parts: rendered here, by a worker or by an earlier build.
        parts = [*(outcome.parts or []), *(outcome.note_parts or {}).values()]
        outcome.missing_glyphs = missing | {c for p in parts if isinstance(p, dict)
                                            for c in p.get("missing_glyphs", "")}
        json_tmp.write_bytes(json_bytes)
        json_tmp.chmod(tmp_path.stat().st_mode)   # as readable as the note
        csv_tmp.write_bytes(csv_bytes)
        csv_tmp.chmod(tmp_path.stat().st_mode)
        commit([(json_tmp, json_path), (csv_tmp, csv_path), (tmp_path, pdf_path)])
        outcome.commit_cache()
        done = True
    finally:
        for t in (tmp_path, json_tmp, csv_tmp):
            if t.exists():
                t.unlink()
        if not done:            # leave no folder this failed build created
            for d in made:
                if d.is_dir() and not any(d.iterdir()):
                    d.rmdir()
    return pdf_path, json_path


def prepare(project: Project, results, into: dict) -> dict:
    """The JSON summary and the parts list of ``results`` (bytes, as written), in
    ``into``: made by write_outputs, or before it by a rebuild's main process while
    its workers draw (rcdoc.commands.schedule.one_beside_front's ``meanwhile``)."""
    from rcdoc.note.partslist import parts_csv
    from rcdoc.note.summary import summary, to_json
    into["json"] = to_json(summary(project, results)).encode("utf-8")
    into["csv"] = parts_csv(results)
    return into


def load_all(files: list[str], *, samples=None, seed=None) -> list[Project]:
    """Validate every file before anything runs: one bad file stops the whole command."""
    return [load_project(f, samples=samples, seed=seed) for f in files]
