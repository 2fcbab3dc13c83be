"""rc-bandpass: an RC high-pass (series c1, shunt r1) followed by an RC low-pass (series r2, shunt c2)."""

from __future__ import annotations

from rcdoc.kinds import recipes as sch
from rcdoc.analysis.network import GROUND, Element
from rcdoc.kinds import base

NAME = "rc-bandpass"
OPTIONS: tuple[str, ...] = ()
PASSBAND = "band"
TITLE = "RC band-pass"
HEADLINE = ("corner_low", "corner_high", "passband_gain")   # metrics reported first (those the stage offers)
ROLES = ("c1", "r1", "r2", "c2")
parse_options = base.no_options


def check_roles(parts, options, path):
    base.require_roles(parts, ROLES, path)


def metrics(options, drive):
    m = tuple(x for x in base.standard_metrics(drive) if x != "corner")
    return m + ("corner_low", "corner_high")


def build(stage):
    return base.wrap(stage, [Element("c1", "C", "in", "hp"), Element("r1", "R", "hp", GROUND),
                             Element("r2", "R", "hp", "out"), Element("c2", "C", "out", GROUND)],
                     path=("c1", "r2"))


def characteristic_hz(stage):
    return None   # from the poles


def schematic(stage):
    p = stage.parts
    return sch.ladder([("series", "C", base.label(p["c1"])), ("shunt", "R", base.label(p["r1"])),
                       ("series", "R", base.label(p["r2"])), ("shunt", "C", base.label(p["c2"]))],
                      source=base.source_labels(stage), load=base.load_labels(stage))
