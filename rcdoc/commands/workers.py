"""The build's units of work and the pool of worker processes that runs them.

What it is for: a unit is what one worker does for one stage (analyse it; draw
its note blocks; render its part of the note) or for the note (the appendix
part). Units run in this process or in a worker of ``WorkerPool``; they take
and return plain data, so that a worker's answer pickles: a ProjectError comes
back as ("error", message, path, file).

The pool starts its workers from a fork server that has imported rcdoc and,
for a build, the note's modules once ('spawn' where there is no fork server);
rcdoc.commands.schedule decides which units go where.

What it must not do: decide the order of work or touch the cache.
"""

from __future__ import annotations

import contextlib
import multiprocessing
import os
import signal
import sys
import time
from concurrent.futures import ProcessPoolExecutor

from rcdoc.errors import ProjectError
from rcdoc.input.model import Project, Stage

__all__ = ["WorkerPool"]


def analyse_stage(stage: Stage, analysis, bode: bool = True):
    """rcdoc.kinds.analyse_stage, imported when first needed: the command imports
    this module to start the pool's fork server before it loads the analysis."""
    from rcdoc.kinds import analyse_stage as analyse
    return analyse(stage, analysis, bode=bode)


def _stage_unit(stage: Stage, project: Project, draw: bool, part_job=None, bode: bool = True):
    """One unit of work, in this process or a worker: analyse (and draw) one stage,
    and with ``part_job`` render its part of the note (rcdoc.note.assemble).
    ``bode`` False (check, diff: nothing is drawn) leaves the Bode band out; a
    build's analysis that another unit draws keeps it.

    A ProjectError comes back as plain data: its location would not survive pickling.
    """
    try:
        t0 = time.perf_counter()
        result = analyse_stage(stage, project.analysis, bode=bode or draw)
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
    filed there by ``rcdoc check`` or ``diff``, which do not draw: its Bode band is
    added first (rcdoc.kinds.complete_bode). Returns (result, context, part)."""
    from rcdoc.kinds import complete_bode
    from rcdoc.note.page import stage_context
    result = complete_bode(result, project.analysis)
    context = stage_context(result, project)
    return result, context, _part_unit(context, part_job)


def _timed_draw_unit(result, project: Project, part_job):
    """_draw_unit of a stage just analysed by another unit: (context, part, seconds)."""
    t0 = time.perf_counter()
    _, context, part = _draw_unit(result, project, part_job)
    return context, part, time.perf_counter() - t0


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


def _charts_unit(rows, drawn=None, keys=()):
    """The summary charts drawn from their rows (rcdoc.note.overview.overview_rows;
    those in ``drawn`` by their ``keys`` are taken from it: page.overview_charts)."""
    from rcdoc.note.page import overview_charts
    return overview_charts(rows, drawn, keys)


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
    collector (gc.freeze), and collection is on again (the fork server pauses
    it while it imports: rcdoc.commands.gc_pause)."""
    import signal
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    # The modules' objects live as long as the worker: out of the garbage
    # collector's full passes (about 5 % of a chart's CPU, measured).
    import gc
    gc.freeze()
    gc.enable()


def _stop_workers(pool: ProcessPoolExecutor) -> None:
    # ProcessPoolExecutor has no public way to end running tasks before 3.14.
    # The shutdown first, unlike _end_idle: with units still pending, the
    # executor's thread cancels them itself before it finds the workers gone
    # (else it marks them broken while they are being cancelled: _cancel).
    processes = list((getattr(pool, "_processes", None) or {}).values())
    pool.shutdown(wait=False, cancel_futures=True)
    for p in processes:
        p.terminate()


def _end_idle(pool: ProcessPoolExecutor) -> bool:
    """End the workers of a pool with nothing left to run, at once: SIGTERM, for
    which a worker keeps the default action, so it ends without the interpreter's
    teardown (about 0.3 s of CPU a worker after a build, which the command would
    wait for). False, and nothing done, where a unit is still pending or running,
    or where the executor's internals are not those of Python 3.8 to 3.13: the
    caller then shuts the pool down the usual way."""
    pending = getattr(pool, "_pending_work_items", None)
    processes = getattr(pool, "_processes", None)
    if pending is None or processes is None or pending:
        return False
    # SIGTERM before the shutdown: the shutdown's wake-up hands an idle worker
    # its end-of-work marker, on which it would leave the slow way if it read
    # it before the signal came. The executor's own thread then reaps them
    # alone: a second reader of a fork-server worker's status pipe races it,
    # and the loser records the exit code as 255 (Python 3.11's
    # popen_forkserver).
    for p in list(processes.values()):
        p.terminate()
    pool.shutdown(wait=True)
    return True


def stop_fork_server() -> None:
    """Kill this process's fork server, if one runs, and forget it (a later pool
    starts another). For a server with nothing left to do: unused
    (``WorkerPool.cool``), or at the end of the ``rcdoc`` command
    (rcdoc.commands.cli.entry), where it would otherwise tear itself down after
    the command, holding the command's stderr. Killed: it keeps no state."""
    from multiprocessing import forkserver
    server = getattr(forkserver, "_forkserver", None)
    pid = getattr(server, "_forkserver_pid", None)
    if pid is None:
        return
    with contextlib.suppress(OSError):
        os.kill(pid, signal.SIGKILL)
    with contextlib.suppress(Exception):   # closes its socket, reaps it
        server._stop()


def _pool_context(draw: bool):
    """'forkserver' where there is one (Linux), else 'spawn': both start clean workers.

    Only a build (``draw``) preloads the note's drawing modules: check and diff
    never draw, so their workers never load matplotlib, schemdraw or weasyprint."""
    methods = multiprocessing.get_all_start_methods()
    if "forkserver" in methods and sys.platform.startswith("linux"):
        ctx = multiprocessing.get_context("forkserver")
        # Workers fork from a server that has imported rcdoc once, and do not
        # re-run the parent's __main__ (the command line).
        preload = ["rcdoc.commands.gc_pause", "rcdoc.commands.spawnguard",
                   "rcdoc.commands.build"]
        ctx.set_forkserver_preload(preload + (["rcdoc.commands.preload"] if draw else []))
        return ctx
    return multiprocessing.get_context("spawn")


class WorkerPool:
    """One pool of worker processes for a whole command, shared by every project
    file it is given (``rcdoc build boards/*.toml``): the workers, and the
    modules they preload, start once, not once a board. The workers start at
    the first unit of work that needs one, so a command the cache answers starts
    none (``build`` starts the fork server early with ``warm`` and stops it
    unused with ``cool``; leaving the block stops it too). Use it as a context manager; ``draw`` says whether workers preload the
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

    def warm(self, before_fork=None) -> None:
        """Start the fork server now, so that its imports (for a build the note's
        drawing modules: about 0.4 s of CPU) run beside this process's own
        instead of after them. The server costs that CPU even if no worker is
        ever asked for: ``cool`` stops it where none will be. In the ``rcdoc``
        command it is a fork of this process (rcdoc.commands.forked_server), made
        after ``before_fork`` (no arguments) has run: what it imports is the
        server's too."""
        if self.jobs < 2:
            return
        ctx = _pool_context(self.draw)
        if ctx.get_start_method() == "forkserver":
            from multiprocessing import forkserver
            from rcdoc.commands import forked_server
            # Forked from this process where it may be (the rcdoc command, one
            # thread, no file of its own open): no interpreter to start, and
            # what this process has imported is the server's too.
            if forked_server.start_tracker() and before_fork is not None:
                before_fork()
            if not forked_server.start_server():
                forkserver.ensure_running()
            self.warmed = True

    def cool(self) -> None:
        """Stop a fork server that warm() started and no worker used (nothing to
        redo, or the command failed first): it would go on importing after this
        process ended, holding its stderr. Killed: it has no workers yet."""
        if not self.warmed or self._pool is not None:
            return
        self.warmed = False
        stop_fork_server()

    def __enter__(self) -> "WorkerPool":
        return self

    def __exit__(self, kind, exc, tb) -> None:
        if self._pool is None:
            self.cool()
            return
        if kind is not None and issubclass(kind, KeyboardInterrupt):
            _stop_workers(self._pool)      # do not wait for stages still running
        elif not (kind is None and _end_idle(self._pool)):
            self._pool.shutdown(wait=True, cancel_futures=kind is not None)
        self._pool = None
