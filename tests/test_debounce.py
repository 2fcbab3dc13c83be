"""The debounce kind against the closed form of an RC charging to a threshold.

Source (textbook, first-order RC): a capacitor charging through τ from V0
towards V∞ crosses V_th at t = τ·ln((V∞ − V0)/(V∞ − V_th)). With a pull-up
R_p, a series R and C, and a contact to ground: contact open, τ = (R_p + R)·C
towards the supply; contact closed, the contact holds its node at ground, so
τ = R·C towards ground. A leakage current I through a Thevenin resistance
moves the settled level by I·R (Thevenin's theorem).
"""

import json
import math

import numpy as np
import pytest

from boards import analyse_one, load
from rcdoc.analysis import debounce as phys
from rcdoc.note import summary
from rcdoc.kinds import analyse_stage
from rcdoc.errors import ProjectError

RP, R, C, VS = 10e3, 47e3, 100e-9, 3.3


def _stage(pull="up", leakage="0 A", rising='["1.5 V", "2.3 V"]',
           falling='["0.6 V", "1.4 V"]', tol="0.001%", checks=""):
    return f"""
[[stage]]
id = "sw"
title = "Contact"
kind = "debounce"
supply = "3.3 V"
pull = "{pull}"
thresholds = {{ rising = {rising}, falling = {falling} }}
leakage = "{leakage}"
parts.r_pull = {{ value = "10k", tolerance = "{tol}" }}
parts.r = {{ value = "47k", tolerance = "{tol}" }}
parts.c = {{ value = "100 nF", tolerance = "{tol}", dielectric = "C0G" }}
{checks}
"""


def _m(result, name):
    return next(m for m in result.metrics if m.name == name)


def _t(tau, v0, vinf, vth):
    """Textbook RC crossing time."""
    return tau * math.log((vinf - v0) / (vinf - vth))


def test_pull_up_delays_are_the_rc_closed_form(tmp_path):
    # Thresholds fixed (ranges of zero width) so the nominal row is exact.
    r = analyse_one(tmp_path, _stage(rising='["2.0 V", "2.0 V"]', falling='["1.0 V", "1.0 V"]'),
                    "samples = 50")
    # Textbook: press τ = R·C from 3.3 V towards 0 V through 1.0 V.
    assert _m(r, "press_delay").nominal == pytest.approx(_t(R * C, VS, 0.0, 1.0), rel=1e-9)
    # Textbook: release τ = (R_p + R)·C from 0 V towards 3.3 V through 2.0 V.
    assert _m(r, "release_delay").nominal == pytest.approx(_t((RP + R) * C, 0.0, VS, 2.0),
                                                           rel=1e-9)
    # Slope at the crossing of an exponential: |V∞ − V_th|/τ; the slower of the two edges.
    rate = min(1.0 / (R * C), (VS - 2.0) / ((RP + R) * C))
    assert _m(r, "edge_rate").nominal == pytest.approx(rate, rel=1e-9)


def test_leakage_shifts_the_levels_by_i_times_r(tmp_path):
    i = 2e-6
    r = analyse_one(tmp_path, _stage(leakage="2 uA", rising='["2.0 V", "2.0 V"]',
                                     falling='["1.0 V", "1.0 V"]'), "samples = 50")
    # Thevenin: high level = V_s − I·(R_p + R) (leakage out of the input), low = I·R (into it).
    high, low = VS - i * (RP + R), i * R
    assert _m(r, "high_level").nominal == pytest.approx(high, rel=1e-12)
    assert _m(r, "low_level").nominal == pytest.approx(low, rel=1e-12)
    # Textbook crossing times between the shifted levels.
    assert _m(r, "press_delay").nominal == pytest.approx(_t(R * C, high, low, 1.0), rel=1e-9)
    assert _m(r, "release_delay").nominal == pytest.approx(_t((RP + R) * C, low, high, 2.0),
                                                           rel=1e-9)


def test_pull_down_is_the_mirror_image(tmp_path):
    i = 1e-6
    r = analyse_one(tmp_path, _stage(pull="down", leakage="1 uA", rising='["2.0 V", "2.0 V"]',
                                     falling='["1.0 V", "1.0 V"]'), "samples = 50")
    # Contact to the supply: closed, C charges through R alone (τ = R·C) towards
    # V_s − I·R; open, it discharges through R_p + R towards I·(R_p + R) (Thevenin).
    high, low = VS - i * R, i * (RP + R)
    assert _m(r, "high_level").nominal == pytest.approx(high, rel=1e-12)
    assert _m(r, "low_level").nominal == pytest.approx(low, rel=1e-12)
    assert _m(r, "press_delay").nominal == pytest.approx(_t(R * C, low, high, 2.0), rel=1e-9)
    assert _m(r, "release_delay").nominal == pytest.approx(_t((RP + R) * C, high, low, 1.0),
                                                           rel=1e-9)


def test_vectorised_rows_match_the_formula_row_by_row():
    # Textbook closed form evaluated per row against the vectorised function.
    rng = np.random.default_rng(3)
    rp, r, c = rng.uniform(5e3, 20e3, 7), rng.uniform(20e3, 80e3, 7), rng.uniform(5e-8, 2e-7, 7)
    up, down = rng.uniform(1.5, 2.3, 7), rng.uniform(0.6, 1.4, 7)
    got = phys.metrics("up", VS, 1e-6, rp, r, c, up, down)
    for k in range(7):
        high, low = VS - 1e-6 * (rp[k] + r[k]), 1e-6 * r[k]
        assert got["press_delay"][k] == pytest.approx(_t(r[k] * c[k], high, low, down[k]))
        assert got["release_delay"][k] == pytest.approx(
            _t((rp[k] + r[k]) * c[k], low, high, up[k]))


def test_threshold_never_reached_is_missing_and_fails(tmp_path):
    # 20 µA through R_p + R = 57 kΩ: high level 3.3 − 1.14 = 2.16 V, below a V_T+ of 2.3 V
    # at some samples, and the low level 20 µA · 47 kΩ = 0.94 V is above V_T− = 0.6 V at some.
    checks = """
[[stage.check]]
metric = "release_delay"
min = "1 ms"
[[stage.check]]
metric = "press_delay"
min = "1 ms"
"""
    r = analyse_one(tmp_path, _stage(leakage="20 uA", checks=checks), "samples = 300")
    rel = _m(r, "release_delay")
    high = _m(r, "high_level").samples
    assert np.all(high < 2.3) and np.any(high < 2.16 + 1e-9)   # Thevenin level, as above
    # Where the drawn V_T+ lies above the level, the release never crosses: missing.
    assert np.isnan(rel.samples).any()
    assert all(v.status == "fail" for v in r.verdicts)
    assert r.verdicts[0].yield_ < 1.0


def test_invalid_nominal_level_gives_no_delay(tmp_path):
    # 40 µA · 57 kΩ = 2.28 V drop: high level 1.02 V, below every V_T+ (1.5–2.3 V).
    r = analyse_one(tmp_path, _stage(leakage="40 uA"), "samples = 50")
    assert math.isnan(_m(r, "release_delay").nominal)
    assert np.all(np.isnan(_m(r, "release_delay").samples))
    assert math.isnan(_m(r, "edge_rate").nominal)


def test_thresholds_are_drawn_per_sample_within_their_ranges():
    rng = np.random.default_rng(1)
    up, down = phys.threshold_rows(rng, 20000, (1.5, 2.3), (1.0, 2.0))
    assert up.min() >= 1.5 and up.max() <= 2.3
    assert down.min() >= 1.0 and down.max() <= 2.0
    assert np.all(down <= up)                 # a Schmitt input's hysteresis is positive
    # Uniform draw: the mean of V_T+ is the middle of its range (law of large numbers,
    # standard error 0.8/√12/√20000 = 0.0016 V).
    assert up.mean() == pytest.approx(1.9, abs=0.01)


def test_worst_case_spans_the_threshold_extremes(tmp_path):
    # With exact parts the worst case comes from the threshold corners alone:
    # press from 3.3 V through V_T− = 0.6 V (slowest) and 1.4 V (fastest), τ = R·C.
    r = analyse_one(tmp_path, _stage(), "samples = 200")
    lo, hi = _m(r, "press_delay").wc
    assert lo == pytest.approx(_t(R * C, VS, 0.0, 1.4), rel=1e-4)
    assert hi == pytest.approx(_t(R * C, VS, 0.0, 0.6), rel=1e-4)
    s = _m(r, "press_delay").samples
    assert lo <= s.min() and s.max() <= hi


@pytest.mark.parametrize("text, key", [
    ('supply = "3.3 V"', None),
    ('pull = "sideways"', "pull"),
    ('thresholds = { rising = ["1.5 V", "3.5 V"], falling = ["0.6 V", "1.4 V"] }',
     "thresholds.rising[1]"),
    ('thresholds = { rising = ["2.3 V", "1.5 V"], falling = ["0.6 V", "1.4 V"] }',
     "thresholds.rising"),
    ('thresholds = { rising = ["1.5 V", "2.3 V"], falling = ["0.6 V", "2.4 V"] }',
     "thresholds.falling[1]"),
    ('thresholds = { rising = ["1.5 V", "2.3 V"] }', "thresholds.falling"),
    ('leakage = "-1 uA"', "leakage"),
    ('leakage = "1 V"', "leakage"),
])
def test_mistakes_name_their_key(tmp_path, text, key):
    base = _stage(leakage="1 uA")
    if key is None:        # supply given twice is a TOML error; test a missing supply instead
        text, key = "", "supply"
        base = base.replace('supply = "3.3 V"\n', "")
    else:
        field = text.split(" = ")[0]
        lines = [ln for ln in base.splitlines() if not ln.startswith(field + " = ")]
        base = "\n".join(lines) + "\n"
        base = base.replace('kind = "debounce"', 'kind = "debounce"\n' + text)
    with pytest.raises(ProjectError) as e:
        load(tmp_path, base)
    assert e.value.path == f"stage[1].{key}"


def test_json_has_yields_and_worst_case(tmp_path):
    checks = """
[[stage.check]]
metric = "press_delay"
min = "2 ms"
yield = "99%"
"""
    project = load(tmp_path, _stage(leakage="1 uA", tol="5%", checks=checks), "samples = 200")
    result = analyse_stage(project.stages[0], project.analysis)
    data = json.loads(summary.to_json(summary.summary(project, [result])))
    st = data["stages"][0]
    names = {m["metric"] for m in st["metrics"]}
    assert names == {"press_delay", "release_delay", "high_level", "low_level", "edge_rate"}
    for m in st["metrics"]:
        assert m["worst_case"][0] is not None and m["worst_case"][0] <= m["min"]
        assert m["max"] <= m["worst_case"][1]
    chk = st["checks"][0]
    assert chk["metric"] == "press_delay" and 0 < chk["yield"] <= 1.0
    assert chk["required_yield"] == pytest.approx(0.99)
    assert st["debounce"]["pull"] == "up"

