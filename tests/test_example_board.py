"""The example board passes `rcdoc check`, converter and logic inputs included.

Runs the README's example (projects/greenhouse-controller.toml) through the
command line at a small sample count and reads the JSON summary: the stages
of kinds sampled-input and debounce must carry every metric of their kind,
finite, and two of them must agree with textbook balances.
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import pytest

from rcdoc.commands.cli import main

EXAMPLE = Path(__file__).resolve().parent.parent / "projects" / "greenhouse-controller.toml"

KIND_METRICS = {
    "sampled-input": ("sample_error", "kickback", "acquisition_settling",
                      "max_sample_rate", "input_current"),
    "debounce": ("press_delay", "release_delay", "high_level", "low_level", "edge_rate"),
}


@pytest.fixture(scope="module")
def summary(tmp_path_factory):
    out = tmp_path_factory.mktemp("example")
    path = out / "summary.json"
    status = main(["check", str(EXAMPLE), "-o", str(out), "--json", str(path),
                   "--samples", "200", "--jobs", "1", "--quiet"])
    assert status == 0
    return json.loads(path.read_text(encoding="utf-8"))


def metric(stage: dict, name: str) -> dict:
    found = [m for m in stage["metrics"] if m["metric"] == name]
    assert found, f"{stage['id']}: metric {name} missing"
    return found[0]


@pytest.mark.slow
@pytest.mark.parametrize("kind", sorted(KIND_METRICS))
def test_example_stage_metrics_present_and_finite(summary, kind):
    assert summary["status"] == "pass"
    stages = [s for s in summary["stages"] if s["kind"] == kind]
    assert stages, f"the example has no {kind} stage"
    for stage in stages:
        assert stage["status"] == "pass", stage["id"]
        for name in KIND_METRICS[kind]:
            m = metric(stage, name)
            assert m["missing"] == 0, (stage["id"], name)
            for key in ("nominal", "min", "max", "mean"):
                assert m[key] is not None and math.isfinite(m[key]), (stage["id"], name, key)
            assert m["min"] <= m["nominal"] <= m["max"], (stage["id"], name)


@pytest.mark.slow
def test_example_converter_input_current_is_charge_per_conversion(summary):
    # Charge conservation (textbook): in the periodic steady state the filter
    # returns to the same state every period, so the source delivers, per
    # conversion, the charge C_s·(V_sampled − V_start) that moves the sampling
    # capacitor from the multiplexer's start voltage to the sampled value, plus
    # the pin leakage: I = f_s·C_s·(V_sampled − V_start) + I_leak.
    # Converter values as stated in projects/greenhouse-controller.toml; the
    # tolerance allows for the solver's rounding (about 1e-6 of the current).
    converters = {"moisture-adc": 1e3, "ec-adc": 10e3}      # sample rate per input, Hz
    c_s, level, start, leak = 12e-12, 3.0, 0.0, 20e-9
    lsb = 3.3 / 2 ** 12
    for stage in summary["stages"]:
        if stage["id"] not in converters:
            continue
        sampled = level + metric(stage, "sample_error")["nominal"] * lsb
        expected = converters.pop(stage["id"]) * c_s * (sampled - start) + leak
        assert metric(stage, "input_current")["nominal"] == pytest.approx(expected, rel=1e-5)
    assert not converters, f"stages missing from the example: {sorted(converters)}"


@pytest.mark.slow
def test_example_debounce_high_level_is_the_leakage_divider(summary):
    # Ohm's law: with the contact open the input sits at the supply less the
    # input leakage (drawn out of the input, its worst direction for the high
    # level) times the pull-up and series resistances in series.
    # Values of the float-debounce stage: 3.3 V, 1 µA, 10 kΩ + 47 kΩ.
    stage = next(s for s in summary["stages"] if s["id"] == "float-debounce")
    assert metric(stage, "high_level")["nominal"] == pytest.approx(3.3 - 1e-6 * 57e3, rel=1e-9)
