"""Bills of materials as EDA tools export them, and the parts list beside the note.

Sources: CSV layout per RFC 4180 (header row, quoted cells); byte-order marks
per the Unicode Standard, section 23.8 (UTF-8 EF BB BF, UTF-16 FE FF / FF FE,
written here by Python's own "utf-8-sig" and "utf-16" codecs); the column
names and do-not-populate words are common practice (docs/project-format.md
lists the ones rcdoc reads). The stresses in the parts-list test are checked
against textbook circuit laws: the voltage divider and the maximum power
transfer theorem (P <= V²/4R_L).
"""

from __future__ import annotations

import csv
import io
import json
from pathlib import Path

import pytest

from rcdoc.commands import cli
from rcdoc.commands.build import analyse_project
from rcdoc.errors import ProjectError
from rcdoc.note.partslist import parts_csv
from rcdoc.kinds import load_project
from rcdoc.note.summary import summary

BOARD = """\
[board]
name = "Export test"
revision = "A"
date = "2026-01-01"
[analysis]
samples = {samples}
bom = "bom.csv"
[[stage]]
id = "s1"
title = "Low-pass"
kind = "rc-lowpass"
{extra}
parts.r = {{ ref = "R12" }}
parts.c = {{ ref = "C8" }}
"""

# An export with a designator column called Reference, semicolons and a DNP column.
EXPORT = ("Reference;Value;Quantity;Tolerance;Footprint;DNP\n"
          "R12;4k7;1;1%;R_0603;\n"
          "C8;10n;1;5%;C_0603;\n"
          "R99;1k;1;;R_0603;DNP\n"
          "C99;;1;;C_0603;x\n"
          "R50;2k2;1;;R_0603;\n")


def board(tmp_path: Path, bom_text: str | None = EXPORT, *, encoding="utf-8",
          bom_bytes: bytes | None = None, samples=20, extra="") -> Path:
    if bom_bytes is None:
        bom_bytes = bom_text.encode(encoding)
    (tmp_path / "bom.csv").write_bytes(bom_bytes)
    f = tmp_path / "p.toml"
    f.write_text(BOARD.format(samples=samples, extra=extra), encoding="utf-8")
    return f


def values(project):
    parts = project.stages[0].parts
    return parts["r"].value, parts["c"].value, parts["r"].tol_plus, parts["c"].tol_plus


def test_export_with_reference_semicolons_and_dnp_loads(tmp_path):
    p = load_project(board(tmp_path))
    assert values(p) == pytest.approx((4700.0, 10e-9, 0.01, 0.05))  # IEC 60062 "4k7"
    # R50 is fitted and unused; R99 and C99 are do-not-populate, so not "missing".
    assert [r.ref for r in p.bom_unused] == ["R50"]


@pytest.mark.parametrize("encoding, mark", [("utf-8-sig", b"\xef\xbb\xbf"),
                                            ("utf-16", None), ("utf-16-le", b"\xff\xfe"),
                                            ("utf-16-be", b"\xfe\xff")])
def test_utf16_and_marked_utf8_load(tmp_path, encoding, mark):
    data = EXPORT.encode(encoding)
    if mark is not None and not data.startswith(mark):
        data = mark + data            # utf-16-le/-be write no mark of their own
    p = load_project(board(tmp_path, bom_bytes=data))
    assert values(p) == pytest.approx((4700.0, 10e-9, 0.01, 0.05))


def test_tab_separated_with_windows_line_ends_loads(tmp_path):
    text = EXPORT.replace(";", "\t").replace("\n", "\r\n")
    p = load_project(board(tmp_path, text))
    assert values(p) == pytest.approx((4700.0, 10e-9, 0.01, 0.05))


def test_comma_separated_with_quoted_designator_lists_loads(tmp_path):
    # RFC 4180: a quoted cell may hold the separator.
    text = 'Designator,Comment,Qty\n"R12, R13",4k7,2\nC8,10n,1\n'
    p = load_project(board(tmp_path, text))
    assert values(p)[:2] == pytest.approx((4700.0, 10e-9))


@pytest.mark.parametrize("ref_header", ["Reference", "REFERENCE", "Designator", "Ref",
                                        "RefDes", "Ref Des", "References", "ref"])
@pytest.mark.parametrize("value_header", ["Value", "VAL", "value"])
def test_header_aliases_in_any_case(tmp_path, ref_header, value_header):
    text = f"{ref_header};{value_header}\nR12;4k7\nC8;10n\n"
    p = load_project(board(tmp_path, text))
    assert values(p)[:2] == pytest.approx((4700.0, 10e-9))


def test_comment_is_the_value_only_without_a_value_column(tmp_path):
    # With both, the Value column counts and a free-text Comment is ignored.
    text = "Ref,Value,Comment\nR12,4k7,precision part\nC8,10n,keep close to pin\n"
    p = load_project(board(tmp_path, text))
    assert values(p)[:2] == pytest.approx((4700.0, 10e-9))


@pytest.mark.parametrize("header, cell, fitted", [
    ("DNP", "DNP", False), ("DNP", "x", False), ("DNP", "yes", False), ("DNP", "1", False),
    ("DNP", "TRUE", False), ("DNP", "", True), ("DNP", "no", True), ("DNP", "0", True),
    ("Do Not Populate", "Y", False),
    ("Populate", "no", False), ("Populate", "0", False), ("Populate", "false", False),
    ("Populate", "yes", True), ("Populate", "x", True), ("Populate", "", True),
    ("Fitted", "Not fitted", False), ("Fitted", "fitted", True), ("Fitted", "DNP", False),
    ("Fitted", "1", True), ("Fitted", "N", False),
])
def test_do_not_populate_words_and_sense(tmp_path, header, cell, fitted):
    # Populate / Fitted say yes for a fitted part: the opposite sense of DNP.
    text = f"Ref,Value,{header}\nR12,4k7,{cell}\nC8,10n,\n"
    f = board(tmp_path, text)
    if fitted:
        assert load_project(f).stages[0].parts["r"].value == pytest.approx(4700.0)
    else:
        with pytest.raises(ProjectError) as e:
            load_project(f)
        assert e.value.path == "stage[1].parts.r.ref"
        assert "line 2" in str(e.value) and "bom.csv" in str(e.value)


def test_used_dnp_part_names_the_bom_line(tmp_path):
    text = EXPORT.replace("C8;10n;1;5%;C_0603;", "C8;10n;1;5%;C_0603;DNP")
    with pytest.raises(ProjectError) as e:
        load_project(board(tmp_path, text))
    assert e.value.path == "stage[1].parts.c.ref"
    assert "C8" in str(e.value) and "bom.csv' line 3" in str(e.value)


def test_used_dnp_part_exits_2_and_writes_nothing(tmp_path, capsys):
    text = EXPORT.replace("R12;4k7;1;1%;R_0603;", "R12;4k7;1;1%;R_0603;yes")
    f = board(tmp_path, text)
    out = tmp_path / "out"
    out.mkdir()
    (out / "p.json").write_text("old", encoding="utf-8")
    assert cli.main(["build", str(f), "-o", str(out), "--jobs", "1"]) == 2
    err = capsys.readouterr().err
    assert "stage[1].parts.r.ref" in err and "line 2" in err and "Traceback" not in err
    assert sorted(x.name for x in out.iterdir()) == ["p.json"]
    assert (out / "p.json").read_text(encoding="utf-8") == "old"


@pytest.mark.parametrize("text, words", [
    ("Ref,Value,DNP\nR12,4k7,perhaps\n", ["line 2", "'perhaps'", "'DNP' column"]),
    ("Reference,Designator,Value\nR12,R12,4k7\n", ["two designator columns"]),
    ("Ref,Value,Fitted,DNP\nR12,4k7,,\n", ["two do-not-populate columns"]),
    ("Part;Qty\nR12;1\n", ["no 'ref' column"]),
    ("Ref;Qty\nR12;1\n", ["no 'value' column"]),
])
def test_export_mistakes_are_errors_at_analysis_bom(tmp_path, text, words):
    with pytest.raises(ProjectError) as e:
        load_project(board(tmp_path, text))
    assert e.value.path == "analysis.bom"
    for w in words:
        assert w in str(e.value)


def test_latin1_bom_is_refused_with_a_hint(tmp_path):
    data = "Ref,Value,Description\nR12,4k7,1/4 W ±1%\nC8,10n,\n".encode("latin-1")
    with pytest.raises(ProjectError) as e:
        load_project(board(tmp_path, bom_bytes=data))
    assert e.value.path == "analysis.bom" and "UTF-8" in str(e.value)


def test_a_quoted_cell_over_two_lines_keeps_later_line_numbers(tmp_path):
    text = 'Ref,Value,Description\nR50,1k,"two\nlines"\nR12,4k7,\nC8,10n,\nR12,1k,\n'
    with pytest.raises(ProjectError) as e:
        load_project(board(tmp_path, text))
    assert "line 6" in str(e.value) and "line 4" in str(e.value)


# ---- the parts list ---------------------------------------------------------

RATED = """\
Ref,Value,Tolerance,Power,Voltage
R12,10k,1%,0.25 W,
C8,10n,5%,,25 V
"""


def _rows(data: bytes) -> list[dict]:
    return list(csv.DictReader(io.StringIO(data.decode("utf-8"))))


def test_parts_list_has_worst_stress_rating_and_margin_as_in_the_json(tmp_path):
    f = board(tmp_path, RATED, samples=300,
              extra='drive = { step = "5 V" }\nload = { r = "10 kohm" }')
    project = load_project(f)
    outcome = analyse_project(project, jobs=1)
    rows = _rows(parts_csv(outcome.results))
    assert [(r["stage"], r["ref"], r["role"]) for r in rows] == [("s1", "R12", "r"),
                                                                 ("s1", "C8", "c")]
    checks = {c["part"]: c for c in summary(project, outcome.results)["stages"][0]["checks"]}
    for row in rows:
        js = checks[row["ref"]]
        assert row["stress"] == js["metric"]
        assert float(row["stress_worst"]) == js["worst"]
        assert float(row["rating"]) == js["max"]
        assert float(row["margin"]) == pytest.approx(js["max"] - js["worst"], rel=1e-12)
        assert row["status"] == js["status"] == "pass"
    r, c = rows
    # Settled step through a 10 k / 10 k divider: 2.5 V across the load. The resistor's
    # power I²R peaks at R = R_L (maximum power transfer): at most 5²/(4·10k) = 0.625 mW.
    assert float(r["stress_nominal"]) == pytest.approx(0.625e-3, rel=1e-3)
    assert 0.625e-3 * (1 - 1e-3) <= float(r["stress_worst"]) <= 0.625e-3 * (1 + 1e-6)
    # Capacitor: divider output 5·R_L/(R + R_L); highest at R = 9.9 k (-1 %): 2.5126 V.
    assert float(c["stress_nominal"]) == pytest.approx(2.5, rel=1e-3)
    assert 2.5 < float(c["stress_worst"]) <= 5 * 10e3 / (9.9e3 + 10e3) * (1 + 1e-6)
    assert (r["unit"], c["unit"], r["stress_unit"], c["stress_unit"]) == ("ohm", "F", "W", "V")


def test_parts_list_leaves_stress_blank_without_a_drive(tmp_path):
    f = board(tmp_path, RATED)
    project = load_project(f)
    rows = _rows(parts_csv(analyse_project(project, jobs=1).results))
    # No drive: nothing to compute a stress from; the rating is still listed.
    assert [(x["stress_worst"], x["margin"], x["rating"]) for x in rows] == \
        [("", "", "0.25"), ("", "", "25.0")]


@pytest.mark.slow
def test_build_writes_the_parts_list_beside_the_note(tmp_path):
    f = board(tmp_path, RATED, extra='drive = { step = "5 V" }')
    out = tmp_path / "build"
    assert cli.main(["build", str(f), "-o", str(out), "--jobs", "1", "--quiet"]) == 0
    assert sorted(x.name for x in out.iterdir() if not x.name.startswith(".")) == \
        ["p-parts.csv", "p.json", "p.pdf"]
    rows = _rows((out / "p-parts.csv").read_bytes())
    js = json.loads((out / "p.json").read_text(encoding="utf-8"))
    worst = {c["part"]: c["worst"] for c in js["stages"][0]["checks"]}
    assert {r["ref"]: float(r["stress_worst"]) for r in rows} == worst
