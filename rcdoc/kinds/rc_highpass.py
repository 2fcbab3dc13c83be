"""rc-highpass: series C from the input, shunt R at the output (output across R)."""

from __future__ import annotations

from rcdoc.kinds import _first_order as first
from rcdoc.kinds import base

NAME = "rc-highpass"
OPTIONS: tuple[str, ...] = ()
PASSBAND = "high"
TITLE = "RC high-pass"
HEADLINE = ("corner", "passband_gain")   # metrics reported first (those the stage offers)
ROLES = ("c", "r")
parse_options = base.no_options
check_roles = first.check_roles
metrics = first.metrics
characteristic_hz = first.characteristic_hz


def build(stage):
    return first.build(stage, series="c", shunt="r")


def schematic(stage):
    return first.schematic(stage, series="c", shunt="r")
