"""The build cache and the worker pool: a rebuild redoes only what changed, and
neither the cache nor --jobs changes a byte of the output.

Checks are "common practice" for build caches (content-addressed entries:
same inputs -> same key, any changed input -> new key; a damaged entry is a
miss, never an error) and for parallel builds (same result as serial).
"""

from __future__ import annotations

import dataclasses
from pathlib import Path

import pytest

import rcdoc.commands.build as build
import rcdoc.commands.schedule as schedule
import rcdoc.commands.workers as workers
from rcdoc.commands.cache import CACHE_DIR_NAME, StageCache, canonical, stage_key
from rcdoc.kinds import load_project

PROJECT = """\
[board]
name = "Cache test board"
revision = "B"
date = "2026-03-01"

[analysis]
samples = 30
seed = 5
points_per_decade = 8

[[stage]]
id = "lp"
title = "Input low-pass"
kind = "rc-lowpass"
source = "1 kohm"
parts.r = { ref = "R1", value = "4k7", tolerance = "1%" }
parts.c = { ref = "C1", value = "10 nF", tolerance = "5%", dielectric = "C0G" }

[[stage]]
id = "hp"
title = "Pickup coupling"
kind = "rc-highpass"
parts.c = { ref = "C2", value = "1 uF", tolerance = "10%", dielectric = "C0G" }
parts.r = { ref = "R2", value = "100k", tolerance = "1%" }
"""


@pytest.fixture
def project_file(tmp_path):
    path = tmp_path / "board.toml"
    path.write_text(PROJECT, encoding="utf-8")
    return path


def _rendering(monkeypatch) -> list:
    """The parts of the note rendered in this process from now on, by name, in order."""
    import rcdoc.note.assemble as assemble
    rendered, real = [], assemble.render_part

    def recorded(context, part, **kw):
        rendered.append(part)
        return real(context, part, **kw)
    monkeypatch.setattr(assemble, "render_part", recorded)
    return rendered


def _counting(monkeypatch):
    """Count stage analyses run in this process."""
    calls = []
    real = workers.analyse_stage

    def counted(stage, analysis, **kw):
        calls.append(stage.id)
        return real(stage, analysis, **kw)
    monkeypatch.setattr(workers, "analyse_stage", counted)
    return calls


@pytest.mark.slow
def test_rebuild_after_one_value_change_redoes_only_that_stage(project_file, tmp_path, monkeypatch):
    calls = _counting(monkeypatch)
    out = tmp_path / "out"
    p = load_project(str(project_file))
    first = build.analyse_project(p, draw=True, out_dir=out)
    assert calls == ["lp", "hp"] and first.cached == []
    # Entries are filed only once the outputs are written (write_outputs commits them).
    assert not (out / CACHE_DIR_NAME).exists()
    first.commit_cache()
    entries = _stage_entries(out)
    assert len(entries) == 2
    # Beside them, the summary chart the note will show, kept for the next build.
    assert (out / CACHE_DIR_NAME / "board" / "note-parts.pickle").is_file()

    calls.clear()
    again = build.analyse_project(load_project(str(project_file)), draw=True, out_dir=out)
    again.commit_cache()
    assert calls == [] and again.cached == ["lp", "hp"]
    # What came from the cache is what was computed.
    assert again.contexts == first.contexts
    assert [r.metrics[0].nominal for r in again.results] == [r.metrics[0].nominal for r in first.results]

    project_file.write_text(PROJECT.replace('value = "100k"', 'value = "120k"'), encoding="utf-8")
    calls.clear()
    changed = build.analyse_project(load_project(str(project_file)), draw=True, out_dir=out)
    changed.commit_cache()
    assert calls == ["hp"] and changed.cached == ["lp"]
    # Corner of an RC high-pass 1/(2πRC) moves down when R grows (textbook formula).
    assert changed.results[1].metrics[0].nominal < first.results[1].metrics[0].nominal
    # The stale entry of the old "hp" is pruned: one entry per stage remains.
    assert len(_stage_entries(out)) == 2


def _stage_entries(out):
    """The build cache's stage entries (not the note's parts: note-parts.pickle)."""
    return [e for e in (out / CACHE_DIR_NAME / "board").glob("*.pickle") if e.stem != "note-parts"]


def test_key_covers_stage_fields_and_analysis(project_file):
    p = load_project(str(project_file))
    lp, hp = p.stages
    assert stage_key(lp, p) == stage_key(lp, load_project(str(project_file)))
    assert stage_key(lp, p) != stage_key(hp, p)
    r = lp.parts["r"]
    nudged = dataclasses.replace(lp, parts={**lp.parts, "r": dataclasses.replace(r, value=r.value * (1 + 1e-15))})
    assert stage_key(nudged, p) != stage_key(lp, p)       # exact floats: no rounding collisions
    more = dataclasses.replace(p, analysis=dataclasses.replace(p.analysis, samples=31))
    assert stage_key(lp, more) != stage_key(lp, p)
    # Dict order does not matter, values do.
    assert canonical({"a": 1.0, "b": 2.0}) == canonical({"b": 2.0, "a": 1.0})
    assert canonical({"a": 1.0}) != canonical({"a": 1.0000000000000002})


def _filed(project_file, out):
    """The project, built once into ``out`` with its cache entries filed, and that cache."""
    p = load_project(str(project_file))
    build.analyse_project(p, draw=True, out_dir=out).commit_cache()
    return p, StageCache.for_output(out, str(project_file))


class _Payload:
    """Pickles as a call of ``fn`` with ``args``: how a forged pickle runs code."""

    def __init__(self, fn, *args):
        self.fn, self.args = fn, args

    def __reduce__(self):
        return self.fn, self.args


@pytest.mark.slow
def test_forged_entry_runs_no_code_and_is_rebuilt(project_file, tmp_path, monkeypatch):
    # An entry that names a function (here one that would write a file) is refused
    # as it loads, before the call: nothing runs, and the stage is analysed again
    # (common practice for pickles in a folder others may write, such as a cache
    # committed in a pull request).
    import io
    import os
    import pickle

    from rcdoc.commands.cache import _FORMAT, _EntryUnpickler
    out = tmp_path / "out"
    p, cache = _filed(project_file, out)
    key = stage_key(p.stages[0], p)
    marker = tmp_path / "ran"
    forged = [_Payload(os.system, f"touch {marker}"), _Payload(Path.touch, marker),
              _Payload(eval, "1"), _Payload(__import__, "os")]
    for payload in forged:
        (cache.root / f"{key}.pickle").write_bytes(pickle.dumps(
            {"format": _FORMAT, "key": key, "result": payload, "context": {},
             "part": None}, protocol=pickle.HIGHEST_PROTOCOL))
        assert StageCache.for_output(out, str(project_file)).get(key) is None
    # The same for a class of rcdoc's that is not data, a function of rcdoc's, a
    # module outside the data packages, and an attribute chain from a data class
    # to its module's globals.
    for module, name in (("rcdoc.commands.workers", "WorkerPool"),
                         ("rcdoc.files", "write_atomic"),
                         ("rcdoc.note.report", "ConfinedFetcher"),
                         ("numpy.testing", "assert_equal"),
                         ("rcdoc.analysis.results", "StageResult.__init__.__globals__")):
        with pytest.raises(pickle.UnpicklingError):
            _EntryUnpickler(io.BytesIO(b"")).find_class(module, name)
    assert not marker.exists()
    calls = _counting(monkeypatch)
    again = build.analyse_project(p, draw=True, out_dir=out)
    assert calls == ["lp"] and again.cached == ["hp"] and not marker.exists()


@pytest.mark.slow
def test_damaged_entry_is_rebuilt(project_file, tmp_path, monkeypatch):
    out = tmp_path / "out"
    p, cache = _filed(project_file, out)
    victim = cache.root / f"{stage_key(p.stages[0], p)}.pickle"
    victim.write_bytes(b"\x80\x05 not a pickle at all")
    calls = _counting(monkeypatch)
    again = build.analyse_project(p, draw=True, out_dir=out)
    again.commit_cache()
    assert calls == ["lp"] and again.cached == ["hp"]
    assert StageCache.for_output(out, str(project_file)).get(stage_key(p.stages[0], p)) is not None


@pytest.mark.slow
def test_failed_build_writes_no_cache(tmp_path, monkeypatch):
    path = tmp_path / "board.toml"
    path.write_text(PROJECT, encoding="utf-8")
    p = load_project(str(path))

    def broken(stage, analysis, **kw):
        from rcdoc.errors import ProjectError
        if stage.id == "hp":
            raise ProjectError("made to fail")
        return real(stage, analysis, **kw)
    real = workers.analyse_stage
    monkeypatch.setattr(workers, "analyse_stage", broken)
    out = tmp_path / "out"
    from rcdoc.errors import ProjectError
    with pytest.raises(ProjectError) as info:
        build.analyse_project(p, draw=True, out_dir=out)
    assert "stage[2]" in str(info.value)      # the error names the stage that failed
    assert not out.exists()


@pytest.mark.slow
def test_jobs_and_cache_give_the_same_bytes(project_file, tmp_path, monkeypatch):
    p = load_project(str(project_file))
    serial = build.analyse_project(p, draw=True, jobs=1)
    pooled = build.analyse_project(p, draw=True, jobs=2)
    assert pooled.contexts == serial.contexts
    # With workers, the appendix part was rendered by one of them, and the front
    # matter here while they drew the stages, under the keys the whole note's
    # render computes: write_outputs renders neither again.
    assert pooled.note_parts["appendix"]["pages"] >= 1
    assert pooled.note_parts["front"]["pages"] >= 1 and pooled.overview is not None
    # Not where the command adds to the front matter afterwards (build --since).
    later = build.analyse_project(p, draw=True, jobs=2, front=False)
    assert "front" not in later.note_parts and later.overview is None
    assert later.contexts == serial.contexts
    rendered = _rendering(monkeypatch)
    a = build.write_outputs(serial, tmp_path / "a")
    assert "appendix" in rendered
    rendered.clear()
    b = build.write_outputs(pooled, tmp_path / "b")
    assert "appendix" not in rendered and "front" not in rendered and "numbers" in rendered
    assert Path(a[1]).read_bytes() == Path(b[1]).read_bytes()
    assert Path(a[0]).read_bytes() == Path(b[0]).read_bytes()


def test_one_stage_to_redo_runs_in_this_process(project_file, tmp_path, monkeypatch):
    # A pool's start-up costs more than one stage's analysis (common practice:
    # do not fan out a single unit of work); the changed stage runs here.
    out = tmp_path / "out"
    build.analyse_project(load_project(str(project_file)), jobs=1, out_dir=out).commit_cache()
    project_file.write_text(PROJECT.replace('value = "100k"', 'value = "120k"'), encoding="utf-8")
    calls = _counting(monkeypatch)

    def no_pool(*args, **kwargs):
        raise AssertionError("a worker pool was started for one stage")
    monkeypatch.setattr(schedule, "run_pool", no_pool)
    changed = build.analyse_project(load_project(str(project_file)), jobs=2, out_dir=out)
    assert calls == ["hp"] and changed.cached == ["lp"] and changed.computed == ["hp"]


def test_note_part_keys_follow_their_inputs():
    # Content-addressed keys (common practice): same context -> same key; a changed
    # page count, value or image -> a new key.
    from rcdoc.note.assemble import context_key
    import numpy as np
    ctx = {"board": {"name": "B"}, "appendix": [{"rows": [[1.0, "4.7 kΩ"]]}], "img": b"\x89PNG1",
           "arr": np.arange(3.0)}
    key = context_key(ctx, "numbers", page_count=12)
    assert key == context_key(dict(ctx), "numbers", page_count=12)
    assert key != context_key(ctx, "numbers", page_count=13)
    assert key != context_key(ctx, "appendix", page_count=12)
    assert key != context_key({**ctx, "appendix": [{"rows": [[1.0000000000000002, "4.7 kΩ"]]}]},
                              "numbers", page_count=12)
    assert key != context_key({**ctx, "img": b"\x89PNG2"}, "numbers", page_count=12)
    assert key != context_key({**ctx, "arr": np.arange(3.0) + 1e-12}, "numbers", page_count=12)


@pytest.mark.slow
def test_rebuild_reuses_page_numbers_and_gives_the_same_bytes(project_file, tmp_path,
                                                             monkeypatch):
    # The page-number part is reused when the page count did not change; the
    # rebuilt note is byte for byte the note a cold build makes (common practice).
    out = tmp_path / "out"
    first = build.analyse_project(load_project(str(project_file)), draw=True, out_dir=out)
    build.write_outputs(first, out)
    project_file.write_text(PROJECT.replace('value = "100k"', 'value = "120k"'), encoding="utf-8")
    rendered = _rendering(monkeypatch)
    p = load_project(str(project_file))
    pdf, _ = build.write_outputs(build.analyse_project(p, draw=True, out_dir=out), out)
    assert "numbers" not in rendered and "front" in rendered and "stage" in rendered
    cold = build.write_outputs(build.analyse_project(p, draw=True), tmp_path / "cold")[0]
    assert "numbers" in rendered[rendered.index("front", 1):]
    assert Path(pdf).read_bytes() == Path(cold).read_bytes()


@pytest.mark.slow
def test_cover_is_rendered_again_only_when_a_verdict_moves(tmp_path, monkeypatch):
    # The cover shows the board, the overall verdict and each stage's name and
    # verdict: a value change that moves no verdict reuses the last build's
    # cover, one that fails a check renders it again, and each rebuilt note is
    # byte for byte the note a cold build makes (common practice).
    checked = PROJECT.replace('dielectric = "C0G" }\n\n', 'dielectric = "C0G" }\n'
                              '[[stage.check]]\nmetric = "corner"\nmin = "2 kHz"\n'
                              'max = "4 kHz"\n\n', 1)
    assert checked.count("[[stage.check]]") == 1
    board, out = tmp_path / "board.toml", tmp_path / "out"

    def rebuilt(text):
        board.write_text(text, encoding="utf-8")
        rendered.clear()
        p = load_project(str(board))
        outcome = build.analyse_project(p, draw=True, out_dir=out)
        pdf, _ = build.write_outputs(outcome, out)
        done = list(rendered)
        cold = build.write_outputs(build.analyse_project(p, draw=True), tmp_path / "cold")[0]
        assert Path(pdf).read_bytes() == Path(cold).read_bytes()
        return outcome.status, done

    rendered = _rendering(monkeypatch)
    # RC low-pass corner 1/(2 pi (Rs + R) C) (textbook formula): 2.79 kHz with
    # 1 kohm + 4.7 kohm and 10 nF, 3.06 kHz with 4.2 kohm, 332 Hz with 47 kohm.
    assert rebuilt(checked) == ("pass", ["stage", "stage", "cover", "front", "appendix", "numbers"])
    status, done = rebuilt(checked.replace('value = "4k7"', 'value = "4k2"'))
    assert status == "pass" and "cover" not in done and "front" in done
    status, done = rebuilt(checked.replace('value = "4k7"', 'value = "47k"'))
    assert status == "fail" and "cover" in done and "front" in done


@pytest.mark.slow
def test_one_stage_drawn_by_a_worker_beside_the_front(project_file, tmp_path, monkeypatch):
    # A rebuild with the command's pool: the changed stage is analysed here, drawn
    # by a worker while this process renders the front matter from the results,
    # and its part rendered here once the drawing is in (the renderer is warm here);
    # the note is byte for byte the note a cold serial build makes (common practice).
    out = tmp_path / "out"
    first = build.analyse_project(load_project(str(project_file)), draw=True, out_dir=out)
    build.write_outputs(first, out)
    project_file.write_text(PROJECT.replace('value = "100k"', 'value = "120k"'), encoding="utf-8")
    calls = _counting(monkeypatch)
    rendered = _rendering(monkeypatch)
    p = load_project(str(project_file))
    with build.WorkerPool(2, draw=True) as pool:
        pool.warm()       # as the command does: without a fork server started early
        again = build.analyse_project(p, draw=True, jobs=2, out_dir=out, pool=pool)
    assert calls == ["hp"] and again.computed == ["hp"] and again.cached == ["lp"]
    # The drawing came from the worker; the cover (no verdict moved) from the last build.
    assert rendered == ["front", "stage"]
    assert again.note_parts["cover"]["key"] == first.note_parts["cover"]["key"]
    assert again.note_parts["front"]["key"] and again.overview is not None
    assert again.contexts[1]["id"] == "hp" and again.parts[1]["pages"] >= 1
    pdf, _ = build.write_outputs(again, out)
    assert rendered == ["front", "stage"]   # nothing rendered again
    cold = build.write_outputs(build.analyse_project(p, draw=True), tmp_path / "cold")[0]
    assert Path(pdf).read_bytes() == Path(cold).read_bytes()


@pytest.mark.slow
def test_one_stage_stays_here_without_a_fork_server_started_early(project_file, tmp_path,
                                                                  monkeypatch):
    # Where workers would start only now (spawn, or a pool nobody warmed), their
    # start-up costs more than the stage's drawing: all of it stays here.
    out = tmp_path / "out"
    build.write_outputs(build.analyse_project(load_project(str(project_file)), draw=True,
                                              out_dir=out), out)
    project_file.write_text(PROJECT.replace('value = "100k"', 'value = "120k"'), encoding="utf-8")

    def no_worker(*args, **kwargs):
        raise AssertionError("a worker was asked to draw one stage")
    monkeypatch.setattr(schedule, "one_beside_front", no_worker)
    with build.WorkerPool(2, draw=True) as pool:
        again = build.analyse_project(load_project(str(project_file)), draw=True, jobs=2,
                                      out_dir=out, pool=pool)
    assert again.computed == ["hp"] and again.contexts[1]["id"] == "hp"


def test_pool_is_warmed_first_and_stopped_where_no_stage_is_to_analyse(project_file, tmp_path,
                                                                        monkeypatch):
    # The fork server starts before the board loads (its imports run beside the
    # command's own), and costs CPU whether or not a worker is ever asked for: it
    # is stopped at once where every stage has a cache entry.
    import rcdoc.commands.cli as cli
    main = cli.main
    out = tmp_path / "out"
    p = load_project(str(project_file))
    assert build.stages_to_analyse(p, out) == 2 and build.stages_to_analyse(p, None) == 2
    calls = []
    monkeypatch.setattr(workers.WorkerPool, "warm",
                        lambda self, before_fork=None: calls.append(("warm", self.jobs)))
    monkeypatch.setattr(workers.WorkerPool, "cool", lambda self: calls.append(("cool", self.jobs)))
    monkeypatch.setattr(cli, "_build_checked", lambda *a: calls.append("build") or 0)
    assert main(["build", str(project_file), "-o", str(out), "--jobs", "2", "--quiet"]) == 0
    assert calls == [("warm", 2), "build", ("cool", 2)]    # the last: the pool's end, unused
    build.analyse_project(p, jobs=1, out_dir=out).commit_cache()
    assert build.stages_to_analyse(p, out) == 0
    calls.clear()
    assert main(["build", str(project_file), "-o", str(out), "--jobs", "2", "--quiet"]) == 0
    assert calls == [("warm", 2), ("cool", 2), "build", ("cool", 2)]


def test_unused_fork_server_is_stopped(project_file, tmp_path):
    # A real server, warmed and stopped while it still imports: no process of it
    # is left, and a pool started afterwards works (a new server).
    import os
    from multiprocessing import forkserver
    pool = workers.WorkerPool(2, draw=True)
    pool.warm()
    pid = forkserver._forkserver._forkserver_pid
    if pid is None:
        pytest.skip("no fork server on this platform")
    pool.cool()
    assert not pool.warmed and forkserver._forkserver._forkserver_pid is None
    with pytest.raises(ChildProcessError):
        os.waitpid(pid, 0)                  # reaped: not left as a zombie either
    with workers.WorkerPool(2, draw=False) as again:
        assert again.executor().submit(sum, [1, 2]).result(timeout=120) == 3


def test_fork_server_preload_is_silent_without_a_renderer():
    # A server started before require_renderer must neither print weasyprint's
    # banner nor a traceback when the renderer cannot load: the command says it
    # in one line. Here weasyprint cannot be imported at all.
    import subprocess
    import sys
    code = ("import sys; sys.modules['weasyprint'] = None; "
            "import rcdoc.commands.preload; print('ok', 'rcdoc.note.assemble' in sys.modules)")
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                          cwd=str(Path(__file__).resolve().parent.parent))
    assert proc.returncode == 0 and proc.stderr == ""
    assert proc.stdout == "ok False\n"
