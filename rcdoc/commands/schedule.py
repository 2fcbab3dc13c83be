"""Where the build's units of work run, and in what order.

What it is for: rcdoc.commands.build.analyse_project finds what the cache
lacks; this module spreads it over the command's worker pool
(rcdoc.commands.workers) and takes the answers back in stage order, so that
the output does not depend on ``jobs``. Two plans:

- several stages to redo: each is analysed by one unit and drawn by another,
  queued behind every analysis; until the workers are up, this process
  analyses stages itself (it would wait otherwise); once every result is in,
  it draws the summary chart and renders the front matter while the workers
  draw (``run_pool``, ``_analyses_then_drawings``);
- one stage to redo (a rebuild after a value change): it is analysed here,
  and drawn and rendered by a worker of the pool started while this process
  loaded, beside the front matter (``one_beside_front``).

The appendix part depends on the project alone: a worker renders it while the
stages are analysed (``appendix_job``).

What it must not do: compute physics, draw, or format; it orchestrates.
"""

from __future__ import annotations

import threading
import time

from rcdoc.commands.workers import (WorkerPool, _appendix_unit, _charts_unit, _draw_unit,
                                    _part_unit,
                                    _quiet_renderer, _stage_unit, _timed_draw_unit)
from rcdoc.input.model import Project

__all__ = ["one_beside_front", "appendix_job", "run_pool", "summary_charts"]


def one_beside_front(shared: WorkerPool, project: Project, i: int, part_job, settle, results,
                      note_parts: dict, progress, meanwhile=None) -> tuple:
    """One stage to redo (a rebuild after a value change): analysed here, as
    always; its drawing goes to a worker of the command's pool (started while
    this process loaded), while this process renders the front matter, which
    needs only the results; then the stage's part and the charts' part (where
    they take pages of their own), here too, where the renderer is loaded and
    warm. Where the charts take pages of their own, the worker that drew the
    stage draws them next, while this process renders the stage's part (a
    second worker drew them beside the stage: its start and first figure
    cost more CPU than the wait, on two cores); else another worker draws them
    at once, for the front matter shows them. This process never loads
    matplotlib; the workers never load the renderer. ``meanwhile`` (no
    arguments) runs here while the workers draw: what the outputs need of the
    results alone. Returns the summary charts (rcdoc.note.page.note_context's
    ``overview``)."""
    from rcdoc.note.overview import overview_rows, overview_titles, own_pages
    stage = project.stages[i]
    if progress:
        progress(stage.id)
    t0 = time.perf_counter()
    answer = _stage_unit(stage, project, False)
    if answer[0] == "error":
        settle(i, answer)                           # raises the stage's error
    results[i] = answer[1]
    rows = overview_rows(results)
    titles = overview_titles([row["label"] for row in rows]) if rows else []
    keys, drawn = _chart_store(rows, note_parts)
    # Starting the workers waits for the fork server's imports (they may still run
    # on a busy machine): a thread waits for it, this process goes on.
    apart = own_pages(titles)
    units = [(_draw_unit, answer[1], project)]
    if not apart:
        units.append((_charts_unit, rows, drawn, keys))
    box: dict = {}
    handing = threading.Thread(target=_submit, args=(box, shared, units), daemon=True)
    handing.start()
    try:
        if apart:       # the front part has no charts: render it now
            _early_front(project, results, part_job, note_parts,
                         [{"image": b"", "title": t} for t in titles])
        if meanwhile is not None:
            meanwhile()
            from rcdoc.note import join  # noqa: F401 - pikepdf, for the join that follows
        handing.join()
        if "error" in box:
            raise box["error"]
        drawing = box["futures"][0]
        if apart:       # the stage's part here, the charts in the worker that drew the stage
            _, context, _ = drawing.result()
            charting = shared.executor().submit(_charts_unit, rows, drawn, keys)
            box["futures"].append(charting)
            stage_part = _part_unit(context, part_job)
            charts = charting.result()
            _file_charts(note_parts, keys, charts)
            # Their own part, from the note's head and the charts alone.
            from rcdoc.note.assemble import charts_context
            _render_note_part(charts_context({**part_job[0], "overview_images": charts}),
                              "overview", part_job, note_parts)
        else:           # the front part shows them
            charts = box["futures"][1].result()
            _file_charts(note_parts, keys, charts)
            _early_front(project, results, part_job, note_parts, charts)
            _, context, _ = drawing.result()
            stage_part = _part_unit(context, part_job)
    except BaseException as exc:
        handing.join()
        _cancel(box.get("futures", []), exc)
        raise
    settle(i, ("ok", answer[1], context, stage_part, time.perf_counter() - t0))
    return (charts,)


def _cancel(futures, exc: BaseException) -> None:
    """Cancel the units not yet started, after an error; not after Ctrl-C or
    SIGTERM, where WorkerPool.__exit__ ends the workers and its shutdown cancels
    them in the executor's own thread. A future cancelled here while still in
    that thread's list of pending work meets the workers' end there: Python 3.11
    then sets BrokenProcessPool on a cancelled future, and that thread dies
    with an InvalidStateError traceback on the terminal (seen once in the
    SIGTERM test)."""
    if isinstance(exc, KeyboardInterrupt):
        return
    for f in futures:
        f.cancel()


def _submit(box: dict, shared: WorkerPool, units) -> None:
    """Submit ``units`` ((function, *args) each) to the pool; their futures in
    ``box["futures"]``, in order, or the error in ``box["error"]``."""
    try:
        pool = shared.executor()
        box["futures"] = [pool.submit(fn, *args) for fn, *args in units]
    except BaseException as exc:  # noqa: BLE001 - raised again in the waiting thread
        box["error"] = exc


def _early_front(project: Project, results, part_job, note_parts: dict,
                 charts: list | None = None) -> tuple:
    """Render the cover and front parts from the results (the stages' heads stand for their
    contexts: rcdoc.note.assemble.front_context), under the key render_note
    computes, and the summary charts' part where they take pages of their own;
    filed in ``note_parts`` for it. ``charts``: the summary charts, drawn already
    (or stand-ins where they are apart: the front part does not show them); else
    they are drawn here. A part that cannot be rendered here is left to
    write_outputs, which reports why. Returns note_context's ``overview``."""
    from rcdoc.note.assemble import charts_context, cover_context, front_context
    from rcdoc.note.page import note_context, stage_head
    if charts is None:
        charts = summary_charts(results, note_parts)
    context = note_context(project, results, overview=(charts,),
                           stage_contexts=[stage_head(r) for r in results])
    front = front_context(context, part_job[1])
    _render_note_part(cover_context(front, part_job[1]), "cover", part_job, note_parts)
    _render_front(front, part_job, note_parts)
    if any(c["image"] for c in charts):
        apart = charts_context(context)
        if apart is not None:
            _render_note_part(apart, "overview", part_job, note_parts)
    return (charts,)


# The summary charts of the last build in its note parts (rcdoc.commands.cache):
# image by chart key (rcdoc.note.overview.chart_keys).
_CHARTS = "overview-charts"


def _chart_store(rows, note_parts: dict) -> tuple[list[str], dict]:
    """The keys of the summary charts of ``rows``, and the charts of the last
    build (``note_parts``) that have one of them."""
    from rcdoc.commands.cache import code_fingerprint
    from rcdoc.note.overview import chart_keys
    keys = chart_keys(rows, code_fingerprint()) if rows else []
    store = note_parts.get(_CHARTS) or {}
    return keys, {k: store[k] for k in keys if isinstance(store.get(k), bytes)}


def _file_charts(note_parts: dict, keys, charts) -> None:
    """Keep this build's summary charts for the next (filed with the note parts)."""
    note_parts[_CHARTS] = {k: c["image"] for k, c in zip(keys, charts)}


def summary_charts(results, note_parts: dict | None) -> list:
    """The summary charts of ``results`` (rcdoc.note.page.overview_images), drawn
    here where the last build's (in ``note_parts``) do not serve; ``note_parts``
    then keeps these."""
    from rcdoc.note.overview import overview_rows
    from rcdoc.note.page import overview_charts
    rows = overview_rows(results)
    if note_parts is None:
        return overview_charts(rows)
    keys, drawn = _chart_store(rows, note_parts)
    charts = overview_charts(rows, drawn, keys)
    _file_charts(note_parts, keys, charts)
    return charts


def _render_note_part(context, part: str, part_job, note_parts: dict) -> None:
    """Render ``part`` of the note from ``context`` into ``note_parts`` unless the
    one there has the same key; a failure is left to write_outputs."""
    from rcdoc.note.assemble import context_key, render_part
    _head, dirs, project_dir, epoch, _key = part_job
    key = context_key(context, part, template_dirs=dirs, source_date_epoch=epoch,
                      project_dir=project_dir)
    have = note_parts.get(part)
    if isinstance(have, dict) and have.get("key") == key:
        return
    try:
        _quiet_renderer()
        note_parts[part] = render_part(context, part, template_dirs=dirs,
                                       project_dir=project_dir, source_date_epoch=epoch, key=key)
    except Exception:  # noqa: BLE001 - rendered again, and reported, in write_outputs
        pass


def _render_front(front, part_job, note_parts: dict) -> None:
    """The front part (or its pages: rcdoc.note.front_pages) into ``note_parts``
    unless the ones there serve; a failure is left to write_outputs."""
    from rcdoc.note.front_pages import front_parts
    _head, dirs, project_dir, epoch, _key = part_job
    try:
        _quiet_renderer()
        front_parts(front, note_parts, dict(template_dirs=dirs, project_dir=project_dir,
                                            source_date_epoch=epoch, fetcher=None))
    except Exception:  # noqa: BLE001 - rendered again, and reported, in write_outputs
        pass


def appendix_job(project: Project, template_dirs, part_job, note_parts: dict):
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


def run_pool(shared: WorkerPool, project, draw, work, part_jobs, progress, settle, results,
              contexts, parts, appendix=None, note_parts=None, front=True):
    """Run the units of work (stages to analyse, parts to redo, cached stages to
    draw, and the appendix part when ``appendix`` is given) in a pool of worker
    processes; results are taken in stage order.

    Where the stages' parts are rendered by the workers, a stage is analysed by
    one unit and drawn by another queued behind every analysis: once the last
    analysis is in, this process draws the summary chart and renders the front
    matter (_early_front, filed in ``note_parts`` with the appendix) while the
    workers draw; and while the workers start, this process analyses stages too
    (_analyse_while_starting). Returns the summary chart (note_context's
    ``overview``) or None."""
    todo, redo, todraw = work
    stages = project.stages
    split = (front and draw and note_parts is not None and bool(todo)
             and part_jobs[todo[0]] is not None)
    pool = shared.executor()
    futures, mine, redone, drawn, extra = {}, {}, {}, {}, {}
    for i in todo:
        if progress:
            progress(stages[i].id)
    overview = None
    try:
        if split:
            _analyse_while_starting(pool, project, todo, futures, mine)
        else:
            for i in todo:
                futures[i] = pool.submit(_stage_unit, stages[i], project, draw, part_jobs[i],
                                         bode=draw)
        redone = {i: pool.submit(_part_unit, contexts[i], part_jobs[i]) for i in redo}
        drawn = {i: pool.submit(_draw_unit, results[i], project, part_jobs[i])
                 for i in todraw}
        extra = {"appendix": pool.submit(_appendix_unit, *appendix)} if appendix else {}
        if split:
            overview = _analyses_then_drawings(pool, project, todo, futures, part_jobs, settle,
                                               results, note_parts, mine)
        else:
            for i in todo:          # in stage order: the first error is the first stage's
                settle(i, futures[i].result())
        for i in redo:
            parts[i] = redone[i].result()
        for i in todraw:
            results[i], contexts[i], parts[i] = drawn[i].result()
        made = extra["appendix"].result() if extra else None
    except BaseException as exc:
        # Ctrl-C ends the running workers too, in WorkerPool.__exit__.
        _cancel([*futures.values(), *redone.values(), *drawn.values(), *extra.values()], exc)
        raise
    if made is not None and note_parts is not None:
        note_parts["appendix"] = made
    return overview


def _analyse_while_starting(pool, project: Project, todo, futures: dict, mine: dict) -> None:
    """Queue the stages' analyses in the pool in stage order (``futures``), from a
    thread: the first submit waits for the workers to start (the fork server's
    imports, about 2 s, or longer where workers are fresh interpreters). Until
    they are up, this process, idle otherwise, analyses stages itself, from the
    last (``mine``: index -> the unit's answer); the thread skips those."""
    lock, up, box, given = threading.Lock(), threading.Event(), {}, set()

    def submit_all() -> None:
        try:
            for i in todo:
                with lock:
                    if i in mine:
                        continue
                    given.add(i)
                futures[i] = pool.submit(_stage_unit, project.stages[i], project, False)
                up.set()
        except BaseException as exc:  # noqa: BLE001 - raised again in this thread
            box["error"] = exc
        finally:
            up.set()
    thread = threading.Thread(target=submit_all, daemon=True)
    thread.start()
    try:
        while not up.is_set():
            with lock:
                free = [i for i in todo if i not in given and i not in mine]
                if not free:
                    break
                i = free[-1]
                mine[i] = None                  # claimed: the thread passes it by
            mine[i] = _stage_unit(project.stages[i], project, False)
    finally:
        thread.join()
    if "error" in box:
        raise box["error"]


def _analyses_then_drawings(pool, project, todo, futures, part_jobs, settle, results,
                            note_parts, mine: dict) -> tuple:
    """Take the analyses in stage order (the first error is the first stage's;
    ``mine`` holds those made in this process), queue each stage's drawing
    behind them, render the front matter here once every result is in, then
    take the drawings. ``futures`` gets the drawings."""
    seconds, drawings = {}, {}
    try:
        for i in todo:
            answer = mine[i] if i in mine else futures[i].result()
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
