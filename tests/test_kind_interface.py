"""A stage kind is one module: a kind defined here, and registered through the
public registration function, gets the loader, `rcdoc check`, the JSON
summary, checks with yields, its note page and the summary row with no other
file touched. Registration refuses a module that misses the interface.
"""

from __future__ import annotations

import json
import math
import types

import pytest

from rcdoc import kinds
from rcdoc.analysis.network import GROUND, Element
from rcdoc.commands.cli import main
from rcdoc.kinds import base
from rcdoc.kinds import recipes as sch

NAME = "divider-lowpass"


def divider_kind(**overrides) -> types.ModuleType:
    """An RC low-pass behind a resistive divider: r1 in -> out, r2 and c out -> ground."""
    mod = types.ModuleType("test_divider_lowpass")
    roles = ("r1", "r2", "c")

    def check_roles(parts, options, path):
        base.require_roles(parts, roles, path)

    def build(stage):
        p = stage.parts
        return base.wrap(stage, [Element("r1", p["r1"].kind, "in", "out"),
                                 Element("r2", p["r2"].kind, "out", GROUND),
                                 Element("c", p["c"].kind, "out", GROUND)], path=("r1", "c"))

    def characteristic_hz(stage):
        p = stage.parts
        r = p["r1"].value * p["r2"].value / (p["r1"].value + p["r2"].value)
        return 1 / (2 * math.pi * r * p["c"].value)

    def schematic(stage):
        p = stage.parts
        return sch.netlist([(p[k].kind, base.label(p[k]), a, b) for k, a, b in
                            (("r1", "in", "out"), ("r2", "out", GROUND), ("c", "out", GROUND))],
                           input="in", output="out", source=base.source_labels(stage),
                           load=base.load_labels(stage))

    mod.__dict__.update(
        NAME=NAME, TITLE="Divided RC low-pass", ROLES=roles, OPTIONS=(), PASSBAND="low",
        HEADLINE=("corner", "passband_gain"), parse_options=base.no_options,
        check_roles=check_roles, metrics=lambda options, drive: base.standard_metrics(drive),
        build=build, characteristic_hz=characteristic_hz, schematic=schematic)
    mod.__dict__.update(overrides)
    return mod


@pytest.fixture
def divider():
    kinds.register(divider_kind())
    try:
        yield kinds.KINDS[NAME]
    finally:
        kinds.unregister(NAME)
    assert NAME not in kinds.KINDS


R1, R2, C = 10e3, 10e3, 100e-9
# Thevenin equivalent seen by c: R = r1 || r2 = 5 kΩ, fc = 1/(2π·R·C) = 318.3 Hz
# and passband gain r2/(r1 + r2) = −6.02 dB (textbook formulas).
FC = 1 / (2 * math.pi * (R1 * R2 / (R1 + R2)) * C)


def project_text(corner_min="300 Hz", corner_max="340 Hz") -> str:
    return f"""
[board]
name = "Kind interface"
revision = "A"
date = "2026-01-01"
[analysis]
samples = 200
[[stage]]
id = "div"
title = "Divided input"
kind = "{NAME}"
parts.r1 = {{ value = "10k", tolerance = "1%", ref = "R1" }}
parts.r2 = {{ value = "10k", tolerance = "1%", ref = "R2" }}
parts.c = {{ value = "100n", tolerance = "5%", ref = "C1" }}
[[stage.check]]
metric = "corner"
min = "{corner_min}"
max = "{corner_max}"
yield = "90%"
[[stage.check]]
metric = "passband_gain"
min = "-6.1 dB"
max = "-5.9 dB"
"""


def test_a_kind_defined_in_one_module_gets_the_loader_and_the_analysis(divider, tmp_path):
    f = tmp_path / "board.toml"
    f.write_text(project_text())
    project = kinds.load_project(f)
    stage = project.stages[0]
    assert stage.kind == NAME and set(stage.parts) == {"r1", "r2", "c"}
    r = kinds.analyse_stage(stage, project.analysis)
    # Headline metrics first, in the kind's HEADLINE order.
    assert [m.name for m in r.metrics[:2]] == ["corner", "passband_gain"]
    assert r.metric("corner").nominal == pytest.approx(FC, rel=0.005)    # Thevenin, above
    assert r.metric("passband_gain").nominal == pytest.approx(20 * math.log10(0.5), abs=0.01)
    # Checks with yields: 1 % resistors and a 5 % capacitor keep the corner in 300..340 Hz
    # for most samples but not all (±5 % of 318 Hz is 302..334 Hz before the resistors).
    corner = next(v for v in r.verdicts if v.metric == "corner")
    assert corner.required_yield == pytest.approx(0.9)
    assert 0.9 <= corner.yield_ <= 1.0
    assert r.status == "pass"


@pytest.mark.slow
def test_a_kind_defined_in_one_module_gets_check_json_note_and_summary(divider, tmp_path):
    from rcdoc.note.context import summary_rows
    from rcdoc.note.page import stage_context
    f = tmp_path / "board.toml"
    f.write_text(project_text())
    out = tmp_path / "summary.json"
    code = main(["check", str(f), "--json", str(out), "--jobs", "1", "--quiet",
                 "-o", str(tmp_path / "build")])
    assert code == 0
    data = json.loads(out.read_text())
    st = data["stages"][0]
    assert st["kind"] == NAME and st["status"] == "pass"
    assert [m["metric"] for m in st["metrics"][:2]] == ["corner", "passband_gain"]
    assert {c["metric"] for c in st["checks"]} == {"corner", "passband_gain"}
    assert all(0 <= c["yield"] <= 1 for c in st["checks"])
    # The note page and the summary row, from the kind's TITLE and HEADLINE.
    project = kinds.load_project(f)
    r = kinds.analyse_stage(project.stages[0], project.analysis)
    ctx = stage_context(r, project)
    assert ctx["kind"] == "Divided RC low-pass"
    titles = [b.get("title") for b in ctx["blocks"]]
    assert titles[0] == "Schematic" and "<svg" in ctx["blocks"][0]["image"]
    row = summary_rows([r])[0]
    assert row["cells"][1] == "Divided RC low-pass"
    assert row["cells"][2].startswith("Corner frequency")
    assert row["cells"][3] == "2 of 2"


def test_a_failing_check_of_the_new_kind_fails_the_command(divider, tmp_path):
    f = tmp_path / "board.toml"
    f.write_text(project_text(corner_min="400 Hz", corner_max="500 Hz"))
    assert main(["check", str(f), "--jobs", "1", "--quiet", "-o", str(tmp_path / "b")]) == 1


def test_a_mistake_in_the_new_kinds_stage_is_a_project_error(divider, tmp_path, capsys):
    f = tmp_path / "board.toml"
    f.write_text(project_text().replace('parts.r2 = { value = "10k", tolerance = "1%", '
                                        'ref = "R2" }\n', ""))
    assert main(["check", str(f), "--jobs", "1", "--quiet", "-o", str(tmp_path / "b")]) == 2
    err = capsys.readouterr().err
    assert "stage[1].parts.r2" in err and "Traceback" not in err


def test_unregistered_kind_is_unknown(tmp_path):
    from rcdoc.errors import ProjectError
    f = tmp_path / "board.toml"
    f.write_text(project_text())
    with pytest.raises(ProjectError, match="unknown kind 'divider-lowpass'"):
        kinds.load_project(f)


@pytest.mark.parametrize("overrides, message", [
    ({"TITLE": None}, "TITLE must be a non-empty string"),
    ({"HEADLINE": ("corner", "notch_widht")}, "HEADLINE names 'notch_widht'"),
    ({"PASSBAND": "lowish"}, "PASSBAND must be one of"),
    ({"ROLES": ["r1", "r2", "c"]}, "ROLES must be a tuple of strings"),
    ({"build": None}, r"build\(\) is missing"),
    ({"metrics": lambda options, drive: ("corner", "sparkle")}, "metrics\\(\\) names 'sparkle'"),
    # A kind's own analysis takes the Bode flag (rcdoc.analysis.analyse.analyse_stage
    # passes it); a kind's Evaluator is one.
    ({"analyse": lambda stage, analysis: None}, "must take a 'bode' keyword"),
    ({"EVALUATOR": dict}, "EVALUATOR must be a subclass"),
])
def test_registration_refuses_a_kind_missing_the_interface(overrides, message):
    mod = divider_kind(**overrides)
    if overrides.get("TITLE", 1) is None:
        del mod.TITLE
    with pytest.raises(kinds.KindError, match=message) as info:
        kinds.register(mod)
    assert "test_divider_lowpass" in str(info.value)      # names the module
    assert NAME not in kinds.KINDS


def test_every_shipped_kind_passes_the_registration_check():
    for mod in kinds.KINDS.values():
        kinds.check_kind(mod)          # raises on a missing or ill-typed name
    assert len(kinds.KINDS) >= 10
