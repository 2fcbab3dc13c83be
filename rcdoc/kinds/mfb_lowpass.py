"""mfb-lowpass: second-order multiple-feedback low-pass, inverting.

r1 input -> A, c1 A -> ground, r2 A -> output, r3 A -> - input,
c2 - input -> output; + input grounded.
"""

from __future__ import annotations

import math

from rcdoc.kinds import recipes as sch
from rcdoc.analysis.network import GROUND, Element, OpAmp
from rcdoc.kinds import base

NAME = "mfb-lowpass"
OPTIONS = ("amplifier",)
PASSBAND = "low"
TITLE = "Multiple-feedback low-pass"
HEADLINE = ("corner", "passband_gain", "f0", "q", "peaking")   # metrics reported first (those the stage offers)
ROLES = ("r1", "r2", "r3", "c1", "c2")


def parse_options(t, path):
    return base.parse_amplifier(t, path)


def check_roles(parts, options, path):
    base.require_roles(parts, ROLES, path)


def metrics(options, drive):
    return base.standard_metrics(drive, base.SECOND_ORDER_METRICS)


def build(stage):
    o = stage.options
    els = [Element("r1", "R", "in", "a"), Element("c1", "C", "a", GROUND),
           Element("r2", "R", "a", "out"), Element("r3", "R", "a", "m"),
           Element("c2", "C", "m", "out")]
    amp = OpAmp("u1", plus=GROUND, minus="m", out="out", gbw_hz=o["gbw_hz"], a0=o["a0"])
    return base.wrap(stage, els, opamps=[amp], path=("r1", "r3"))


def characteristic_hz(stage):
    p = stage.parts
    # From the MFB denominator s² r2 r3 c1 c2 + ...: f0 = 1/(2π√(r2 r3 c1 c2)).
    return 1.0 / (2 * math.pi * math.sqrt(p["r2"].value * p["r3"].value
                                          * p["c1"].value * p["c2"].value))


def schematic(stage):
    p = stage.parts
    lab = base.label
    return sch.mfb(lab(p["r1"]), lab(p["r2"]), lab(p["r3"]), lab(p["c1"]), lab(p["c2"]),
                   source=base.source_labels(stage), load=base.load_labels(stage))
