"""Run a whole project: load, analyse (and draw) every stage, write the note and the summary.

The library side of ``rcdoc build`` and ``rcdoc check``; the command line only
parses options and prints. Outputs are written atomically, after everything
that can fail has been done, so a failed build leaves existing files untouched.

Speed: each stage is analysed and, for a build, drawn into its note blocks
and (with ``jobs`` > 1) rendered into its own part of the PDF (rcdoc.note.assemble)
as one unit of work. Units run in a pool of processes (``jobs``; 'forkserver'
or 'spawn' start, never threads: matplotlib is not thread-safe), and each
finished unit is filed in the build cache (rcdoc.commands.cache) under a hash of
everything it depends on, so a rebuild redoes only the stages that changed
and lays out only their pages, the front matter and the appendix.
Results are gathered in stage order, so the output does not depend on
``jobs`` or on what came from the cache.

What it must not do: compute physics, draw, or format; it orchestrates.
"""

from __future__ import annotations

import contextlib
import multiprocessing
import os
import sys
import threading
import time
from concurrent.futures import ProcessPoolExecutor
from dataclasses import dataclass, field
from pathlib import Path
from typing import Callable

from rcdoc.analysis.analyse import StageResult
from rcdoc.kinds import analyse_stage
from rcdoc.commands.cache import StageCache, stage_key
from rcdoc.errors import ProjectError
from rcdoc.files import commit, make_temp, remove_stale_temps
from rcdoc.input.model import Project, Stage
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
    # The note's front, appendix and page-number parts of the last build, or made
    # beside the stages in this one (filed again by pending).
    note_parts: dict = field(default_factory=dict)
    # The summary chart, when drawn already (one item: rcdoc.note.page.note_context).
    overview: tuple | None = None

    def commit_cache(self) -> None:
        if self.pending is not None:
            self.pending()
            self.pending = None

    @property
    def status(self) -> str:
        return "fail" if any(r.status != "pass" for r in self.results) else "pass"


def _stage_unit(stage: Stage, project: Project, draw: bool, part_job=None):
    """One unit of work, in this process or a worker: analyse (and draw) one stage,
    and with ``part_job`` render its part of the note (rcdoc.note.assemble).

    A ProjectError comes back as plain data: its location would not survive pickling.
    """
    try:
        t0 = time.perf_counter()
        result = analyse_stage(stage, project.analysis)
        context = None
        if draw:
            from rcdoc.note.page import stage_context
            context = stage_context(result, project)
        part = _part_unit(context, part_job)
        return ("ok", result, context, part, time.perf_counter() - t0)
    except ProjectError as exc:
        return ("error", exc.message, exc.path, exc.file)


def _draw_unit(result, project: Project, part_job=None):
    """Draw (and render the part of) a stage whose analysis came from the cache,
    filed there by ``rcdoc check`` or ``diff``, which do not draw."""
    from rcdoc.note.page import stage_context
    context = stage_context(result, project)
    return context, _part_unit(context, part_job)


def _timed_draw_unit(result, project: Project, part_job):
    """_draw_unit of a stage just analysed by another unit, with its seconds."""
    t0 = time.perf_counter()
    return (*_draw_unit(result, project, part_job), time.perf_counter() - t0)


def _part_unit(context, part_job):
    """A stage's part of the note, or None. Any failure here (a template
    mistake, say) leaves the part to the final render, which reports it."""
    if part_job is None or context is None:
        return None
    head, template_dirs, project_dir, epoch, key = part_job
    try:
        _quiet_renderer()
        from rcdoc.note.assemble import stage_part
        return stage_part(head, context, template_dirs=template_dirs, project_dir=project_dir,
                          source_date_epoch=epoch, key=key)
    except Exception:  # noqa: BLE001 - rendered again, and reported, in write_outputs
        return None


def _appendix_unit(context, part_job):
    """The appendix part (it depends on the project alone), rendered in a worker
    while the stages are analysed; or None, and write_outputs renders it."""
    _head, template_dirs, project_dir, epoch, key = part_job
    try:
        _quiet_renderer()
        from rcdoc.note.assemble import render_part
        return render_part(context, "appendix", template_dirs=template_dirs,
                           project_dir=project_dir, source_date_epoch=epoch, key=key)
    except Exception:  # noqa: BLE001 - rendered again, and reported, in write_outputs
        return None


def _quiet_renderer() -> None:
    import logging
    # As in the main process, weasyprint's messages stay in its logger
    # (it has a NullHandler); a worker's root logger may print them.
    logging.getLogger("weasyprint").propagate = False
    logging.getLogger("fontTools").addHandler(logging.NullHandler())  # font subsetting notes
    logging.getLogger("fontTools").propagate = False


def _worker_init() -> None:
    """Workers leave Ctrl-C to the main process, which stops them (_stop_workers);
    a worker that took the KeyboardInterrupt itself could hand back a result
    that hides it. What the worker has imported is frozen for the garbage
    collector (gc.freeze)."""
    import signal
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    # The modules' objects live as long as the worker: out of the garbage
    # collector's full passes (about 5 % of a chart's CPU, measured).
    import gc
    gc.freeze()


def _stop_workers(pool: ProcessPoolExecutor) -> None:
    # ProcessPoolExecutor has no public way to end running tasks before 3.14.
    processes = list((getattr(pool, "_processes", None) or {}).values())
    pool.shutdown(wait=False, cancel_futures=True)
    for p in processes:
        p.terminate()


def _pool_context(draw: bool):
    """'forkserver' where there is one (Linux), else 'spawn': both start clean workers.

    Only a build (``draw``) preloads the note's drawing modules: check and diff
    never draw, so their workers never load matplotlib, schemdraw or weasyprint."""
    methods = multiprocessing.get_all_start_methods()
    if "forkserver" in methods and sys.platform.startswith("linux"):
        ctx = multiprocessing.get_context("forkserver")
        # Workers fork from a server that has imported rcdoc once, and do not
        # re-run the parent's __main__ (the command line).
        preload = ["rcdoc.commands.spawnguard", "rcdoc.commands.build"]
        ctx.set_forkserver_preload(preload + (["rcdoc.commands.preload"] if draw else []))
        return ctx
    return multiprocessing.get_context("spawn")


class WorkerPool:
    """One pool of worker processes for a whole command, shared by every project
    file it is given (``rcdoc build boards/*.toml``): the workers, and the
    modules they preload, start once, not once a board. Started at the first
    unit of work that needs one, so a command the cache answers starts none.
    Use it as a context manager; ``draw`` says whether workers preload the
    note's drawing modules (build), or never load them (check)."""

    def __init__(self, jobs: int, *, draw: bool):
        self.jobs = max(1, int(jobs or 1))
        self.draw = draw
        self._pool: ProcessPoolExecutor | None = None
        # Started early by warm(): a worker for one stage costs no start-up then.
        self.warmed = False

    def executor(self) -> ProcessPoolExecutor:
        if self._pool is None:
            self._pool = ProcessPoolExecutor(max_workers=self.jobs,
                                             mp_context=_pool_context(self.draw),
                                             initializer=_worker_init)
        return self._pool

    def warm(self) -> None:
        """Start the fork server now, so that its imports (rcdoc, and for a build
        the note's modules: about 2 s of CPU) run beside this process's own
        instead of after them. Only worth it where the pool will be used: the
        server costs that CPU even if no worker is ever asked for."""
        if self.jobs < 2:
            return
        ctx = _pool_context(self.draw)
        if ctx.get_start_method() == "forkserver":
            from multiprocessing import forkserver
            forkserver.ensure_running()
            self.warmed = True

    def __enter__(self) -> "WorkerPool":
        return self

    def __exit__(self, kind, exc, tb) -> None:
        if self._pool is None:
            return
        if kind is not None and issubclass(kind, KeyboardInterrupt):
            _stop_workers(self._pool)      # do not wait for stages still running
        else:
            self._pool.shutdown(wait=True, cancel_futures=kind is not None)
        self._pool = None


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
        appendix = _appendix_job(project, template_dirs, part_jobs[0], note_parts)
    overview = None
    if (front and workers == 1 and pool is not None and pool.warmed and len(todo) == 1
            and not todraw and not redo and part_jobs[todo[0]] is not None):
        overview = _one_beside_front(pool, project, todo[0], part_jobs[todo[0]], settle,
                                     results, note_parts, progress)
    elif workers == 1:
        for i in todo:
            if progress:
                progress(stages[i].id)
            settle(i, _stage_unit(stages[i], project, draw))
        for i in todraw:
            contexts[i], parts[i] = _draw_unit(results[i], project)
    else:
        with contextlib.ExitStack() as stack:    # a pool of its own ends with this project
            shared = pool or stack.enter_context(WorkerPool(workers, draw=draw))
            overview = _run_pool(shared, project, draw, (todo, redo, todraw), part_jobs,
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
                   pending=pending, seconds=seconds, note_parts=note_parts, overview=overview)


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


def _one_beside_front(shared: WorkerPool, project: Project, i: int, part_job, settle, results,
                      note_parts: dict, progress) -> tuple:
    """One stage to redo (a rebuild after a value change): analysed here, as
    always; its drawing and its part of the note go to a worker of the command's
    pool (started while this process loaded), while this process draws the
    summary chart and renders the front matter, which need only the results.
    Returns the summary chart (rcdoc.note.page.note_context's ``overview``)."""
    stage = project.stages[i]
    if progress:
        progress(stage.id)
    t0 = time.perf_counter()
    answer = _stage_unit(stage, project, False)
    if answer[0] == "error":
        settle(i, answer)                           # raises the stage's error
    results[i] = answer[1]
    # Starting the worker waits for the fork server's imports (they may still run
    # on a busy machine): a thread waits for it, this process goes on.
    box: dict = {}
    handing = threading.Thread(target=_submit, args=(box, shared, _draw_unit, answer[1],
                                                     project, part_job), daemon=True)
    handing.start()
    try:
        overview = _early_front(project, results, part_job, note_parts)
        handing.join()
        if "error" in box:
            raise box["error"]
        context, part = box["future"].result()
    except BaseException:
        handing.join()
        if "future" in box:
            box["future"].cancel()
        raise
    settle(i, ("ok", answer[1], context, part, time.perf_counter() - t0))
    return overview


def _submit(box: dict, shared: WorkerPool, fn, *args) -> None:
    try:
        box["future"] = shared.executor().submit(fn, *args)
    except BaseException as exc:  # noqa: BLE001 - raised again in the waiting thread
        box["error"] = exc


def _early_front(project: Project, results, part_job, note_parts: dict) -> tuple:
    """Draw the summary chart and render the front part from the results (the
    stages' heads stand for their contexts: rcdoc.note.assemble.front_context),
    under the key render_note computes; filed in ``note_parts`` for it. A front
    that cannot be rendered here is left to write_outputs, which reports why."""
    from rcdoc.note.assemble import context_key, front_context, render_part
    from rcdoc.note.page import note_context, overview_image, stage_head
    _head, dirs, project_dir, epoch, _key = part_job
    overview = (overview_image(results),)
    context = front_context(note_context(project, results, overview=overview,
                                         stage_contexts=[stage_head(r) for r in results]), dirs)
    key = context_key(context, "front", template_dirs=dirs, source_date_epoch=epoch,
                      project_dir=project_dir)
    have = note_parts.get("front")
    if not (isinstance(have, dict) and have.get("key") == key):
        try:
            _quiet_renderer()
            note_parts["front"] = render_part(context, "front", template_dirs=dirs,
                                              project_dir=project_dir, source_date_epoch=epoch,
                                              key=key)
        except Exception:  # noqa: BLE001 - rendered again, and reported, in write_outputs
            pass
    return overview


def _appendix_job(project: Project, template_dirs, part_job, note_parts: dict):
    """(context, part job) of the appendix part when the last build's is not the
    same, else None. Its key is the one render_note computes from the whole note's
    context: when they differ (an appendix added by the command), write_outputs
    renders it again."""
    from rcdoc.note.assemble import appendix_context, context_key, project_head
    from rcdoc.note.context import bom_appendix, method_appendix
    _head, dirs, project_dir, epoch, _key = part_job
    context = appendix_context(project_head(project), bom_appendix(project) + method_appendix())
    key = context_key(context, "appendix", template_dirs=dirs, source_date_epoch=epoch,
                      project_dir=project_dir)
    have = note_parts.get("appendix")
    if isinstance(have, dict) and have.get("key") == key:
        return None
    return context, (None, dirs, project_dir, epoch, key)


def _run_pool(shared: WorkerPool, project, draw, work, part_jobs, progress, settle, results,
              contexts, parts, appendix=None, note_parts=None, front=True):
    """Run the units of work (stages to analyse, parts to redo, cached stages to
    draw, and the appendix part when ``appendix`` is given) in a pool of worker
    processes; results are taken in stage order.

    Where the stages' parts are rendered by the workers, a stage is analysed by
    one unit and drawn by another queued behind every analysis: once the last
    analysis is in, this process draws the summary chart and renders the front
    matter (_early_front, filed in ``note_parts`` with the appendix) while the
    workers draw. Returns the summary chart (note_context's ``overview``) or None."""
    todo, redo, todraw = work
    stages = project.stages
    split = (front and draw and note_parts is not None and bool(todo)
             and part_jobs[todo[0]] is not None)
    pool = shared.executor()
    futures = {}
    for i in todo:
        if progress:
            progress(stages[i].id)
        futures[i] = (pool.submit(_stage_unit, stages[i], project, False) if split else
                      pool.submit(_stage_unit, stages[i], project, draw, part_jobs[i]))
    redone = {i: pool.submit(_part_unit, contexts[i], part_jobs[i]) for i in redo}
    drawn = {i: pool.submit(_draw_unit, results[i], project, part_jobs[i])
             for i in todraw}
    extra = {"appendix": pool.submit(_appendix_unit, *appendix)} if appendix else {}
    overview = None
    try:
        if split:
            overview = _analyses_then_drawings(pool, project, todo, futures, part_jobs, settle,
                                               results, note_parts)
        else:
            for i in todo:          # in stage order: the first error is the first stage's
                settle(i, futures[i].result())
        for i in redo:
            parts[i] = redone[i].result()
        for i in todraw:
            contexts[i], parts[i] = drawn[i].result()
        made = extra["appendix"].result() if extra else None
    except BaseException:
        # Ctrl-C ends the running workers too, in WorkerPool.__exit__.
        for f in (*futures.values(), *redone.values(), *drawn.values(), *extra.values()):
            f.cancel()
        raise
    if made is not None and note_parts is not None:
        note_parts["appendix"] = made
    return overview


def _analyses_then_drawings(pool, project, todo, futures, part_jobs, settle, results,
                            note_parts) -> tuple:
    """Take the analyses in stage order (the first error is the first stage's),
    queue each stage's drawing behind them, render the front matter here once
    every result is in, then take the drawings. ``futures`` gets the drawings."""
    seconds, drawings = {}, {}
    try:
        for i in todo:
            answer = futures[i].result()
            if answer[0] == "error":
                settle(i, answer)                       # raises the stage's error
            results[i], seconds[i] = answer[1], answer[4]
            drawings[i] = pool.submit(_timed_draw_unit, answer[1], project, part_jobs[i])
        overview = _early_front(project, results, part_jobs[todo[0]], note_parts)
        for i in todo:
            context, part, drew = drawings[i].result()
            settle(i, ("ok", results[i], context, part, seconds[i] + drew))
    finally:
        futures.update({("draw", i): f for i, f in drawings.items()})   # cancelled on error
    return overview


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
                  extra_appendix=(), changes=None) -> tuple[Path, Path]:
    """Render the PDF and the JSON; both land only if both could be made."""
    from rcdoc.note.page import note_context
    from rcdoc.note.pdf import render_pdf
    from rcdoc.note.summary import summary, to_json
    project = outcome.project
    stem = Path(project.file).stem
    pdf_path, json_path = out_dir / f"{stem}.pdf", out_dir / f"{stem}.json"
    json_bytes = to_json(summary(project, outcome.results)).encode("utf-8")
    from rcdoc.note.partslist import parts_csv
    csv_path, csv_bytes = out_dir / f"{stem}-parts.csv", parts_csv(outcome.results)
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
        used = render_pdf(context, tmp_path, template_dirs=list(template_dirs),
                          project_dir=Path(project.file).resolve().parent,
                          source_date_epoch=source_date_epoch(project),
                          stage_parts=outcome.parts,
                          stage_keys=(_part_keys(project, template_dirs)
                                      if outcome.contexts is not None else None),
                          note_parts=outcome.note_parts)
        if used is not None and outcome.parts is not None:
            outcome.parts[:] = used     # filed in the cache by commit_cache below
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


def load_all(files: list[str], *, samples=None, seed=None) -> list[Project]:
    """Validate every file before anything runs: one bad file stops the whole command."""
    return [load_project(f, samples=samples, seed=seed) for f in files]
