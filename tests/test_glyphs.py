"""Characters no font can draw: the command says so once, in one line, and prints
nothing of the renderer's own.

The board's text holds two characters of Unicode's Supplementary Private Use
Area-B (U+10FF00 and U+10FFFD): the Unicode Standard leaves their meaning to
private agreement (its section on private-use characters), so no font a note's
machine would have draws them (common practice), and the renderer draws
.notdef boxes in their place.

Before, the command said nothing about the boxes, and with --jobs 1 printed
weasyprint's warning for every character and every drawing of it (some fifty
lines for one title) once a library's logging.debug() had set up the root
logger (ziafont's does, while the schematic is drawn).
"""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

from rcdoc.note import glyphs

pytestmark = pytest.mark.slow        # builds notes

REPO = Path(__file__).resolve().parents[1]
ODD = "\U0010ff00\U0010fffd"
BOARD = f"""[board]
name = "Probe board {ODD[0]}"
revision = "A"
date = "2026-01-01"

[analysis]
samples = 30

[[stage]]
id = "probe"
title = "Probe input {ODD[1]} filter"
kind = "rc-lowpass"
parts.r = {{ ref = "R1", value = "4k7", tolerance = "1%" }}
parts.c = {{ ref = "C1", value = "10n", tolerance = "5%" }}
[[stage.check]]
metric = "corner"
min = "2 kHz"
max = "5 kHz"
"""


def _run(tmp: Path, *args: str) -> subprocess.CompletedProcess:
    env = dict(os.environ, PYTHONPATH=str(REPO))
    return subprocess.run([sys.executable, "-m", "rcdoc", "build", "board.toml", "-o", "out",
                           *args], cwd=tmp, env=env, capture_output=True, text=True,
                          timeout=900)


def _notes(stderr: str) -> list[str]:
    return [line for line in stderr.splitlines() if "no installed font draws" in line]


def test_missing_characters_are_named_once_and_nothing_else_is_printed(tmp_path):
    (tmp_path / "board.toml").write_text(BOARD, encoding="utf-8")
    for jobs in ("1", "2"):         # drawn here (ziafont loaded), then by the workers
        shutil.rmtree(tmp_path / "out", ignore_errors=True)
        done = _run(tmp_path, "--jobs", jobs)
        assert done.returncode == 0, done.stderr
        notes = _notes(done.stderr)
        assert len(notes) == 1, done.stderr
        assert "board.toml" in notes[0] and "U+10FF00" in notes[0] and "U+10FFFD" in notes[0]
        assert "WARNING" not in done.stderr and "weasyprint" not in done.stderr, done.stderr
    # A build that takes every part from the cache still knows what they lack.
    again = _run(tmp_path, "--jobs", "2")
    assert again.returncode == 0 and len(_notes(again.stderr)) == 1, again.stderr
    # --quiet prints nothing but errors.
    quiet = _run(tmp_path, "--jobs", "1", "--quiet")
    assert quiet.returncode == 0 and quiet.stderr == "" and quiet.stdout == ""


def test_a_note_rendered_as_one_document_names_them_too(tmp_path):
    # A note.html of one's own: the note is rendered as one document, not in parts.
    shipped = REPO / "templates" / "note.html"
    mine = tmp_path / "mine"
    mine.mkdir()
    (mine / "note.html").write_text(shipped.read_text(encoding="utf-8")
                                    + "\n{# my own note #}\n", encoding="utf-8")
    (tmp_path / "board.toml").write_text(BOARD, encoding="utf-8")
    done = _run(tmp_path, "--jobs", "1", "--templates", str(mine))
    assert done.returncode == 0, done.stderr
    notes = _notes(done.stderr)
    assert len(notes) == 1 and "U+10FFFD" in notes[0], done.stderr


def test_listed_orders_and_shortens():
    assert glyphs.listed("ba") == "a (U+0061), b (U+0062)"
    assert glyphs.listed("dcba", limit=2) == "a (U+0061), b (U+0062) and 2 more"
    assert glyphs.listed("") == ""
