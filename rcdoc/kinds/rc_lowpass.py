"""rc-lowpass: series R from the input, shunt C at the output (output across C)."""

from __future__ import annotations

import math

from ..figures import schematic as sch
from ..network import GROUND, Element
from . import base

NAME = "rc-lowpass"
OPTIONS: tuple[str, ...] = ()
PASSBAND = "low"
ROLES = ("r", "c")
parse_options = base.no_options


def check_roles(parts, options, path):
    base.require_roles(parts, ROLES, path)


def metrics(options, drive):
    return base.standard_metrics(drive)


def build(stage):
    return base.wrap(stage, [Element("r", "R", "in", "out"), Element("c", "C", "out", GROUND)],
                     path=("r", "c"))


def characteristic_hz(stage):
    # First-order corner, fc = 1/(2πRC).
    return 1.0 / (2 * math.pi * stage.parts["r"].value * stage.parts["c"].value)


def schematic(stage):
    p = stage.parts
    return sch.ladder([("series", "R", base.label(p["r"])), ("shunt", "C", base.label(p["c"]))],
                      source=base.source_labels(stage), load=base.load_labels(stage))
