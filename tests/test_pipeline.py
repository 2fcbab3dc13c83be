"""End to end: `rcdoc build` and `rcdoc check` on small boards, in-process.

A failing check must give exit status 1 and mark the stage and the board as
failed in the PDF, the JSON summary and the JUnit report; a passing board
exits 0 (the exit statuses are specified in docs/project-format.md). Limits are
set on either side of the textbook corner fc = 1/(2πRC) = 1.59 kHz of a
10 kΩ / 10 nF low-pass, so which check passes is known from the formula, not
from the program. One small build per case keeps the file fast.
"""

from __future__ import annotations

import json
import math
import re
import textwrap
import xml.etree.ElementTree as ET
from pathlib import Path

import pytest
from pypdf import PdfReader

from rcdoc.commands import cli

FC_HZ = 1 / (2 * math.pi * 10e3 * 10e-9)     # 1591.5 Hz (textbook first-order corner)

HEAD = """\
[board]
name = "Pump station board"
revision = "B"
date = "2026-03-14"

[analysis]
samples = 2000
seed = 3
"""


def stage(sid: str, title: str, check: str, extra: str = "") -> str:
    # 1 % parts: the corner stays within about ±2 % of FC_HZ across the spread.
    return textwrap.dedent(f"""
    [[stage]]
    id = "{sid}"
    title = "{title}"
    kind = "rc-lowpass"
    {extra}
    parts.r = {{ ref = "R1", value = "10k", tolerance = "1%" }}
    parts.c = {{ ref = "C1", value = "10n", tolerance = "1%", dielectric = "C0G", voltage = "50 V" }}
    [[stage.check]]
    {check}
    """)


# The pass/fail limits bracket FC_HZ ±2 % with a wide margin either way.
PASSING = 'metric = "corner"\nmin = "1.4 kHz"\nmax = "1.8 kHz"'
FAILING = 'metric = "corner"\nmax = "1.2 kHz"'


def write(tmp_path: Path, name: str, *stages: str) -> Path:
    path = tmp_path / f"{name}.toml"
    path.write_text(HEAD + "".join(stages), encoding="utf-8")
    return path


def run(*args: str) -> int:
    # Fewer samples than the file states: --samples overrides [analysis].
    return cli.main([*args, "--samples", "200", "--quiet", "--jobs", "1"])


def pdf_text(path: Path) -> list[str]:
    return [page.extract_text() for page in PdfReader(str(path)).pages]


@pytest.mark.slow
def test_failing_check_fails_stage_and_board_in_pdf_and_json(tmp_path):
    project = write(tmp_path, "station", stage("outlet", "Outlet pressure filter", FAILING))
    out = tmp_path / "out"
    assert run("build", str(project), "-o", str(out)) == 1

    # JSON summary: the board and the stage "fail"; the check's verdict says why.
    data = json.loads((out / "station.json").read_text(encoding="utf-8"))
    assert data["status"] == "fail"
    assert data["analysis"]["samples"] == 200
    (st,) = data["stages"]
    assert st["id"] == "outlet" and st["status"] == "fail"
    (bad,) = st["checks"]
    assert bad["metric"] == "corner" and bad["status"] == "fail" and bad["yield"] == 0.0
    assert bad["max"] == pytest.approx(1200.0)
    assert bad["worst"] == pytest.approx(FC_HZ, rel=0.03)   # the worst sample is near fc

    # PDF (the verdict words are printed in capitals): the cover says the board fails and names the failing stage; the stage
    # page carries the verdict next to its title and in its checks table.
    pages = pdf_text(out / "station.pdf")
    cover = pages[0]
    assert re.search(r"\bFAIL\b", cover)
    assert "Outlet pressure filter" in cover
    body = "\n".join(pages[1:])
    assert re.search(r"FAIL\s*Outlet pressure filter", body)
    assert not re.search(r"\bPASS\b", body)


@pytest.mark.slow
def test_check_marks_only_the_failing_stage(tmp_path):
    from rcdoc.commands.build import analyse_project, load_all
    from rcdoc.note.summary import summary

    project = write(tmp_path, "station", stage("inlet", "Inlet pressure filter", PASSING),
                    stage("outlet", "Outlet pressure filter", FAILING))
    junit = tmp_path / "report.xml"
    assert run("check", str(project), "--junit", str(junit)) == 1
    # JUnit: one case per check; only the outlet stage's case has a <failure>.
    root = ET.parse(junit).getroot()
    assert root.get("tests") == "2" and root.get("failures") == "1"
    cases = {c.get("classname"): c for c in root.iter("testcase")}
    assert cases["Pump station board.outlet"].find("failure") is not None
    assert cases["Pump station board.inlet"].find("failure") is None
    assert "1.2 kHz" in cases["Pump station board.outlet"].find("failure").get("message")
    # The JSON summary of the same analysis (what build writes) marks the stages alike.
    (proj,) = load_all([str(project)], samples=200)
    data = summary(proj, analyse_project(proj).results)
    assert data["status"] == "fail"
    assert {s["id"]: s["status"] for s in data["stages"]} == {"inlet": "pass", "outlet": "fail"}


@pytest.mark.slow
def test_passing_board_exits_zero(tmp_path):
    project = write(tmp_path, "station", stage("inlet", "Inlet pressure filter", PASSING))
    out = tmp_path / "out"
    assert run("build", str(project), "-o", str(out)) == 0
    data = json.loads((out / "station.json").read_text(encoding="utf-8"))
    assert data["status"] == "pass"
    assert [s["status"] for s in data["stages"]] == ["pass"]
    (m,) = [m for m in data["stages"][0]["metrics"] if m["metric"] == "corner"]
    assert m["nominal"] == pytest.approx(FC_HZ, rel=1e-6)        # fc = 1/(2πRC)
    cover = pdf_text(out / "station.pdf")[0]
    assert re.search(r"\bPASS\b", cover)
    assert not re.search(r"\bFAIL\b", cover)

    junit = tmp_path / "report.xml"
    assert run("check", str(project), "--junit", str(junit)) == 0
    root = ET.parse(junit).getroot()
    assert root.get("failures") == "0" and root.get("tests") == "1"
    assert not list(root.iter("failure"))


@pytest.mark.parametrize("required, status", [("40%", "pass"), ("60%", "fail")])
def test_required_yield_decides_the_verdict(tmp_path, required, status):
    from rcdoc.commands.build import analyse_project, load_all

    # A limit at the nominal corner: R and C drawn uniformly and symmetrically, so
    # about half of the samples lie below fc (common practice: symmetric spread).
    check = f'metric = "corner"\nmax = "{FC_HZ:.4f} Hz"\nyield = "{required}"'
    project = write(tmp_path, "yield", stage("inlet", "Inlet pressure filter", check))
    (proj,) = load_all([str(project)], samples=2000)
    (res,) = analyse_project(proj).results
    (v,) = res.verdicts
    assert v.yield_ == pytest.approx(0.5, abs=0.05)
    assert v.status == status and res.status == status


def test_exceeded_part_rating_fails_the_stage(tmp_path):
    # A 10 V step charges C1 to 10 V (final value of a first-order step, textbook),
    # above its 6.3 V rating: the rating check fails without any [[stage.check]] on it.
    extra = 'drive = { step = "10 V" }'
    s = stage("inlet", "Inlet pressure filter", PASSING, extra).replace('"50 V"', '"6.3 V"')
    project = write(tmp_path, "rated", s)
    junit = tmp_path / "report.xml"
    assert run("check", str(project), "--junit", str(junit)) == 1
    failures = [c for c in ET.parse(junit).getroot().iter("testcase")
                if c.find("failure") is not None]
    assert [c.get("name") for c in failures] == ["capacitor_voltage C1 rating"]


def test_input_error_exits_two_and_writes_nothing(tmp_path, capsys):
    project = write(tmp_path, "broken", stage("inlet", "Inlet", 'metric = "corner"\nmax = "10 nF"'))
    out = tmp_path / "out"
    assert run("build", str(project), "-o", str(out)) == 2
    assert not out.exists() or not any(out.iterdir())
    err = capsys.readouterr().err
    assert "stage[1].check[1].max" in err
