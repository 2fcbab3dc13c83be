"""Bill of materials: merge by reference designator, conflicts, bom_wins, unused rows.

The contract is docs/project-format.md ("The bill of materials"); the values
in the fixture tests/data/bom/ are invented.
"""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest

from rcdoc.kinds import analyse_stage
from rcdoc.input.bom import merge_bom, read_bom, unused_rows
from rcdoc.errors import ProjectError
from rcdoc.note.context import bom_appendix
from rcdoc.kinds import load_project

DATA = Path(__file__).parent / "data" / "bom"

HEAD = """
[board]
name = "BOM test"
revision = "A"
date = "2026-01-01"
[analysis]
samples = 20
bom = "bom.csv"
{analysis}
[[stage]]
id = "s1"
title = "Low-pass"
kind = "rc-lowpass"
parts.r = {{ {r} }}
parts.c = {{ {c} }}
"""


def project_with(tmp_path, r="ref = \"R12\"", c="ref = \"C8\"", analysis="", csv=None):
    if csv is None:
        shutil.copy(DATA / "bom.csv", tmp_path / "bom.csv")
    else:
        (tmp_path / "bom.csv").write_text(csv, encoding="utf-8")
    f = tmp_path / "p.toml"
    f.write_text(HEAD.format(r=r, c=c, analysis=analysis), encoding="utf-8")
    return f


def test_fixture_parts_take_values_tolerances_and_ratings_from_the_bom():
    # docs/project-format.md: a part with a ref takes any key it does not state from its row.
    p = load_project(DATA / "board.toml")
    r, c = p.stages[0].parts["r"], p.stages[0].parts["c"]
    assert r.value == pytest.approx(4700.0)               # "4k7": IEC 60062 RKM code
    assert (r.tol_plus, r.tol_minus) == pytest.approx((0.01, 0.01))
    assert r.power_rating_w == pytest.approx(0.25)
    assert r.model == "RC0603-4K7-F"
    assert c.value == pytest.approx(10e-9)
    assert c.dielectric == "C0G" and c.voltage_rating_v == pytest.approx(50.0)
    # One BOM cell may hold several designators (comma- or space-separated).
    ladder = p.stages[1].parts
    assert ladder["r1"].value == ladder["r2"].value == pytest.approx(10e3)
    assert ladder["c1"].value == ladder["c2"].value == pytest.approx(220e-9)
    assert ladder["c2"].dielectric == "X7R"


def test_rating_from_the_bom_is_judged():
    # The 0.25 W rating of R12 comes only from the BOM; the analysis must check it.
    p = load_project(DATA / "board.toml")
    res = analyse_stage(p.stages[0], p.analysis)
    rating = [v for v in res.ratings if v.part == "R12"]
    assert len(rating) == 1 and rating[0].max == pytest.approx(0.25)
    # A step of 5 V into an unloaded RC low-pass: once settled no current flows, so
    # the resistor dissipates ~0 W (textbook DC steady state of a capacitor: open circuit).
    assert rating[0].worst < 1e-6 and rating[0].status == "pass"


def test_unused_rows_listed_in_file_order_and_in_the_note_appendix():
    p = load_project(DATA / "board.toml")
    assert [(r.ref, r.line) for r in p.bom_unused] == [("R99", 6), ("C99", 7)]
    sections = bom_appendix(p)
    assert len(sections) == 1
    rows = sections[0]["blocks"][0]["rows"]
    assert [row[0] for row in rows] == ["R99", "C99"]
    assert rows[0][2] == "100k" and rows[1][2] == "100n"


def test_no_appendix_when_every_row_is_used(tmp_path):
    f = project_with(tmp_path, csv="ref,value\nR12,4k7\nC8,10n\n")
    p = load_project(f)
    assert p.bom_unused == () and bom_appendix(p) == []


def test_conflict_is_an_error_naming_key_path_and_bom_line(tmp_path):
    f = project_with(tmp_path, r='ref = "R12", value = "5k1"')
    with pytest.raises(ProjectError) as e:
        load_project(f)
    assert e.value.path == "stage[1].parts.r.value"
    text = str(e.value)
    assert "line 2" in text and "bom.csv" in text and "bom_wins" in text


def test_rating_conflict_names_its_key(tmp_path):
    f = project_with(tmp_path, c='ref = "C8", voltage = "25 V"')
    with pytest.raises(ProjectError) as e:
        load_project(f)
    assert e.value.path == "stage[1].parts.c.voltage" and "line 3" in str(e.value)


def test_bom_wins_takes_the_bom_value(tmp_path):
    f = project_with(tmp_path, r='ref = "R12", value = "5k1", tolerance = "5%"',
                     analysis="bom_wins = true")
    r = load_project(f).stages[0].parts["r"]
    assert r.value == pytest.approx(4700.0) and r.tol_plus == pytest.approx(0.01)


@pytest.mark.parametrize("r, c", [
    # The same quantity written another way is no conflict (IEC 60062 code vs SI prefix).
    ('ref = "R12", value = "4.7 kohm", tolerance = "±1%"', 'ref = "C8", value = 1e-8'),
    # EIA-198 / common usage: NP0 is another name of the C0G class I code.
    ('ref = "R12", value = 4700', 'ref = "C8", dielectric = "NP0"'),
])
def test_same_value_written_differently_is_no_conflict(tmp_path, r, c):
    p = load_project(project_with(tmp_path, r=r, c=c))
    assert p.stages[0].parts["r"].value == pytest.approx(4700.0)


def test_stated_keys_are_kept_and_unstated_ones_merged(tmp_path):
    f = project_with(tmp_path, r='ref = "R12", tcr = "50 ppm/K"')
    r = load_project(f).stages[0].parts["r"]
    assert r.tcr_ppm == pytest.approx(50.0) and r.value == pytest.approx(4700.0)


def test_value_missing_and_ref_not_in_bom(tmp_path):
    f = project_with(tmp_path, r='ref = "R13"')
    with pytest.raises(ProjectError) as e:
        load_project(f)
    assert e.value.path == "stage[1].parts.r.value" and "R13" in str(e.value)


def test_part_without_ref_keeps_its_own_value(tmp_path):
    f = project_with(tmp_path, r='value = "1k"')
    assert load_project(f).stages[0].parts["r"].value == pytest.approx(1000.0)


def test_bad_bom_cell_names_the_bom_line(tmp_path):
    f = project_with(tmp_path, csv="ref,value\nR12,4k7\nC8,10 kHz\n")
    with pytest.raises(ProjectError) as e:
        load_project(f)
    assert e.value.path == "stage[1].parts.c.value"
    assert "line 3" in str(e.value) and "C8" in str(e.value)


def test_ratings_that_do_not_fit_the_part_type_are_not_taken(tmp_path):
    # A resistor's working voltage in the 'voltage' column is not a capacitor rating.
    f = project_with(tmp_path, csv="ref,value,voltage,power\nR12,4k7,50 V,0.1 W\nC8,10n,25 V,\n")
    p = load_project(f)
    assert p.stages[0].parts["r"].power_rating_w == pytest.approx(0.1)
    assert p.stages[0].parts["c"].voltage_rating_v == pytest.approx(25.0)


def test_designators_and_headers_match_without_case(tmp_path):
    f = project_with(tmp_path, r='ref = "r12"', csv="REF,Value\nR12,4k7\nc8,10n\n")
    p = load_project(f)
    assert p.stages[0].parts["r"].value == pytest.approx(4700.0)
    assert p.stages[0].parts["c"].value == pytest.approx(10e-9)


@pytest.mark.parametrize("csv, words", [
    ("ref,value\nR12,4k7\nR12,5k1\n", ["R12", "line 2", "line 3"]),
    ("ref,tolerance\nR12,1%\n", ["no 'value' column"]),
    ("ref,value,tolerence\nR12,4k7,1%\n", ["did you mean 'tolerance'"]),
    ("ref,value\n,4k7\n", ["line 2", "'ref' cell is empty"]),
    ("ref,value\nR12,\n", ["line 2", "'value' cell is empty"]),
    ("", ["empty"]),
])
def test_malformed_bom_is_an_error_at_analysis_bom(tmp_path, csv, words):
    f = project_with(tmp_path, csv=csv)
    with pytest.raises(ProjectError) as e:
        load_project(f)
    assert e.value.path == "analysis.bom"
    for w in words:
        assert w in str(e.value)


def test_missing_bom_file(tmp_path):
    f = project_with(tmp_path)
    (tmp_path / "bom.csv").unlink()
    with pytest.raises(ProjectError) as e:
        load_project(f)
    assert e.value.path == "analysis.bom" and "cannot read" in str(e.value)


def test_merge_bom_and_unused_rows_directly():
    rows = read_bom(DATA / "bom.csv", "analysis.bom")
    merged = merge_bom({"ref": "C40"}, rows, "stage[1].parts.c1", bom_wins=False)
    assert merged == {"ref": "C40", "value": "220n", "tolerance": "10%", "dielectric": "X7R",
                      "voltage": "16 V"}
    left = unused_rows(rows, {"R12", "C8", "R40", "R41", "C40", "C41"})
    assert [r.ref for r in left] == ["R99", "C99"]
    assert len(rows) == 8          # six lines, two of them with two designators
