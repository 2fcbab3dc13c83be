"""rc-lowpass: series R from the input, shunt C at the output (output across C)."""

from __future__ import annotations

from rcdoc.kinds import _first_order as first
from rcdoc.kinds import base

NAME = "rc-lowpass"
OPTIONS: tuple[str, ...] = ()
PASSBAND = "low"
TITLE = "RC low-pass"
HEADLINE = ("corner", "passband_gain")   # metrics reported first (those the stage offers)
ROLES = first.ROLES
parse_options = base.no_options
check_roles = first.check_roles
metrics = first.metrics
characteristic_hz = first.characteristic_hz


def build(stage):
    return first.build(stage, series="r", shunt="c")


def schematic(stage):
    return first.schematic(stage, series="r", shunt="c")
