"""rc-highpass: series C from the input, shunt R at the output (output across R)."""

from __future__ import annotations

import math

from ..figures import schematic as sch
from ..network import GROUND, Element
from . import base

NAME = "rc-highpass"
OPTIONS: tuple[str, ...] = ()
PASSBAND = "high"
ROLES = ("c", "r")
parse_options = base.no_options


def check_roles(parts, options, path):
    base.require_roles(parts, ROLES, path)


def metrics(options, drive):
    return base.standard_metrics(drive)


def build(stage):
    return base.wrap(stage, [Element("c", "C", "in", "out"), Element("r", "R", "out", GROUND)],
                     path=("c", "r"))


def characteristic_hz(stage):
    # First-order corner, fc = 1/(2πRC).
    return 1.0 / (2 * math.pi * stage.parts["r"].value * stage.parts["c"].value)


def schematic(stage):
    p = stage.parts
    return sch.ladder([("series", "C", base.label(p["c"])), ("shunt", "R", base.label(p["r"]))],
                      source=base.source_labels(stage), load=base.load_labels(stage))
