"""Machine output of rcdoc check: the JSON fields of a check (label, unit,
nominal, margin, line), `check --json`, JUnit with file, line, time and
properties, CI annotation lines, line numbers found in the file text, and a
check after a build reusing the build's analysis."""

from __future__ import annotations

import json
import math
import re
import xml.etree.ElementTree as ET

import pytest

import rcdoc.commands.workers
from rcdoc import __version__
from rcdoc.commands.cli import main
from rcdoc.note.machine import escape_data, escape_property
from rcdoc.input.positions import key_lines
from rcdoc.kinds import load_project

BOARD = """\
[board]
name = "Machine, test"
revision = "A"
date = "2026-01-01"
notes = \"\"\"
A note that quotes a header:
[[stage.check]]
metric = "corner"
\"\"\"
[analysis]
samples = 40

# [[stage]] in a comment is no stage
[[stage]]
id = "lp"
title = "Low-pass: ADC input"
kind = "rc-lowpass"
drive = { step = "3.3 V" }
parts.r = { ref = "R1", value = "{r}", tolerance = "1%", power = "0.1 W" }
parts.c = { ref = "C1", value = "10 nF", tolerance = "1%", dielectric = "C0G" }

[[stage.check]]
metric = "corner"
min = "3.2 kHz"
max = "3.5 kHz"

[[ stage . check ]]   # spaces inside a header are allowed
metric = "gain"
at = "100 kHz"
max = "-20 dB"

[[stage]]
id = "hp"
title = "High-pass"
kind = "rc-highpass"
parts.c = { ref = "C2", value = "100 nF" }
parts.r = { ref = "R2", value = "10k" }
check = [
  { metric = "gain", at = "1 kHz", min = "-1 dB" },   # a '[' in a comment
  { metric = "corner", max = "200 Hz", yield = "90%" },
]
"""


def rc_corner(r, c):
    # Textbook first-order RC filter: f_c = 1 / (2π R C).
    return 1 / (2 * math.pi * r * c)


def write(path, r="4k7", text=BOARD):
    text = text.replace("{r}", r)
    path.write_text(text, encoding="utf-8")
    return path


def line_of(path, n):
    return path.read_text(encoding="utf-8").splitlines()[n - 1]


# --------------------------------------------------------------------------- positions

def test_positions_of_checks_in_every_form():
    text = BOARD.replace("{r}", "4k7").replace(
        "  { metric = \"corner\", max = \"200 Hz\", yield = \"90%\" },\n", "")
    lines = key_lines(text)
    rows = text.splitlines()
    # The two [[stage.check]] headers, not the ones quoted in notes or comments.
    assert rows[lines["stage[1].check[1]"] - 1] == "[[stage.check]]"
    assert rows[lines["stage[1].check[2]"] - 1].startswith("[[ stage . check ]]")
    assert rows[lines["stage[1]"] - 1] == "[[stage]]"
    assert lines["stage[1]"] > rows.index("# [[stage]] in a comment is no stage")
    # Inline array elements, counted from 1 as project.py counts checks.
    assert "metric = \"gain\", at = \"1 kHz\"" in rows[lines["stage[2].check[1]"] - 1]
    assert "stage[2].check[2]" not in lines
    assert rows[lines["stage[2].parts.r"] - 1].startswith("parts.r")


def test_positions_survive_crlf_literal_strings_and_a_single_inline_check():
    text = ("[board]\r\nname = 'A [[stage]] \"x'\r\nrevision = '''\r\nB]]'''\r\n"
            "[[stage]]\r\nid = \"a\"\r\ncheck = { metric = \"corner\", min = \"1 Hz\" }\r\n"
            "[[stage]]\r\nid = \"b\"\r\n[stage.parts.r]\r\nvalue = \"1k\"\r\n")
    lines = key_lines(text)
    assert (lines["stage[1]"], lines["stage[1].check"], lines["stage[2]"]) == (5, 7, 8)
    assert lines["stage[2].parts.r"] == 10


def _random_toml(rnd) -> tuple[str, dict[str, int]]:
    """A TOML text made of stages (arrays of tables) whose keys are preceded by
    every kind of value the scanner must step over (strings of the four kinds, with
    escapes, quotes and line breaks inside; arrays; inline tables; comments), and
    the line the text puts each stage and probe key on: the scanner's answer is
    checked against where the text was written, not against another scanner."""
    values = ['"a \\" b # [x]"', "'c:\\\\d'", '"""two\nlines "quoted" \\"""\n"""',
              "'''lit ''\n[[stage]]'''", "4.7e3", "[1, [2, 3], { k = \"]\" }]",
              "{ a = 1, b = 'x}', c = [\"#\"] }", '"\\\\"']
    rows, where, stage = ["[board]", 'name = "B"'], {}, 0
    for _ in range(rnd.randint(1, 6)):
        stage += 1
        rows.append(rnd.choice(["[[stage]]", "[[ stage ]]  # a stage"]))
        where[f"stage[{stage}]"] = len(rows)
        for k in range(rnd.randint(0, 4)):
            rows.append(rnd.choice(["", "# [[stage]] in a comment", "  "]))
            value = rnd.choice(values)
            rows.extend(f"k{k} = {value}".split("\n"))     # a value may span lines
        rows.append(f"probe{stage} = 1")
        where[f"stage[{stage}].probe{stage}"] = len(rows)
    return "\n".join(rows) + "\n", where


def test_positions_of_random_texts_are_where_they_were_written():
    # Source: the texts' own construction (each probe's line is counted as the text
    # is made); tomllib accepts every text (common practice: a reader's positions are
    # checked on texts the parser takes).
    import random
    import tomllib
    rnd = random.Random(20261204)
    for _ in range(300):
        text, where = _random_toml(rnd)
        tomllib.loads(text)
        lines = key_lines(text)
        assert {k: lines.get(k) for k in where} == where, text


def test_positions_of_a_broken_text_keep_what_came_before():
    lines = key_lines("[[stage]]\nid = \"a\"\n[[stage.check]]\nmetric = \"unterminated\n")
    assert lines["stage[1]"] == 1 and lines["stage[1].check[1]"] == 3


# --------------------------------------------------------------------------- check --json

@pytest.mark.slow
def test_check_json_carries_label_unit_nominal_margin_and_line(tmp_path):
    board = write(tmp_path / "b.toml", r="5k1")
    out = tmp_path / "b.json"
    assert main(["check", str(board), "--json", str(out), "--jobs", "1", "--quiet"]) == 1
    data = json.loads(out.read_text(encoding="utf-8"))
    lp, hp = data["stages"]
    corner, gain, rating = lp["checks"]
    assert line_of(board, corner["line"]) == "[[stage.check]]"
    assert line_of(board, gain["line"]).startswith("[[ stage . check ]]")
    assert "metric = \"gain\"" in line_of(board, gain["line"] + 1)
    assert line_of(board, rating["line"]).startswith("parts.r")       # the rated part
    assert "at = \"1 kHz\"" in line_of(board, hp["checks"][0]["line"])
    assert "max = \"200 Hz\"" in line_of(board, hp["checks"][1]["line"])
    assert (corner["label"], corner["unit"]) == ("Corner frequency (−3 dB)", "Hz")
    assert (gain["label"], gain["unit"]) == ("Gain at 100 kHz", "dB")
    assert rating["label"] == "Resistor power R1 (rating)" and rating["unit"] == "W"
    assert corner["nominal"] == pytest.approx(rc_corner(5100, 10e-9), rel=1e-6)
    # 5k1 puts the corner below 3.2 kHz: the margin is the (negative) distance to it.
    assert corner["status"] == "fail"
    assert corner["margin"] == pytest.approx(corner["worst"] - 3200.0)
    assert corner["margin"] < 0
    # Only a max: the margin is max - worst, positive when it passes.
    assert gain["margin"] == pytest.approx(-20.0 - gain["worst"]) and gain["margin"] > 0
    # The worst corner of 1 % parts is at most 2 % below nominal (R and C both high).
    assert corner["worst"] >= rc_corner(5100 * 1.01, 10e-9 * 1.01) * (1 - 1e-9)


@pytest.mark.slow
def test_check_json_with_several_files_writes_a_folder(tmp_path):
    a = write(tmp_path / "a.toml")
    (tmp_path / "sub").mkdir()
    b = write(tmp_path / "sub" / "b.toml", r="5k1")
    folder = tmp_path / "reports"
    assert main(["check", str(a), str(b), "--json", str(folder), "--jobs", "1",
                 "--quiet", "--samples", "20"]) == 1
    assert json.loads((folder / "a.json").read_text())["status"] == "pass"
    assert json.loads((folder / "b.json").read_text())["status"] == "fail"
    # Two files with one name would overwrite each other: an input error, before any work.
    c = write(tmp_path / "sub" / "a.toml")
    assert main(["check", str(a), str(c), "--json", str(tmp_path / "r2"), "--quiet"]) == 2
    assert not (tmp_path / "r2").exists()


# --------------------------------------------------------------------------- JUnit

@pytest.mark.slow
def test_junit_has_file_line_time_and_properties(tmp_path):
    board = write(tmp_path / "b.toml", r="5k1")
    report = tmp_path / "junit.xml"
    assert main(["check", str(board), "--junit", str(report), "--jobs", "1", "--quiet"]) == 1
    root = ET.parse(report).getroot()
    (suite,) = root.findall("testsuite")
    props = {p.get("name"): p.get("value") for p in suite.find("properties")}
    assert props == {"seed": "1", "samples": "40", "rcdoc version": __version__}
    cases = suite.findall("testcase")
    assert len(cases) == 5                                  # 2 + 2 checks, 1 rating
    for case in cases:
        assert case.get("file") == str(board)
        assert float(case.get("time")) >= 0
        assert line_of(board, int(case.get("line")))        # a line of the file
    assert line_of(board, int(cases[0].get("line"))) == "[[stage.check]]"
    assert cases[0].find("failure") is not None
    assert float(suite.get("time")) == pytest.approx(sum(float(c.get("time")) for c in cases),
                                                     abs=0.01)
    assert float(suite.get("time")) > 0                     # the stages were analysed


# --------------------------------------------------------------------------- annotations

@pytest.mark.parametrize("text", ["plain", "a & b < c > d", 'say "hi"', "it's", """both ' and """"",
                                  "line\nbreak\r\tand tab", "", "&amp; already", "µ Ω ±"])
def test_junit_escaping_is_that_of_the_standard_library(text):
    # The JUnit writer escapes as Python's xml.sax.saxutils does (the reference),
    # without importing it (it loads urllib.request).
    from xml.sax.saxutils import escape as std_escape, quoteattr as std_quoteattr
    from rcdoc.note import summary
    assert summary.escape(text) == std_escape(text)
    assert summary.quoteattr(text) == std_quoteattr(text)


def test_escaping_follows_the_workflow_command_rules():
    # The runner's workflow-command format: data escapes % CR LF; properties also : and ,.
    assert escape_data("50% a\r\nb: c, d") == "50%25 a%0D%0Ab: c, d"
    assert escape_property("50% a\nb: c, d") == "50%25 a%0Ab%3A c%2C d"


@pytest.mark.slow
def test_annotations_one_line_per_failed_check(tmp_path, capsys):
    board = write(tmp_path / "b,1.toml", r="5k1")         # a comma in the file name
    assert main(["check", str(board), "--annotations", "--jobs", "1", "--quiet"]) == 1
    out = [ln for ln in capsys.readouterr().out.splitlines() if ln.startswith("::")]
    assert len(out) == 1                                    # only the corner fails
    m = re.fullmatch(r"::error file=([^,]*),line=(\d+),title=([^,:]*)::(.*)", out[0])
    assert m, out[0]
    assert m.group(1) == str(board).replace(",", "%2C")
    assert line_of(board, int(m.group(2))) == "[[stage.check]]"
    assert m.group(3) == "lp%3A Corner frequency (−3 dB) failed"
    assert m.group(4).startswith("Low-pass: ADC input: Corner frequency (−3 dB): min 3.2 kHz")
    assert "%25" in m.group(4) and "%" not in m.group(4).replace("%25", "")


@pytest.mark.slow
def test_no_annotations_when_everything_passes(tmp_path, capsys):
    board = write(tmp_path / "b.toml")
    assert main(["check", str(board), "--annotations", "--jobs", "1", "--quiet"]) == 0
    assert capsys.readouterr().out == ""


# --------------------------------------------------------------------------- the cache

@pytest.fixture
def count_analyses(monkeypatch):
    calls = []
    real = rcdoc.commands.workers.analyse_stage
    monkeypatch.setattr(rcdoc.commands.workers, "analyse_stage",
                        lambda stage, analysis, **kw: calls.append(stage.id) or real(stage, analysis, **kw))
    return calls


@pytest.mark.slow
def test_check_after_build_reuses_the_analysis(tmp_path, count_analyses):
    board = write(tmp_path / "b.toml")
    assert main(["build", str(board), "--jobs", "1", "--quiet"]) == 0
    assert count_analyses == ["lp", "hp"]
    count_analyses.clear()
    assert main(["check", str(board), "--jobs", "1", "--quiet"]) == 0
    assert count_analyses == []
    # Other settings are another analysis: analysed, and not taken from the cache.
    assert main(["check", str(board), "--jobs", "1", "--quiet", "--samples", "20"]) == 0
    assert count_analyses == ["lp", "hp"]


@pytest.mark.slow
def test_build_after_check_draws_from_the_checked_analysis(tmp_path, count_analyses):
    board = write(tmp_path / "b.toml")
    checked = tmp_path / "check.json"
    assert main(["check", str(board), "--jobs", "1", "--quiet", "--json", str(checked)]) == 0
    assert count_analyses == ["lp", "hp"]
    assert main(["build", str(board), "-o", str(tmp_path / "cold"), "--jobs", "1",
                 "--quiet"]) == 0
    assert count_analyses == ["lp", "hp", "lp", "hp"]      # another output folder: cold
    count_analyses.clear()
    assert main(["build", str(board), "--jobs", "1", "--quiet"]) == 0
    assert count_analyses == []                             # drawn from the check's entries
    for name in ("b.pdf", "b.json"):
        assert (tmp_path / "build" / name).read_bytes() == \
            (tmp_path / "cold" / name).read_bytes()
    # check --json writes the build's JSON, byte for byte.
    assert checked.read_bytes() == (tmp_path / "cold" / "b.json").read_bytes()


def test_a_check_file_is_loaded_like_any_project(tmp_path):
    # The board above is a valid project: two stages, two checks each.
    p = load_project(write(tmp_path / "b.toml"))
    assert [len(s.checks) for s in p.stages] == [2, 2]
