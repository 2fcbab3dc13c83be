"""Preferred-value alternatives: neighbours in the series fitting the tolerance, and
the checked metrics with the part replaced, against textbook formulas."""

from __future__ import annotations

import math

import pytest

from rcdoc.analysis import alternatives as alternatives_mod
from rcdoc.analysis.alternatives import ALT_SAMPLES, stage_alternatives
from rcdoc.kinds import KINDS, analyse_stage, load_project
from rcdoc.note.alternatives import alternatives_block
from rcdoc.note.context import fq, metric_label
from rcdoc.note.page import stage_context

BOARD = """
[board]
name = "Alternatives test"
revision = "A"
date = "2026-01-01"
[analysis]
samples = 20
"""

LOWPASS = BOARD + """
[[stage]]
id = "lp"
title = "Low-pass"
kind = "rc-lowpass"
parts.r = {{ ref = "R1", value = "{r}", tolerance = "{tol}" }}
parts.c = {{ ref = "C1", value = "10 nF", tolerance = "5%", dielectric = "C0G" }}
[[stage.check]]
metric = "corner"
min = "3.2 kHz"
max = "3.35 kHz"
[[stage.check]]
metric = "gain"
at = "30 kHz"
max = "-15 dB"
"""


def analysed(tmp_path, text):
    f = tmp_path / "p.toml"
    f.write_text(text, encoding="utf-8")
    p = load_project(f)
    return p, analyse_stage(p.stages[0], p.analysis)


def rc_corner(r, c):
    # Textbook first-order RC low-pass: f_c = 1 / (2π R C).
    return 1 / (2 * math.pi * r * c)


def rc_gain_db(r, c, f):
    # Textbook first-order RC low-pass: |H| = 1 / sqrt(1 + (f / f_c)²).
    return -10 * math.log10(1 + (f / rc_corner(r, c)) ** 2)


def test_non_preferred_resistor_gets_e24_neighbours_and_their_metrics(tmp_path):
    p, r = analysed(tmp_path, LOWPASS.format(r="4.87k", tol="5%"))
    alt = stage_alternatives(r, p.analysis, KINDS[r.stage.kind])
    assert [m[0] for m in alt.metrics] == ["corner", "gain"]
    rows = {a.step: a for a in alt.rows}
    # IEC 60063 E24 (5 %): ... 4.3, 4.7, 5.1 ...; 4.87 lies between 4.7 and 5.1.
    assert rows["below"].value == pytest.approx(4700.0)
    assert rows["above"].value == pytest.approx(5100.0)
    assert rows["below"].series == "E24"
    for a in alt.rows:
        assert a.metrics[0] == pytest.approx(rc_corner(a.value, 10e-9), rel=1e-5)
        assert a.metrics[1] == pytest.approx(rc_gain_db(a.value, 10e-9, 30e3), abs=1e-6)
    # The corner limits 3.2 ... 3.35 kHz hold the design but neither neighbour.
    assert rows[""].inside == (True, True)
    assert rows["below"].inside[0] is False and rows["above"].inside[0] is False


def test_block_lists_design_and_neighbours(tmp_path):
    p, r = analysed(tmp_path, LOWPASS.format(r="4.87k", tol="5%"))
    block = alternatives_block(r, fq, metric_label)
    assert block["type"] == "table" and len(block["rows"]) == 3
    assert [row[2] for row in block["rows"]] == ["as designed", "E24 below", "E24 above"]
    assert block["rows"][0][-1] == "all inside"
    assert block["rows"][1][-1].startswith("outside: Corner")
    # The move is given in brackets: f_c scales with 1/R, so 4.87k -> 4.7k is +3.6 %.
    assert f"({(4870 / 4700 - 1) * 100:+.1f} %)" in block["rows"][1][3]
    assert f"({(4870 / 5100 - 1) * 100:+.1f} %)".replace("-", "−") in block["rows"][2][3]


def test_preferred_values_give_no_block(tmp_path):
    # 4.7 kΩ is an E24 value (IEC 60063).
    p, r = analysed(tmp_path, LOWPASS.format(r="4k7", tol="5%"))
    assert stage_alternatives(r, p.analysis, KINDS[r.stage.kind]) is None
    assert alternatives_block(r, fq, metric_label) is None


def test_series_follows_the_tolerance(tmp_path):
    # 4.87 is an E96 value (IEC 60063): preferred for a 1 % part, not for a 5 % one.
    p, r = analysed(tmp_path, LOWPASS.format(r="4.87k", tol="1%"))
    assert stage_alternatives(r, p.analysis, KINDS[r.stage.kind]) is None
    # 4.8 kΩ at 1 %: E96 neighbours 4.75 and 4.87 (IEC 60063).
    p, r = analysed(tmp_path, LOWPASS.format(r="4.8k", tol="1%"))
    rows = {a.step: a for a in stage_alternatives(r, p.analysis, KINDS[r.stage.kind]).rows}
    assert rows["below"].value == pytest.approx(4750.0) and rows["below"].series == "E96"
    assert rows["above"].value == pytest.approx(4870.0)


SALLEN_KEY = BOARD + """
[[stage]]
id = "sk"
title = "Sallen-Key"
kind = "sallen-key-lowpass"
parts.r1 = { ref = "R1", value = "10k", tolerance = "1%" }
parts.r2 = { ref = "R2", value = "10k", tolerance = "1%" }
parts.c1 = { ref = "C1", value = "2.5 nF", tolerance = "5%", dielectric = "C0G" }
parts.c2 = { ref = "C2", value = "1 nF", tolerance = "5%", dielectric = "C0G" }
[[stage.check]]
metric = "f0"
min = "9 kHz"
max = "11 kHz"
[[stage.check]]
metric = "q"
min = "0.7"
max = "0.9"
"""


@pytest.mark.slow
def test_second_order_stage_against_the_textbook(tmp_path):
    p, r = analysed(tmp_path, SALLEN_KEY)
    alt = stage_alternatives(r, p.analysis, KINDS[r.stage.kind])
    rows = {a.step: a for a in alt.rows}
    assert {a.ref for a in alt.rows} == {"C1"}          # only 2.5 nF is off its series
    # IEC 60063 E24 (5 %): 2.4 and 2.7 either side of 2.5.
    assert rows["below"].value == pytest.approx(2.4e-9)
    assert rows["above"].value == pytest.approx(2.7e-9)
    r1 = r2 = 10e3
    c2 = 1e-9
    for a in alt.rows:
        c1 = a.value
        # Unity-gain Sallen-Key, ideal op-amp (docs/project-format.md, textbook):
        # ω0 = 1/√(r1 r2 c1 c2), Q = √(r1 r2 c1 c2) / (c2 (r1 + r2)).
        f0 = 1 / (2 * math.pi * math.sqrt(r1 * r2 * c1 * c2))
        q = math.sqrt(r1 * r2 * c1 * c2) / (c2 * (r1 + r2))
        assert a.metrics[0] == pytest.approx(f0, rel=1e-6)
        assert a.metrics[1] == pytest.approx(q, rel=1e-6)


@pytest.mark.slow
def test_stage_page_shows_the_block_after_the_parts_table(tmp_path):
    p, r = analysed(tmp_path, LOWPASS.format(r="4.87k", tol="5%"))
    titles = [b.get("title") for b in stage_context(r, p)["blocks"]]
    i = titles.index("Parts")
    assert titles[i + 1] == "Preferred-value alternatives"


def test_alternatives_are_part_of_the_analysis_and_the_note_only_formats_them(tmp_path,
                                                                              monkeypatch):
    p, r = analysed(tmp_path, LOWPASS.format(r="4.87k", tol="5%"))
    assert r.alternatives is not None and r.alternatives.samples == ALT_SAMPLES

    def no_physics(*a, **k):
        raise AssertionError("the note re-ran the physics")
    monkeypatch.setattr(alternatives_mod, "Evaluator", no_physics)
    monkeypatch.setattr(alternatives_mod.spread, "build_batch", no_physics)
    block = alternatives_block(r, fq, metric_label)
    assert block["columns"][-2] == f"Yield ({ALT_SAMPLES} samples)"
    assert len(block["rows"]) == 3


# A corner window cutting through the spread, so that yields lie well inside 0 … 1.
SPLIT = BOARD.replace("samples = 20", "samples = 4000\nseed = 7") + """
[[stage]]
id = "lp"
title = "Low-pass"
kind = "rc-lowpass"
parts.r = { ref = "R1", value = "4.87k", tolerance = "5%" }
parts.c = { ref = "C1", value = "10 nF", tolerance = "5%", dielectric = "C0G" }
[[stage.check]]
metric = "corner"
min = "3.2 kHz"
max = "3.4 kHz"
"""


@pytest.mark.slow
def test_alternative_yields_agree_with_a_direct_monte_carlo(tmp_path):
    p, r = analysed(tmp_path, SPLIT)
    alt = r.alternatives
    n_alt = alt.samples
    checked = 0
    for a in alt.rows:
        # The changed design analysed directly: 4000 samples from another seed.
        text = SPLIT.replace('"4.87k"', f'"{a.value:.6g}"').replace("seed = 7", "seed = 99")
        f = tmp_path / f"direct-{a.step or 'design'}.toml"
        f.write_text(text, encoding="utf-8")
        pd = load_project(f)
        direct = analyse_stage(pd.stages[0], pd.analysis).verdicts[0]
        y_alt, y_dir = a.yields[0], direct.yield_
        # Two independent binomial estimates: their difference has standard error
        # sqrt(p(1-p)/n1 + p(1-p)/n2) (binomial distribution, textbook); 4 SE bound.
        pp = min(max(y_dir, 1.0 / n_alt), 1 - 1.0 / n_alt)
        se = math.sqrt(pp * (1 - pp) * (1 / n_alt + 1 / pd.analysis.samples))
        assert abs(y_alt - y_dir) <= 4 * se, (a.step, y_alt, y_dir, se)
        checked += 0.05 < y_dir < 0.95
    assert checked >= 2          # the window cuts through at least two designs' spread
