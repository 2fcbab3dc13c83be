"""Same input, same bytes: two builds in separate processes give identical PDF and JSON.

Reproducible builds (reproducible-builds.org, "SOURCE_DATE_EPOCH" specification):
a build's output may depend only on its inputs; the one allowed clock is
SOURCE_DATE_EPOCH. Each build runs `python -m rcdoc build` in its own
process, into its own (cold) output folder, so no cache or in-process state is
shared between them.
"""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import pytest

# Every test here renders a note to PDF (or runs a build): the quick run skips them.
pytestmark = pytest.mark.slow

REPO = Path(__file__).resolve().parent.parent

# A small board (invented values): one low-pass with a step drive and one
# high-pass, few samples, so each build takes seconds.
PROJECT = """\
[board]
name = "Reproducibility test board"
revision = "A"
date = "2026-03-01"

[analysis]
samples = 40
seed = 3
points_per_decade = 10

[[stage]]
id = "lp"
title = "Input low-pass"
kind = "rc-lowpass"
source = "1 kohm"
drive = { step = "3.3 V" }
parts.r = { ref = "R1", value = "4k7", tolerance = "1%" }
parts.c = { ref = "C1", value = "10 nF", tolerance = "5%", dielectric = "C0G" }
[[stage.check]]
metric = "corner"
min = "2 kHz"
max = "4 kHz"

[[stage]]
id = "hp"
title = "Pickup coupling"
kind = "rc-highpass"
parts.c = { ref = "C2", value = "1 uF", tolerance = "10%", dielectric = "C0G" }
parts.r = { ref = "R2", value = "100k", tolerance = "1%" }
"""


def _env(**extra) -> dict:
    env = {k: v for k, v in os.environ.items() if k != "SOURCE_DATE_EPOCH"}
    env["PYTHONPATH"] = str(REPO) + os.pathsep + env.get("PYTHONPATH", "")
    env["MPLBACKEND"] = "Agg"
    # Different hash seeds per process: set/dict order of str must not leak into the output.
    env.update(extra)
    return env


@pytest.mark.parametrize("epoch", [None, "1700000000"], ids=["board-date", "SOURCE_DATE_EPOCH"])
def test_two_processes_give_identical_bytes(tmp_path, epoch):
    project = tmp_path / "board.toml"
    project.write_text(PROJECT, encoding="utf-8")
    outs = [tmp_path / "one", tmp_path / "two"]
    extra = {} if epoch is None else {"SOURCE_DATE_EPOCH": epoch}
    env_a = _env(PYTHONHASHSEED="1", **extra)
    env_b = _env(PYTHONHASHSEED="2", **extra)
    procs = []
    for out, env in zip(outs, (env_a, env_b)):
        procs.append(subprocess.Popen(
            [sys.executable, "-m", "rcdoc", "build", str(project), "-o", str(out), "--quiet",
             "--jobs", "1"], cwd=REPO, env=env, stdout=subprocess.PIPE, stderr=subprocess.PIPE))
    for p in procs:
        _, err = p.communicate(timeout=600)
        assert p.returncode in (0, 1), err.decode(errors="replace")

    pdf_a, pdf_b = (o / "board.pdf" for o in outs)
    json_a, json_b = (o / "board.json" for o in outs)
    assert pdf_a.stat().st_size > 10_000            # a real note, not an empty file
    assert json_a.read_bytes() == json_b.read_bytes()
    assert pdf_a.read_bytes() == pdf_b.read_bytes()

    # The date inside is the chosen clock: SOURCE_DATE_EPOCH, else the board's date.
    import pypdf
    created = pypdf.PdfReader(pdf_a).metadata.creation_date
    assert created is not None
    expected = "2023-11-14" if epoch else "2026-03-01"   # 1700000000 s = 2023-11-14 22:13:20 UTC
    assert created.date().isoformat() == expected
