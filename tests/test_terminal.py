"""The terminal (issue 15 item 1): progress on stderr, results on stdout, a
check table that fits 80 columns, --quiet, and ASCII consoles.

The example board is run once (50 samples) in a subprocess, so its streams
are real non-terminal pipes as in a CI job."""

from __future__ import annotations

import io
import json
import os
import subprocess
import sys
import textwrap
from pathlib import Path

import pytest

from rcdoc.commands import terminal
from rcdoc.commands.cli import main
from rcdoc.kinds import load_project

REPO = Path(__file__).resolve().parents[1]
EXAMPLE = REPO / "projects" / "greenhouse-controller.toml"

SMALL = textwrap.dedent("""\
    [board]
    name = "Bench"
    revision = "A"
    date = "2026-01-01"
    [analysis]
    samples = 40
    [[stage]]
    id = "lp"
    title = "Low-pass"
    kind = "rc-lowpass"
    parts.r = { ref = "R1", value = "4k7", tolerance = "1%" }
    parts.c = { ref = "C1", value = "10n", tolerance = "5%" }
    [[stage.check]]
    metric = "input_impedance"
    at = "1 kHz"
    min = "{zmin}"
    """)


def run(args, tmp_path, **env):
    e = dict(os.environ, PYTHONPATH=str(REPO), COLUMNS="80", **env)
    e.pop("FORCE_COLOR", None)
    return subprocess.run([sys.executable, "-m", "rcdoc", *args], cwd=tmp_path, env=e,
                          capture_output=True, timeout=900)


@pytest.fixture(scope="module")
def example(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("example")
    done = run(["check", str(EXAMPLE), "--samples", "50", "-o", str(tmp / "out"),
                "--json", str(tmp / "summary.json")], tmp)
    done.tmp = tmp
    return done


@pytest.mark.slow
def test_example_rows_fit_80_columns(example):
    assert example.returncode == 0, example.stderr.decode()
    out = example.stdout.decode("utf-8").splitlines()
    assert len(out) > 20
    assert all(len(line) <= 80 for line in out), max(out, key=len)
    # full stage ids, never cut (project file: projects/greenhouse-controller.toml)
    assert "pump-contactor-snubber" in out
    project = load_project(EXAMPLE)
    checks = sum(len(s.checks) for s in project.stages)
    ratings = json.loads((example.tmp / "summary.json").read_text())
    rated = sum(len(s["checks"]) for s in ratings["stages"]) - checks
    assert out[-1] == f"all {checks + rated} checks pass"


@pytest.mark.slow
def test_non_terminal_progress_is_one_line_per_stage(example):
    err = example.stderr.decode("utf-8").splitlines()
    stages = [ln for ln in err if ln.startswith("rcdoc: ")]
    assert len(stages) == len(load_project(EXAMPLE).stages) == len(err)   # one line a stage
    assert all(ln.split(": ")[-1].split(" ")[-1] in ("s", "cached") for ln in stages)
    assert any(ln.split(": ")[-1].startswith("buck-switch-node ") for ln in stages)


def small(tmp_path, zmin="1 kΩ"):
    path = tmp_path / "b.toml"
    path.write_text(SMALL.replace("{zmin}", zmin), encoding="utf-8")
    return path


def test_quiet_prints_nothing_on_success(tmp_path, capfd):
    assert main(["check", str(small(tmp_path)), "--quiet", "--jobs", "1"]) == 0
    out, err = capfd.readouterr()
    assert out == "" and err == ""


def test_results_on_stdout_and_failures_counted_at_the_end(tmp_path, capfd):
    # |Z| of a series 4.7 kΩ + 10 nF at 1 kHz is about 16.6 kΩ (textbook): a 20 kΩ minimum fails
    assert main(["check", str(small(tmp_path, "20 kΩ")), "--jobs", "1"]) == 1
    out, err = capfd.readouterr()
    lines = out.splitlines()
    assert lines[0] == "Bench rev A: FAIL"
    assert lines[-2:][0] == "1 of 1 checks fail:"
    assert lines[-1].startswith("  lp: Input |Z| at 1 kHz: worst ")
    assert err.splitlines()[0].startswith("rcdoc: ") and "lp" in err


@pytest.mark.slow
def test_ascii_console_gets_ascii(tmp_path):
    path = small(tmp_path, "20 kΩ")
    done = run(["check", str(path), "--jobs", "1"], tmp_path, PYTHONIOENCODING="ascii")
    assert done.returncode == 1, done.stderr.decode()
    text = done.stdout.decode("ascii")                  # raises if anything is not ASCII
    assert "limit >= 20 kohm" in text                   # "≥" and "Ω" spelled out
    assert "Traceback" not in done.stderr.decode("ascii")


def test_for_console_spells_symbols_in_ascii():
    stream = io.TextIOWrapper(io.BytesIO(), encoding="ascii")
    assert terminal.for_console("≤ 4.7 kΩ … 10 µs, −3 dB", stream) == \
        "<= 4.7 kohm ... 10 us, -3 dB"
    utf8 = io.TextIOWrapper(io.BytesIO(), encoding="utf-8")
    assert terminal.for_console("4.7 kΩ", utf8) == "4.7 kΩ"


@pytest.mark.parametrize("width", [80, 60, 40])
def test_layouts_fit_their_width(width):
    rows = [terminal.Row("a-very-long-stage-identifier-of-a-board", "Settling (within 1 %)",
                         "23.3 ms", "26.7 ms", "≤ 50 ms", "23.3 ms", "99.95 %", "fail"),
            terminal.Row("s2", "Gain at 50 kHz", "-25.1 dB", "-24.7 dB", "≤ -20 dB",
                         "4.7 dB", "100 %", "pass")]
    lines = terminal.table_lines("T", rows, width) + terminal.failure_lines(rows, width)
    text = "\n".join(lines).splitlines()
    assert all(len(x) <= width for x in text), max(text, key=len)
    assert "a-very-long-stage-identifier-of-a-board" in text
    assert "1 of 2 checks fail:" in text
