"""Channels: one stage standing for several identical copies of its circuit.

The contract is docs/project-format.md ("Channels"). The corner is checked
against the textbook first-order corner fc = 1/(2πRC): channels do not change
the analysis, which runs once for all of them.
"""

from __future__ import annotations

import csv
import io
import math

import pytest

from rcdoc.commands.build import analyse_project
from rcdoc.errors import ProjectError
from rcdoc.note.context import parts_table
from rcdoc.note.partslist import parts_csv
from rcdoc.kinds import load_project
from rcdoc.note.summary import summary

HEAD = """\
[board]
name = "Three phases"
revision = "A"
date = "2026-01-01"
[analysis]
samples = 50
{analysis}
[[stage]]
id = "phase-filter"
title = "Phase current sense filter"
kind = "rc-lowpass"
parts.r = {{ {r} }}
parts.c = {{ {c} }}
channels = {channels}
"""
THREE = ('[{ r = "R101", c = "C101" }, { r = "R102", c = "C102" }, '
         '{ r = "R103", c = "C103" }]')
BOM = """\
Reference;Value;Tolerance;Dielectric;Voltage
R101;10k;1%;;
R102;10k;1%;;
R103;10k;1%;;
C101;10n;5%;C0G;50 V
C102;10n;5%;NP0;50 V
C103;10n;5%;C0G;50 V
R200;1k;;;
"""


def project(tmp_path, *, r='ref = "R101"', c='ref = "C101"', channels=THREE, bom=BOM,
            analysis='bom = "bom.csv"'):
    if bom is not None:
        (tmp_path / "bom.csv").write_text(bom, encoding="utf-8")
    f = tmp_path / "p.toml"
    f.write_text(HEAD.format(r=r, c=c, channels=channels, analysis=analysis), encoding="utf-8")
    return f


def test_equal_channels_analyse_once_and_are_listed(tmp_path):
    p = load_project(project(tmp_path))
    assert len(p.stages) == 1
    st = p.stages[0]
    assert st.channels == ({"r": "R101", "c": "C101"}, {"r": "R102", "c": "C102"},
                           {"r": "R103", "c": "C103"})
    # Every channel's parts count as analysed: only R200 is left over.
    assert [row.ref for row in p.bom_unused] == ["R200"]
    outcome = analyse_project(p, jobs=1)
    assert outcome.computed == ["phase-filter"] and len(outcome.results) == 1
    corner = outcome.results[0].metric("corner").nominal
    assert corner == pytest.approx(1 / (2 * math.pi * 10e3 * 10e-9), rel=1e-3)
    js = summary(p, outcome.results)["stages"][0]
    assert js["channels"] == [{"r": "R101", "c": "C101"}, {"r": "R102", "c": "C102"},
                              {"r": "R103", "c": "C103"}]
    note = parts_table(outcome.results[0])["note"]
    assert "Channels: R101/C101, R102/C102, R103/C103" in note
    rows = list(csv.DictReader(io.StringIO(parts_csv(outcome.results).decode("utf-8"))))
    assert [(x["channel"], x["ref"]) for x in rows] == [
        ("1", "R101"), ("1", "C101"), ("2", "R102"), ("2", "C102"), ("3", "R103"), ("3", "C103")]


def test_parts_without_ref_take_the_first_channel_and_no_bom_is_needed(tmp_path):
    f = project(tmp_path, r='value = "10k"', c='value = "10n"', bom=None, analysis="")
    st = load_project(f).stages[0]
    assert (st.parts["r"].ref, st.parts["c"].ref) == ("R101", "C101")
    assert len(st.channels) == 3


def test_a_stage_without_channels_has_none_in_the_json(tmp_path):
    f = tmp_path / "p.toml"
    f.write_text(HEAD.replace("channels = {channels}\n", "").format(
        r='value = "10k"', c='value = "10n"', analysis=""), encoding="utf-8")
    p = load_project(f)
    assert p.stages[0].channels == ()
    assert "channels" not in summary(p, analyse_project(p, jobs=1).results)["stages"][0]


@pytest.mark.parametrize("row, new, key", [
    ("R102;10k;1%;;", "R102;4k7;1%;;", "value"),
    ("R103;10k;1%;;", "R103;10k;5%;;", "tolerance"),
    ("C102;10n;5%;NP0;50 V", "C102;10n;5%;X7R;50 V", "dielectric"),
    ("C103;10n;5%;C0G;50 V", "C103;10n;5%;C0G;25 V", "voltage"),
])
def test_differing_channels_are_an_error_naming_both_designators(tmp_path, row, new, key):
    f = project(tmp_path, bom=BOM.replace(row, new))
    with pytest.raises(ProjectError) as e:
        load_project(f)
    other = new.split(";")[0]
    first = "R101" if other.startswith("R") else "C101"
    assert other in str(e.value) and first in str(e.value) and key in str(e.value)
    k = int(other[-1]) - 1
    assert e.value.path == f"stage[1].channels[{k}].{other[0].lower()}"


def test_stage_value_against_a_differing_bom_row_names_the_channel(tmp_path):
    f = project(tmp_path, r='ref = "R101", value = "10k"',
                bom=BOM.replace("R102;10k", "R102;12k"))
    with pytest.raises(ProjectError) as e:
        load_project(f)
    assert e.value.path == "stage[1].channels[1].r.value"
    assert "R102" in str(e.value) and "R101" in str(e.value)


def test_an_unfitted_channel_part_is_an_error(tmp_path):
    bom = BOM.replace("Voltage\n", "Voltage;DNP\n").replace("C103;10n;5%;C0G;50 V",
                                                           "C103;10n;5%;C0G;50 V;DNP")
    with pytest.raises(ProjectError) as e:
        load_project(project(tmp_path, bom=bom))
    assert e.value.path == "stage[1].channels[2].c.ref" and "line 7" in str(e.value)


@pytest.mark.parametrize("channels, path, words", [
    ('[{ r = "R101" }, { r = "R102", c = "C102" }]', "stage[1].channels[0]",
     ["role 'c'"]),
    ('[{ r = "R101", c = "C101", rr = "R9" }]', "stage[1].channels[0].rr",
     ["unknown role 'rr'"]),
    ('[{ r = "R101", c = "C101" }, { r = "R101", c = "C102" }]', "stage[1].channels[1].r",
     ["R101", "already used"]),
    ('[{ r = "R102", c = "C101" }, { r = "R101", c = "C102" }]', "stage[1].channels[0].r",
     ["first channel", "R101", "R102"]),
    ('[]', "stage[1].channels", ["list of tables"]),
    ('"R101"', "stage[1].channels", ["list of tables"]),
    ('[{ r = "", c = "C101" }]', "stage[1].channels[0].r", ["designator"]),
])
def test_malformed_channels(tmp_path, channels, path, words):
    with pytest.raises(ProjectError) as e:
        load_project(project(tmp_path, channels=channels))
    assert e.value.path == path
    for w in words:
        assert w in str(e.value)
