"""The worker pool's fork server and resource tracker forked from the command's
process (rcdoc.commands.forked_server): used only where that is safe, and
their workers start as the usual server's do.

Sources: POSIX fork() (a child has one thread, copies of the parent's
descriptors, its signal dispositions and memory) and the Python library
reference (multiprocessing, "Contexts and start methods": the forkserver's
children are forks of the server; os.fork and threads). The conditions
(one thread, no descriptor of the command's own open) are common practice for
forking a program that is not written to be forked at any moment.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]

pytestmark = pytest.mark.skipif(
    not sys.platform.startswith("linux") or not (3, 8) <= sys.version_info[:2] <= (3, 13),
    reason="the forked servers are for Linux and Python 3.8 to 3.13")

# Run as a script (the workers import it again as __mp_main__, as they do the
# rcdoc command's): starts a build's pool as the command does and reports what
# the servers and a worker are. argv: "command" (remember_start called first,
# as rcdoc.commands.cli.entry does) or "library"; then "clean", "thread" (a
# second thread runs) or "file" (a file of its own open).
PROBE = r'''
import gc, json, os, signal, sys, threading, time, warnings


def facts():
    return {"ppid": os.getppid(), "sigint": str(signal.getsignal(signal.SIGINT)),
            "sigterm": str(signal.getsignal(signal.SIGTERM)), "gc": list(gc.get_threshold()),
            "filters": [str(f) for f in warnings.filters], "fds": open_fds("self"),
            "threads": len(os.listdir("/proc/self/task"))}


def open_fds(pid):
    # What each descriptor is open on ("pipe:[inode]", a path): numbers are
    # used again once closed. listdir's own descriptor is gone by then.
    found = []
    for n in os.listdir(f"/proc/{pid}/fd"):
        try:
            found.append(os.readlink(f"/proc/{pid}/fd/{n}"))
        except OSError:
            pass
    return sorted(found)


def cmdline(pid):
    with open(f"/proc/{pid}/cmdline", "rb") as fh:
        return fh.read().decode(errors="replace")


def comm(pid):
    with open(f"/proc/{pid}/comm") as fh:
        return fh.read().strip()


if __name__ == "__main__":
    from rcdoc.commands import forked_server, workers
    if sys.argv[1] == "command":
        forked_server.remember_start()
    start = facts()
    if sys.argv[2] == "thread":
        threading.Thread(target=time.sleep, args=(5,), daemon=True).start()
    if sys.argv[2] == "file":
        kept = open(__file__)
    # What the command changes for itself before the pool starts (cli.entry).
    from rcdoc.commands.collector import tune
    tune()
    pool = workers.WorkerPool(2, draw=False)
    pool.warm()
    from multiprocessing import forkserver, resource_tracker
    server = forkserver._forkserver._forkserver_pid
    tracker = resource_tracker._resource_tracker._pid
    with pool:
        worker = pool.executor().submit(facts).result(timeout=120)
        report = {"start": start, "worker": worker, "server": server,
                  "server_cmdline": cmdline(server), "server_comm": comm(server),
                  "server_fds": open_fds(server),
                  "tracker_cmdline": cmdline(tracker), "tracker_comm": comm(tracker),
                  "tracker_fds": open_fds(tracker),
                  "own_cmdline": cmdline(os.getpid())}
    print(json.dumps(report))
'''


def _probe(tmp_path, *args, pass_fds=()):
    script = tmp_path / "probe.py"
    script.write_text(PROBE, encoding="utf-8")
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    done = subprocess.run([sys.executable, str(script), *args], env=env, capture_output=True,
                          text=True, timeout=300, pass_fds=pass_fds)
    assert done.returncode == 0, done.stderr
    return json.loads(done.stdout.strip().splitlines()[-1])


def _forked(report) -> bool:
    # A fork keeps its parent's command line; multiprocessing's own servers are
    # new interpreters with one of their own.
    forked = report["server_cmdline"] == report["own_cmdline"]
    assert forked == (report["tracker_cmdline"] == report["own_cmdline"])
    assert forked != ("forkserver" in report["server_cmdline"])
    return forked


def test_the_command_forks_its_servers_and_workers_start_as_usual(tmp_path):
    forked = _probe(tmp_path, "command", "clean")
    usual = _probe(tmp_path, "library", "clean")
    assert _forked(forked) and not _forked(usual)
    assert (forked["server_comm"], forked["tracker_comm"]) == ("rcdoc-pool", "rcdoc-tracker")
    # The worker is the server's child in both, with one thread, and gets
    # nothing of what the command set for itself after its start: the usual
    # worker's signal handlers, warning filters and collector thresholds.
    for report in (forked, usual):
        assert report["worker"]["ppid"] == report["server"]
        assert report["worker"]["threads"] == 1
    for key in ("sigint", "sigterm", "gc"):
        assert forked["worker"][key] == usual["worker"][key], key
    assert forked["worker"]["gc"] == forked["start"]["gc"]
    # The filters the modules set as they are imported, in their order of import.
    assert sorted(forked["worker"]["filters"]) == sorted(usual["worker"]["filters"])


@pytest.mark.parametrize("state", ["thread", "file"])
def test_no_fork_with_a_second_thread_or_a_file_open(tmp_path, state):
    # Either would be copied into the fork half-way (a lock held by the other
    # thread, a file position shared): the usual servers are started instead.
    report = _probe(tmp_path, "command", state)
    assert not _forked(report)
    assert report["worker"]["ppid"] == report["server"]


def test_descriptors_passed_to_the_command_stay_out_of_the_forks(tmp_path):
    # A descriptor the command was started with (a make jobserver's pipe, say)
    # is closed in the forks, as multiprocessing's servers never get it; the
    # fork is still made.
    r, w = os.pipe()
    try:
        pipe = os.readlink(f"/proc/self/fd/{r}")
        report = _probe(tmp_path, "command", "clean", pass_fds=(r, w))
    finally:
        os.close(r)
        os.close(w)
    assert _forked(report)
    assert report["start"]["fds"].count(pipe) == 2          # both ends, passed on
    for fds in (report["server_fds"], report["tracker_fds"], report["worker"]["fds"]):
        assert pipe not in fds


def test_cli_main_from_python_forks_nothing(monkeypatch):
    # Without the command's record of its start, nothing is forked.
    from rcdoc.commands import forked_server
    monkeypatch.setattr(forked_server, "_AT_START", None)
    assert forked_server.start_tracker() is False
    assert forked_server.start_server() is False


@pytest.mark.slow
def test_command_with_forked_servers_writes_the_bytes_of_one_process(tmp_path):
    # Through the rcdoc command with two workers (forked servers): a cold build,
    # then a rebuild after one value change (its stage analysed in the command,
    # drawn by a worker); each note and summary is byte for byte that of a build
    # with --jobs 1 (no pool) of the same file in a folder of its own.
    from test_cache import PROJECT
    env = dict(os.environ, PYTHONPATH=str(ROOT), SOURCE_DATE_EPOCH="1767225600")

    def build(text, out, jobs):
        board = tmp_path / "board.toml"
        board.write_text(text, encoding="utf-8")
        done = subprocess.run([sys.executable, "-m", "rcdoc", "build", str(board), "-o",
                               str(tmp_path / out), "--jobs", str(jobs), "--quiet"],
                              env=env, capture_output=True, text=True, timeout=600)
        assert done.returncode == 0 and done.stderr == "", done.stderr
        return [(tmp_path / out / f"board.{ext}").read_bytes() for ext in ("pdf", "json")]

    changed = PROJECT.replace('value = "4k7"', 'value = "5k6"')
    assert changed != PROJECT
    assert build(PROJECT, "two", 2) == build(PROJECT, "one", 1)
    assert build(changed, "two", 2) == build(changed, "fresh", 1)
