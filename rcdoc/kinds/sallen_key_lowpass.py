"""sallen-key-lowpass: second-order low-pass around an op-amp follower (gain 1 + rf/rg).

r1 input -> A, r2 A -> B (+ input), c1 A -> output (feedback), c2 B -> ground;
optional rf output -> - input and rg - input -> ground.
"""

from __future__ import annotations

from rcdoc.errors import ProjectError
from rcdoc.kinds import recipes as sch
from rcdoc.analysis.network import GROUND, Element, OpAmp
from rcdoc.kinds import base

NAME = "sallen-key-lowpass"
OPTIONS = ("amplifier",)
PASSBAND = "low"
TITLE = "Sallen-Key low-pass"
HEADLINE = ("corner", "passband_gain", "f0", "q", "peaking")   # metrics reported first (those the stage offers)
ROLES = ("r1", "r2", "c1", "c2")
OPTIONAL = ("rf", "rg")


def parse_options(t, path):
    return base.parse_amplifier(t, path)


def check_roles(parts, options, path):
    base.require_roles(parts, ROLES, path, OPTIONAL)
    if ("rf" in parts) != ("rg" in parts):
        missing = "rg" if "rf" in parts else "rf"
        raise ProjectError(f"rf and rg set the gain together; '{missing}' is missing",
                           path=f"{path}.{missing}")


def metrics(options, drive):
    return base.standard_metrics(drive, base.SECOND_ORDER_METRICS)


def build(stage):
    o = stage.options
    els = [Element("r1", "R", "in", "a"), Element("r2", "R", "a", "p"),
           Element("c1", "C", "a", "out"), Element("c2", "C", "p", GROUND)]
    minus = "out"
    if "rf" in stage.parts:
        minus = "m"
        els += [Element("rf", "R", "out", "m"), Element("rg", "R", "m", GROUND)]
    amp = OpAmp("u1", plus="p", minus=minus, out="out", gbw_hz=o["gbw_hz"], a0=o["a0"])
    return base.wrap(stage, els, opamps=[amp], path=("r1", "r2"))


def characteristic_hz(stage):
    p = stage.parts
    import math
    # Natural frequency of the Sallen-Key section: f0 = 1/(2π√(r1 r2 c1 c2)).
    return 1.0 / (2 * math.pi * math.sqrt(p["r1"].value * p["r2"].value
                                          * p["c1"].value * p["c2"].value))


def schematic(stage):
    p = stage.parts
    lab = base.label
    return sch.sallen_key(lab(p["r1"]), lab(p["r2"]), lab(p["c1"]), lab(p["c2"]),
                          rf=lab(p["rf"]) if "rf" in p else None,
                          rg=lab(p["rg"]) if "rg" in p else None,
                          source=base.source_labels(stage), load=base.load_labels(stage))
