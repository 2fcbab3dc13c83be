"""The build's order of work (rcdoc.commands.schedule): while the workers start,
the main process analyses stages itself, and the answers are the same as a
worker's, taken in stage order."""

from __future__ import annotations

import threading
from concurrent.futures import Future

import pytest

from rcdoc.commands import schedule
from rcdoc.commands.workers import _stage_unit
from rcdoc.kinds import load_project
from rcdoc.note.summary import summary, to_json

STAGE = """
[[stage]]
id = "s{n}"
title = "Input {n}"
kind = "rc-lowpass"
source = "1 kohm"
parts.r = {{ ref = "R{n}", value = "{n}k7", tolerance = "1%" }}
parts.c = {{ ref = "C{n}", value = "10 nF", tolerance = "5%", dielectric = "C0G" }}
"""


@pytest.fixture
def project(tmp_path):
    path = tmp_path / "board.toml"
    path.write_text('[board]\nname = "Schedule board"\nrevision = "A"\ndate = "2026-03-01"\n'
                    "[analysis]\nsamples = 20\nseed = 3\npoints_per_decade = 6\n"
                    + "".join(STAGE.format(n=n) for n in range(1, 6)), encoding="utf-8")
    return load_project(str(path))


class SlowStart:
    """A pool whose first submit returns only once the main process has analysed
    ``wait_for`` stages itself (workers that take their time to start); its
    units run when their answers are taken."""

    def __init__(self, mine: dict, wait_for: int):
        self.mine, self.wait_for, self.started = mine, wait_for, threading.Event()
        self.submitted: list = []

    def submit(self, fn, *args):
        if not self.started.is_set():
            for _ in range(600):                 # at most 60 s: never hang the suite
                if sum(v is not None for v in self.mine.values()) >= self.wait_for:
                    break
                threading.Event().wait(0.1)
            self.started.set()
        self.submitted.append(args[0].id)
        return Later(fn, args)


class Later(Future):
    """A unit that runs when its answer is asked for (submit returns at once)."""

    def __init__(self, fn, args):
        super().__init__()
        self.job = (fn, args)

    def result(self, timeout=None):
        if not self.done():
            fn, args = self.job
            self.set_result(fn(*args))
        return super().result(timeout)


def test_main_process_analyses_from_the_last_stage_while_workers_start(project):
    todo = list(range(len(project.stages)))
    futures, mine = {}, {}
    pool = SlowStart(mine, wait_for=2)
    schedule._analyse_while_starting(pool, project, todo, futures, mine)
    # Every stage is analysed exactly once, by the pool or here; here from the last.
    assert set(futures) | set(mine) == set(todo) and not set(futures) & set(mine)
    assert len(mine) >= 2 and max(mine) == todo[-1]
    assert sorted(mine) == todo[len(todo) - len(mine):]
    assert pool.submitted == [project.stages[i].id for i in sorted(futures)]
    # The same answers as units run one after another (each stage is seeded on its own).
    answers = [mine[i] if i in mine else futures[i].result() for i in todo]
    again = [_stage_unit(st, project, False) for st in project.stages]
    assert [a[0] for a in answers] == [a[0] for a in again] == ["ok"] * len(todo)
    assert (to_json(summary(project, [a[1] for a in answers]))
            == to_json(summary(project, [a[1] for a in again])))


def test_main_process_takes_nothing_when_workers_are_up_at_once(project):
    todo = list(range(len(project.stages)))
    futures, mine = {}, {}
    pool = SlowStart(mine, wait_for=0)
    schedule._analyse_while_starting(pool, project, todo, futures, mine)
    # The thread submits the first stage before this process looks: the claim at
    # most takes the last one while the first submit returns.
    assert 0 in futures and len(mine) <= 1 and set(futures) | set(mine) == set(todo)


def test_an_error_while_submitting_reaches_the_main_process(project):
    class Broken:
        def submit(self, fn, *args):
            raise RuntimeError("pool broke")
    with pytest.raises(RuntimeError, match="pool broke"):
        schedule._analyse_while_starting(Broken(), project, [0, 1, 2], {}, {})


def test_units_are_left_to_the_pool_after_an_interrupt_and_cancelled_after_an_error():
    # After Ctrl-C or SIGTERM the pool's own shutdown cancels what has not started,
    # in the executor's thread: a future cancelled here as well can meet the
    # workers' end in that thread, where Python 3.11 sets BrokenProcessPool on it
    # and the thread dies with InvalidStateError (concurrent.futures.process,
    # terminate_broken). After any other error nothing else stops them.
    from rcdoc.files import Terminated
    for exc, cancelled in ((KeyboardInterrupt(), False), (Terminated(), False),
                           (ValueError("a stage's error"), True)):
        futures = [Future(), Future()]
        schedule._cancel(futures, exc)
        assert [f.cancelled() for f in futures] == [cancelled, cancelled]
