"""rc-ladder: n cascaded RC low-pass sections (r1, c1, r2, c2, ...), each loading the last."""

from __future__ import annotations

import re

from rcdoc.errors import ProjectError
from rcdoc.kinds import recipes as sch
from rcdoc.analysis.network import GROUND, Element
from rcdoc.kinds import base

NAME = "rc-ladder"
OPTIONS: tuple[str, ...] = ()
PASSBAND = "low"
TITLE = "RC ladder"
HEADLINE = ("corner", "passband_gain", "f0", "q")   # metrics reported first (those the stage offers)
ROLES: tuple[str, ...] = ()   # r1, c1, r2, c2, ...: as many sections as the stage gives (check_roles)
parse_options = base.no_options
MAX_SECTIONS = 12


def sections(parts) -> int:
    return len([r for r in parts if r.startswith("r")])


def check_roles(parts, options, path):
    for role in parts:
        if not re.fullmatch(r"[rc][1-9][0-9]?", role):
            raise ProjectError(f"role '{role}' is not part of a ladder; it takes r1, c1, "
                               "r2, c2, ... (one r and one c per section)", path=f"{path}.{role}")
    n = sections(parts)
    if n < 1 or n > MAX_SECTIONS:
        raise ProjectError(f"a ladder needs 1 to {MAX_SECTIONS} sections", path=path)
    base.require_roles(parts, tuple(f"{x}{k}" for k in range(1, n + 1) for x in "rc"), path)


def metrics(options, drive):
    return base.standard_metrics(drive, ("f0", "q"))


def build(stage):
    n = sections(stage.parts)
    els, node = [], "in"
    for k in range(1, n + 1):
        nxt = "out" if k == n else f"n{k}"
        els += [Element(f"r{k}", "R", node, nxt), Element(f"c{k}", "C", nxt, GROUND)]
        node = nxt
    return base.wrap(stage, els, path=tuple(f"r{k}" for k in range(1, n + 1)))


def characteristic_hz(stage):
    return None   # from the poles


def schematic(stage):
    p = stage.parts
    secs = []
    for k in range(1, sections(p) + 1):
        secs += [("series", "R", base.label(p[f"r{k}"])), ("shunt", "C", base.label(p[f"c{k}"]))]
    return sch.ladder(secs, source=base.source_labels(stage), load=base.load_labels(stage))
