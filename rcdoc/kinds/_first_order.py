"""What the two single-RC kinds share: one series part, one shunt part to ground.

rc-lowpass (series R, shunt C) and rc-highpass (series C, shunt R) differ only
in which part sits where; each kind module binds these functions to its roles.
"""

from __future__ import annotations

import math

from rcdoc.kinds import recipes as sch
from rcdoc.analysis.network import GROUND, Element
from rcdoc.kinds import base

ROLES = ("r", "c")


def check_roles(parts, options, path):
    base.require_roles(parts, ROLES, path)


def metrics(options, drive):
    return base.standard_metrics(drive)


def characteristic_hz(stage):
    # First-order corner, fc = 1/(2πRC).
    return 1.0 / (2 * math.pi * stage.parts["r"].value * stage.parts["c"].value)


def build(stage, series: str, shunt: str):
    """Series part from the input to the output, shunt part across the output."""
    p = stage.parts
    return base.wrap(stage, [Element(series, p[series].kind, "in", "out"),
                             Element(shunt, p[shunt].kind, "out", GROUND)],
                     path=(series, shunt))


def schematic(stage, series: str, shunt: str):
    p = stage.parts
    return sch.ladder([("series", p[series].kind, base.label(p[series])),
                       ("shunt", p[shunt].kind, base.label(p[shunt]))],
                      source=base.source_labels(stage), load=base.load_labels(stage))
