"""How a build's processes end: idle workers at once, the command without the
interpreter's teardown, and nothing left behind either way.

Checks are "common practice" for command-line tools that run worker
processes: every byte of output is out before the process ends, no process
of the command outlives it, and nothing is printed that the command did not
say (here: the multiprocessing resource tracker's "leaked semaphore" warning,
which follows a process that ends without its exit handlers).
"""

from __future__ import annotations

import json
import os
import signal
import subprocess
import sys
import time
import uuid
from pathlib import Path

import pytest

import rcdoc.commands.cli as cli
import rcdoc.commands.workers as workers
from test_cache import PROJECT

ROOT = Path(__file__).resolve().parents[1]


def _workers_of(pool: workers.WorkerPool) -> list:
    return list(pool.executor()._processes.values())


def test_idle_workers_end_at_once():
    # Nothing left to run: the workers are ended by SIGTERM, not left to tear
    # their interpreter down; a pool started afterwards works. Several rounds:
    # the end-of-work marker racing the signal, or a second reader of the
    # fork server's status pipe (exit code 255), showed in about one in four.
    for _ in range(8):
        with workers.WorkerPool(2, draw=False) as pool:
            assert pool.executor().submit(sum, [1, 2]).result(timeout=120) == 3
            running = _workers_of(pool)
            assert running
        assert all(not p.is_alive() for p in running)
        assert [p.exitcode for p in running] == [-signal.SIGTERM] * len(running)
    with workers.WorkerPool(2, draw=False) as again:
        assert again.executor().submit(max, [4, 7]).result(timeout=120) == 7


def test_busy_workers_are_left_to_finish():
    # A unit still running is never cut short: _end_idle declines, and the
    # usual shutdown waits for the unit's answer.
    pool = workers.WorkerPool(2, draw=False)
    executor = pool.executor()
    started = executor.submit(time.sleep, 0.5)
    assert workers._end_idle(executor) is False
    executor.shutdown(wait=True)
    assert started.done() and started.exception() is None


def test_pool_internals_unknown_means_usual_shutdown():
    # An executor without the internals _end_idle reads is shut down the usual way.
    class Plain:
        def shutdown(self, wait=True):
            raise AssertionError("must not be called")
    assert workers._end_idle(Plain()) is False


def test_leave_under_a_tracer_exits_the_usual_way(monkeypatch):
    # coverage and cProfile write their results at the interpreter's exit:
    # under a tracer the command raises SystemExit instead of ending at once.
    monkeypatch.setattr(os, "_exit", lambda status: pytest.fail("os._exit under a tracer"))
    monkeypatch.setattr(sys, "gettrace", lambda: (lambda *a: None))
    with pytest.raises(SystemExit) as ended:
        cli._leave(3)
    assert ended.value.code == 3


@pytest.mark.slow
@pytest.mark.skipif(not sys.platform.startswith("linux"), reason="reads /proc")
def test_command_leaves_no_process_and_says_nothing_more(tmp_path):
    # The `rcdoc` command with two workers: exit status, complete outputs and
    # stdout, nothing on stderr but its progress lines. The moment it has ended,
    # no process that carries its environment is left (fork server, workers)
    # but multiprocessing's resource tracker, which ends as it reads the end of
    # its pipe; once that has gone too, stderr still holds nothing more.
    board = tmp_path / "board.toml"
    board.write_text(PROJECT, encoding="utf-8")
    out = tmp_path / "out"
    mark = f"rcdoc-end-{uuid.uuid4().hex}"
    env = dict(os.environ, PYTHONPATH=str(ROOT), RCDOC_TEST_MARK=mark)
    said, err = tmp_path / "stdout.txt", tmp_path / "stderr.txt"
    with said.open("w") as stdout, err.open("w") as stderr:
        done = subprocess.run([sys.executable, "-m", "rcdoc", "build", str(board), "-o", str(out),
                               "--jobs", "2"], env=env, stdout=stdout, stderr=stderr, timeout=600)
        # An empty command line: a process already inside its exit (the kernel has
        # taken its memory), such as the resource tracker as it ends. The tracker
        # is multiprocessing's own (its command line says so) or a fork of the
        # command (rcdoc.commands.forked_server: its process name says so).
        left = [pid for pid, cmd in ((pid, _cmdline(pid)) for pid in _carrying(mark))
                if cmd and b"resource_tracker" not in cmd and _comm(pid) != "rcdoc-tracker"]
    assert done.returncode == 0, err.read_text()
    assert not left, [_cmdline(pid) for pid in left]
    deadline = time.monotonic() + 10
    while _carrying(mark) and time.monotonic() < deadline:
        time.sleep(0.1)
    assert not _carrying(mark)
    lines = err.read_text().splitlines()
    assert lines and all(line.startswith("rcdoc: ") for line in lines), lines
    assert said.read_text().rstrip().endswith("board.json")   # the last line, flushed
    summary = json.loads((out / "board.json").read_text(encoding="utf-8"))
    assert [s["id"] for s in summary["stages"]] == ["lp", "hp"]
    assert (out / "board.pdf").read_bytes().rstrip().endswith(b"%%EOF")


LEAVE = """
import multiprocessing, sys
from rcdoc.commands.cli import _leave
queue = multiprocessing.get_context("forkserver").Queue()   # named semaphores, tracked
print("said before the end")                                 # a pipe: block-buffered
_leave(4)
"""


@pytest.mark.skipif(not sys.platform.startswith("linux"), reason="forkserver semaphores")
def test_leave_flushes_and_unlinks_semaphores():
    # What is still buffered is written, the exit status is kept, and semaphores
    # alive at the end are unlinked by their finalizers, so the resource tracker
    # has nothing to warn of ("leaked semaphore objects").
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    done = subprocess.run([sys.executable, "-c", LEAVE], env=env, capture_output=True,
                          text=True, timeout=120)
    assert done.returncode == 4
    assert done.stdout == "said before the end\n"
    assert done.stderr == ""


def _cmdline(pid: int) -> bytes:
    try:
        return Path(f"/proc/{pid}/cmdline").read_bytes()
    except OSError:
        return b""


def _comm(pid: int) -> str:
    try:
        return Path(f"/proc/{pid}/comm").read_text().strip()
    except OSError:
        return ""


def _carrying(mark: str) -> list[int]:
    found = []
    for entry in os.listdir("/proc"):
        if not entry.isdigit():
            continue
        try:
            environ = Path(f"/proc/{entry}/environ").read_bytes()
            state = Path(f"/proc/{entry}/stat").read_text().rsplit(")", 1)[1].split()[0]
        except OSError:
            continue
        if mark.encode() in environ and state != "Z":
            found.append(int(entry))
    return found


class _SignalsItsOwnEnd:
    """An object whose finalizer is where SIGTERM arrives."""

    def __del__(self):
        os.kill(os.getpid(), signal.SIGTERM)
        time.sleep(0.2)             # the handler runs here, inside the finalizer


@pytest.mark.skipif(not hasattr(signal, "SIGTERM") or sys.platform == "win32",
                    reason="POSIX signals")
def test_signal_inside_a_finalizer_prints_no_traceback(monkeypatch):
    # SIGTERM while a finalizer or weakref callback runs (importlib's module
    # locks have one): the handler's exception cannot leave it, and Python hands
    # it to sys.unraisablehook, whose default prints "Exception ignored ...
    # Traceback". Here nothing reaches the hook in place before the block, the
    # interrupt still ends the block (common practice: a swallowed interrupt is
    # not lost), and the hook and handler are put back.
    from rcdoc.files import Terminated, interrupts, was_interrupted
    reached = []
    monkeypatch.setattr(sys, "unraisablehook", reached.append)
    handler = signal.getsignal(signal.SIGTERM)
    with pytest.raises(Terminated):
        with interrupts():
            doomed = _SignalsItsOwnEnd()
            del doomed
            assert was_interrupted()
    assert reached == []
    assert sys.unraisablehook == reached.append and signal.getsignal(signal.SIGTERM) == handler


def test_other_unraisable_errors_still_reach_the_hook(monkeypatch):
    # Only the interrupt is kept quiet: another error in a finalizer is reported.
    from rcdoc.files import interrupts

    class Broken:
        def __del__(self):
            raise ValueError("a finalizer's own error")
    reached = []
    monkeypatch.setattr(sys, "unraisablehook", reached.append)
    with interrupts():
        doomed = Broken()
        del doomed
    assert [type(r.exc_value) for r in reached] == [ValueError]


def _collector_state() -> tuple:
    import gc
    return gc.isenabled(), gc.get_freeze_count() > 0, "rcdoc.commands.gc_pause" in sys.modules


def test_workers_collect_garbage_after_the_servers_paused_imports():
    # The fork server imports with the cyclic collector off (gc_pause); a worker
    # must have it on again, with what it inherited frozen, or every cycle its
    # charts make would stay in memory until the build ends (common practice:
    # CPython's gc module documents gc.freeze for forked servers).
    if workers._pool_context(False).get_start_method() != "forkserver":
        pytest.skip("the fork server is Linux-only")
    with workers.WorkerPool(1, draw=False) as pool:
        enabled, frozen, paused_in_server = pool.executor().submit(_collector_state).result(
            timeout=120)
    assert paused_in_server and enabled and frozen


def test_only_the_command_collects_less_often(monkeypatch):
    # The command's process takes young collections every YOUNG_THRESHOLD objects
    # (rcdoc.commands.collector); main() called from Python leaves its caller's
    # settings as they were (common practice: a library call leaves the
    # interpreter's global settings alone).
    import gc
    from rcdoc.commands import collector
    before = gc.get_threshold()
    try:
        with pytest.raises(SystemExit):
            cli.main(["--version"])
        assert gc.get_threshold() == before
        seen = {}
        monkeypatch.setattr(cli, "main", lambda argv=None: gc.get_threshold()[0])
        monkeypatch.setattr(cli, "_leave", lambda status: seen.setdefault("young", status))
        cli.entry()
        assert seen["young"] == collector.YOUNG_THRESHOLD != before[0]
        assert gc.get_threshold()[1:] == before[1:]
    finally:
        gc.set_threshold(*before)


def test_a_worker_killed_mid_run_ends_the_command_in_one_line(tmp_path, monkeypatch, capsys):
    # A worker the system kills (for want of memory, say) breaks the pool: the
    # command says so in one line, exit status 3 (neither a failed check, 1, nor
    # an input mistake, 2), and writes nothing (common practice). The worker
    # here ends itself (os._exit) in the middle of its unit.
    import rcdoc.commands.build as build
    project = tmp_path / "board.toml"
    project.write_text(PROJECT, encoding="utf-8")

    def killed(project, *, pool=None, **kw):
        pool.executor().submit(os._exit, 1).result(timeout=120)
    monkeypatch.setattr(build, "analyse_project", killed)
    status = cli.main(["build", str(project), "-o", str(tmp_path / "out"), "--jobs", "2",
                       "--quiet"])
    err = capsys.readouterr().err
    assert status == cli.EXIT_BROKEN == 3
    assert err.count("\n") == 1 and "worker process ended abruptly" in err
    assert "Traceback" not in err and not (tmp_path / "out").exists()


def test_what_lives_to_the_end_is_kept_only_where_the_process_skips_its_teardown(monkeypatch):
    # rcdoc.teardown: nothing is kept in a process that tears down as usual (rcdoc
    # used from Python, this test process); once the command says it ends without
    # teardown, the last object handed over is kept, and only that one.
    from rcdoc import teardown
    monkeypatch.setattr(teardown, "_KEPT", None)
    first, second = object(), object()
    assert teardown.keep(first) is False and teardown._KEPT is None
    teardown.skip()
    assert teardown.keep(first) is True and teardown._KEPT == [first]
    assert teardown.keep(second) is True and teardown._KEPT == [second]


def test_the_joined_note_is_kept_by_the_command_not_by_a_library_caller(monkeypatch, tmp_path):
    # The join's document: freed at once where the process tears down as usual,
    # kept to the end in the command (whose process ends without teardown).
    import pikepdf

    from rcdoc import teardown
    from rcdoc.note import join
    blank = pikepdf.Pdf.new()
    blank.add_blank_page()
    buf = tmp_path / "blank.pdf"
    blank.save(buf)
    part = {"pdf": buf.read_bytes(), "pages": 1, "bookmarks": [], "anchors": {}, "links": []}
    monkeypatch.setattr(teardown, "_KEPT", None)
    one = join.join([part], None, info=None, pdf_id=b"0" * 32)
    assert teardown._KEPT is None
    teardown.skip()
    two = join.join([part], None, info=None, pdf_id=b"0" * 32)
    assert len(teardown._KEPT) == 1 and isinstance(teardown._KEPT[0], pikepdf.Pdf)
    assert one == two          # the same bytes either way
