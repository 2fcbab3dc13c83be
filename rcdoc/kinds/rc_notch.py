"""rc-notch: passive twin-T band-stop.

r1, r2 in series from the input to the output with c3 from their junction to
ground; c1, c2 in series from the input to the output with r3 from their
junction to ground. Balanced (r1 = r2 = R, c3 = 2C, c1 = c2 = C, r3 = R/2)
and unloaded it nulls at f = 1/(2πRC). How deep the null is depends on how
well the parts match, so the depth's spread over tolerance is the result a
designer reads first.
"""

from __future__ import annotations

import math

from rcdoc.analysis.network import GROUND, Element
from rcdoc.kinds import base
from rcdoc.kinds import recipes as sch

NAME = "rc-notch"
TITLE = "Twin-T notch"
ROLES = ("r1", "r2", "c3", "c1", "c2", "r3")
OPTIONS: tuple[str, ...] = ()
PASSBAND = "band-stop"       # passband gain read at DC
HEADLINE = ("notch_frequency", "notch_depth")
parse_options = base.no_options
# (role, node a, node b): "t" joins the resistor T, "u" the capacitor T.
_ELEMENTS = (("r1", "in", "t"), ("r2", "t", "out"), ("c3", "t", GROUND),
             ("c1", "in", "u"), ("c2", "u", "out"), ("r3", "u", GROUND))


def check_roles(parts, options, path):
    base.require_roles(parts, ROLES, path)     # a role's letter gives the part's type


def metrics(options, drive):
    # The -3 dB corner of a notch is two frequencies and not what a notch is specified by.
    return tuple(m for m in base.standard_metrics(drive) if m != "corner") + HEADLINE


def build(stage):
    p = stage.parts
    return base.wrap(stage, [Element(role, p[role].kind, a, b) for role, a, b in _ELEMENTS],
                     path=("r1", "r2"))


def characteristic_hz(stage):
    # Balanced twin-T null: f = 1/(2π·R·C) with R = r1 and C = c1 (textbook).
    return 1.0 / (2 * math.pi * stage.parts["r1"].value * stage.parts["c1"].value)


def schematic(stage):
    p = stage.parts
    return sch.netlist([(p[role].kind, base.label(p[role]), a, b) for role, a, b in _ELEMENTS],
                       input="in", output="out", source=base.source_labels(stage),
                       load=base.load_labels(stage))
