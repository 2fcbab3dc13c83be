"""What a build writes, and what it never overwrites (common practice for build
tools run in CI: outputs land whole, an interrupted build exits 128 + SIGINT = 130).

- two inputs that would write the same note in one command: an input error
  before anything is written;
- Ctrl-C at any moment (final render included, even when a library swallows
  the KeyboardInterrupt) ends the build with 130 and keeps the previous note;
- temporary files of a killed build are removed by the next one; nothing else.
"""

from __future__ import annotations

import contextlib
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

from rcdoc import files

from rcdoc.commands import cli
from tests.test_errors import OLD_JSON, OLD_PDF, project

pytestmark = pytest.mark.filterwarnings("ignore")


def _old_note(out: Path, stem: str = "board") -> None:
    out.mkdir(parents=True, exist_ok=True)
    (out / f"{stem}.pdf").write_bytes(OLD_PDF)
    (out / f"{stem}.json").write_bytes(OLD_JSON)


def test_same_stem_in_two_folders_with_one_output_is_refused(tmp_path, capsys):
    for sub in ("a", "b"):
        (tmp_path / sub).mkdir()
        (tmp_path / sub / "board.toml").write_text(project(), encoding="utf-8")
    out = tmp_path / "out"
    rc = cli.main(["build", str(tmp_path / "a" / "board.toml"), str(tmp_path / "b" / "board.toml"),
                   "-o", str(out), "--quiet"])
    err = capsys.readouterr().err
    assert rc == 2
    assert str(tmp_path / "b" / "board.toml") in err and "writes the same note" in err
    assert "a/board.toml" in err and "Traceback" not in err
    assert not out.exists()          # nothing written, no shared cache made


@pytest.mark.parametrize("taken", ["board.pdf", "board.json", "board-parts.csv"])
def test_a_folder_named_as_an_output_is_refused_before_any_work(tmp_path, capsys, taken):
    # It used to fail only when the note was moved into place, after the JSON and
    # the parts list had landed, and the message named the temporary file.
    (tmp_path / "board.toml").write_text(project(), encoding="utf-8")
    out = tmp_path / "out"
    (out / taken).mkdir(parents=True)
    rc = cli.main(["build", str(tmp_path / "board.toml"), "-o", str(out), "--quiet"])
    err = capsys.readouterr().err
    assert rc == 2 and "Traceback" not in err and len(err.strip().splitlines()) == 1
    assert str(out / taken) in err and "folder" in err
    assert sorted(p.name for p in out.iterdir()) == [taken]     # nothing written, no cache


@pytest.mark.parametrize("command", ["check-junit", "diff-json"])
def test_a_report_file_that_is_a_folder_is_refused_before_any_work(tmp_path, capsys, command):
    board = tmp_path / "board.toml"
    board.write_text(project(), encoding="utf-8")
    (tmp_path / "report").mkdir()
    argv = (["check", str(board), "--junit", str(tmp_path / "report")] if command == "check-junit"
            else ["diff", str(board), str(board), "--json", str(tmp_path / "report")])
    rc = cli.main([*argv, "-o", str(tmp_path / "out")])
    err = capsys.readouterr().err
    assert rc == 2 and "Traceback" not in err and len(err.strip().splitlines()) == 1
    assert str(tmp_path / "report") in err and "folder" in err
    assert not (tmp_path / "out").exists()          # refused before the analysis
    assert list((tmp_path / "report").iterdir()) == []


def test_commit_moves_none_when_a_folder_takes_a_files_place(tmp_path):
    # files.commit is all or nothing for this failure too (common practice for
    # atomic output: readers see the old set of files or the new one).
    a_tmp, b_tmp = tmp_path / "a.tmp", tmp_path / "b.tmp"
    a_tmp.write_text("new a")
    b_tmp.write_text("new b")
    (tmp_path / "a").write_text("old a")
    (tmp_path / "b").mkdir()
    with pytest.raises(IsADirectoryError) as info:
        files.commit([(a_tmp, tmp_path / "a"), (b_tmp, tmp_path / "b")])
    assert info.value.filename == str(tmp_path / "b")
    assert (tmp_path / "a").read_text() == "old a" and a_tmp.exists() and b_tmp.exists()


def test_same_stem_with_default_folders_is_allowed(tmp_path):
    # Without -o each file writes beside itself: different notes, different caches.
    from rcdoc.commands.build import load_all
    for sub in ("a", "b"):
        (tmp_path / sub).mkdir()
        (tmp_path / sub / "board.toml").write_text(project(), encoding="utf-8")
    projects = load_all([str(tmp_path / s / "board.toml") for s in ("a", "b")])
    cli._check_distinct_outputs(projects, None)
    with pytest.raises(Exception, match="writes the same note"):
        cli._check_distinct_outputs(projects, str(tmp_path / "out"))


@pytest.mark.slow
@pytest.mark.parametrize("swallowed", [False, True], ids=["raised", "swallowed"])
def test_ctrl_c_during_final_render_gives_130_and_keeps_the_note(tmp_path, capsys, monkeypatch,
                                                                 swallowed):
    import rcdoc.note.pdf
    real = rcdoc.note.pdf.render_pdf

    def interrupted_render(context, out_path, **kw):
        used = real(context, out_path, **kw)
        if not swallowed:
            raise KeyboardInterrupt
        try:                       # a library that catches everything, Ctrl-C included
            os.kill(os.getpid(), signal.SIGINT)
        except BaseException:      # noqa: BLE001 - the point of the test
            pass
        return used

    monkeypatch.setattr(rcdoc.note.pdf, "render_pdf", interrupted_render)
    proj = tmp_path / "board.toml"
    proj.write_text(project(), encoding="utf-8")
    out = tmp_path / "out"
    _old_note(out)
    rc = cli.main(["build", str(proj), "-o", str(out), "--quiet", "--jobs", "1"])
    assert rc == 130, capsys.readouterr().err
    assert (out / "board.pdf").read_bytes() == OLD_PDF
    assert (out / "board.json").read_bytes() == OLD_JSON
    assert sorted(p.name for p in out.iterdir() if p.is_file()) == ["board.json", "board.pdf"]
    assert signal.getsignal(signal.SIGINT) is signal.default_int_handler   # handler restored


def _build_in_workers(tmp_path, **env_extra):
    """``rcdoc build --jobs 2`` started on six slow stages (100 000 samples each)
    over an older note; returns the running child and the output folder."""
    stages = "".join([f'[[stage]]\nid = "s{k}"\ntitle = "S{k}"\nkind = "rc-lowpass"\n'
                      'parts.r = { value = "4k7" }\nparts.c = { value = "10 nF" }\n'
                      'drive = { step = "1 V" }\n' for k in range(6)])
    proj = tmp_path / "board.toml"
    proj.write_text(project().split("[[stage]]")[0].replace("samples = 20", "samples = 100000")
                    + stages, encoding="utf-8")
    out = tmp_path / "out"
    _old_note(out)
    env = dict(os.environ, PYTHONPATH=str(Path(__file__).resolve().parents[1]), **env_extra)
    child = subprocess.Popen([sys.executable, "-m", "rcdoc", "build", str(proj), "-o", str(out),
                              "--quiet", "--jobs", "2"], env=env, stderr=subprocess.PIPE)
    return child, out


@pytest.mark.slow
def test_ctrl_c_while_workers_run_gives_130(tmp_path):
    # A real SIGINT to a build running stages in two worker processes.
    child, out = _build_in_workers(tmp_path)
    time.sleep(3)                  # inside the analysis: 6 stages × 100 000 samples
    child.send_signal(signal.SIGINT)
    _, err = child.communicate(timeout=120)
    assert child.returncode == 130, err.decode()
    assert b"Traceback" not in err
    assert (out / "board.pdf").read_bytes() == OLD_PDF
    assert (out / "board.json").read_bytes() == OLD_JSON


def _processes_with(marker: str) -> list[int]:
    """Processes (Linux /proc) whose environment holds ``marker``: a build's
    main process, its fork server and its workers all inherit it."""
    found = []
    for entry in Path("/proc").iterdir():
        if entry.name.isdigit():
            try:
                if marker.encode() in (entry / "environ").read_bytes():
                    found.append(int(entry.name))
            except OSError:
                pass
    return found


@pytest.mark.slow
@pytest.mark.skipif(not sys.platform.startswith("linux"), reason="reads /proc")
def test_sigterm_while_workers_run_gives_143_and_leaves_no_process(tmp_path):
    # A CI job's time-out sends SIGTERM to the command alone: the build ends as
    # for Ctrl-C (outputs untouched, status 128 + 15 as shells report it, common
    # practice), and its fork server and workers do not stay behind waiting.
    run = f"{tmp_path.name}-{os.getpid()}"
    marker = f"RCDOC_TEST_RUN={run}"
    child, out = _build_in_workers(tmp_path, RCDOC_TEST_RUN=run)
    try:
        deadline = time.monotonic() + 30       # the command, its fork server, a worker
        while len(_processes_with(marker)) < 3 and time.monotonic() < deadline:
            time.sleep(0.2)
        assert len(_processes_with(marker)) >= 3, "no workers running yet"
        time.sleep(1)              # inside the analysis: 6 stages × 100 000 samples
        child.send_signal(signal.SIGTERM)
        _, err = child.communicate(timeout=60)   # left-behind workers would hold stderr open
        assert child.returncode == 143, err.decode()
        assert b"Traceback" not in err and b"terminated" in err
        assert (out / "board.pdf").read_bytes() == OLD_PDF
        assert (out / "board.json").read_bytes() == OLD_JSON
        deadline = time.monotonic() + 10
        while _processes_with(marker) and time.monotonic() < deadline:
            time.sleep(0.2)
        assert _processes_with(marker) == []
    finally:
        for pid in _processes_with(marker):      # a failed run leaves nothing behind either
            with contextlib.suppress(OSError):
                os.kill(pid, signal.SIGKILL)


@pytest.mark.slow
def test_temporary_files_of_a_killed_build_are_removed(tmp_path, capsys):
    proj = tmp_path / "board.toml"
    proj.write_text(project(), encoding="utf-8")
    out = tmp_path / "out"
    out.mkdir()
    dead = 2**22 + 12345           # above Linux's largest pid (pid_max ≤ 2^22): no such process
    stale = [out / f".board.pdf.~rcdoc{dead}.k3j_x9aq.tmp",
             out / f".board.json.~rcdoc{dead}.0a1b2c3d.tmp"]
    live = out / f".board.pdf.~rcdoc{os.getppid()}.abcdefgh.tmp"   # a running process's
    foreign = [out / ".board.pdf.tmp", out / "notes.tmp", out / "~rcdoc1.tmp"]
    cache_stale = out / ".rcdoc-cache" / "board" / f".x.pickle.~rcdoc{dead}.abcdefgh.tmp"
    cache_stale.parent.mkdir(parents=True)
    for p in (*stale, live, *foreign, cache_stale):
        p.write_bytes(b"left over")
    rc = cli.main(["build", str(proj), "-o", str(out), "--quiet", "--jobs", "1"])
    assert rc in (0, 1), capsys.readouterr().err
    assert not any(p.exists() for p in stale) and not cache_stale.exists()
    assert live.exists() and all(p.exists() for p in foreign)   # only rcdoc's dead names go


def test_temp_names_carry_the_writer_and_match_the_cleanup_pattern(tmp_path):
    t = files.make_temp(tmp_path, "board.pdf")
    assert t.name.startswith(f".board.pdf.~rcdoc{os.getpid()}.")
    assert files.remove_stale_temps(tmp_path) == [] and t.exists()   # its writer is alive
