"""network: a stage given element by element between named nodes.

The letter of each part's role (r, c, l) fixes its type. The input node is
driven through the stage's source impedance; the output node carries the
load. Validation here catches floating nodes, dangling nodes, unknown and
unplaced parts, so that the engine only ever sees a connected circuit.
"""

from __future__ import annotations

import re

from rcdoc.errors import ProjectError
from rcdoc.kinds import recipes as sch
from rcdoc.analysis.network import GROUND, Element
from rcdoc.kinds import base

NAME = "network"
OPTIONS = ("input", "output", "elements", "passband")
PASSBAND = "low"      # default; a stage may say passband = "high" or "band"
TITLE = "Network"
HEADLINE = ("corner", "corner_low", "corner_high", "passband_gain", "f0", "q", "peaking")   # metrics reported first (those the stage offers)
ROLES: tuple[str, ...] = ()   # the stage names its own parts (the letter gives the type)
# Node names are the user's and are used as given (fullmatch: no trailing newline).
# Internal nodes (rcdoc.kinds.base.SOURCE_NODE...) hold a character outside this set.
NODE = re.compile(r"[A-Za-z0-9_]{1,32}")
NODE_RULE = "1 to 32 letters, digits or '_'"


def parse_options(t: dict, path: str) -> dict:
    for key in ("input", "output", "elements"):
        if key not in t:
            raise ProjectError(f"a network stage needs '{key}'", path=f"{path}.{key}")
    opts = {}
    for key in ("input", "output"):
        node = t[key]
        if not isinstance(node, str) or not NODE.fullmatch(node):
            raise ProjectError(f"expected a node name: {NODE_RULE}", path=f"{path}.{key}")
        if node == GROUND:
            raise ProjectError(f"the {key} cannot be ground (\"0\")", path=f"{path}.{key}")
        opts[key] = node
    if opts["input"] == opts["output"]:
        raise ProjectError("input and output are the same node", path=f"{path}.output")
    passband = t.get("passband", PASSBAND)
    if passband not in ("low", "high", "band"):
        raise ProjectError("passband must be 'low', 'high' or 'band'", path=f"{path}.passband")
    opts["passband"] = passband
    raw = t["elements"]
    if not isinstance(raw, list) or not raw:
        raise ProjectError("expected a non-empty list of { part = ..., between = [a, b] }",
                           path=f"{path}.elements")
    elements = []
    for k, e in enumerate(raw, start=1):
        epath = f"{path}.elements[{k}]"
        if not isinstance(e, dict):
            raise ProjectError("expected { part = ..., between = [a, b] }", path=epath)
        for key in e:
            if key not in ("part", "between"):
                raise ProjectError(f"unknown key '{key}'; an element has 'part' and 'between'",
                                   path=f"{epath}.{key}")
        if "part" not in e or "between" not in e:
            raise ProjectError("an element needs 'part' and 'between'", path=epath)
        role, between = e["part"], e["between"]
        if not isinstance(role, str):
            raise ProjectError("expected a part role", path=f"{epath}.part")
        if (not isinstance(between, list) or len(between) != 2
                or not all(isinstance(n, str) and NODE.fullmatch(n) for n in between)):
            raise ProjectError(f"expected two node names, e.g. [\"in\", \"mid\"]; a node name "
                               f"is {NODE_RULE}", path=f"{epath}.between")
        if between[0] == between[1]:
            raise ProjectError("both ends on the same node", path=f"{epath}.between")
        elements.append((role, between[0], between[1], epath))
    opts["elements"] = tuple(elements)
    return opts


def check_roles(parts, options, path):
    placed: dict[str, str] = {}
    for role, a, b, epath in options["elements"]:
        if role not in parts:
            raise ProjectError(f"unknown part '{role}'; parts are "
                               f"{', '.join(parts) or 'none'}", path=f"{epath}.part")
        if role in placed:
            raise ProjectError(f"part '{role}' is placed twice (also {placed[role]})",
                               path=f"{epath}.part")
        placed[role] = epath
    for role in parts:
        if role not in placed:
            raise ProjectError(f"part '{role}' is not placed in 'elements'",
                               path=f"{path}.{role}")
    _check_connectivity(options, path.rsplit(".", 1)[0])


def _check_connectivity(options, spath):
    inp, out = options["input"], options["output"]
    count: dict[str, int] = {}
    adj: dict[str, set[str]] = {}
    for role, a, b, _ in options["elements"]:
        for n, m in ((a, b), (b, a)):
            count[n] = count.get(n, 0) + 1
            adj.setdefault(n, set()).add(m)
    for key, node in (("input", inp), ("output", out)):
        if node not in count:
            raise ProjectError(f"the {key} node '{node}' is not connected to any element",
                               path=f"{spath}.{key}")
    if GROUND not in count:
        raise ProjectError("no element connects to ground (\"0\")", path=f"{spath}.elements")
    # Floating: every node must reach ground or the (driven) input.
    reached, todo = {GROUND, inp}, [GROUND, inp]
    while todo:
        for m in adj.get(todo.pop(), ()):
            if m not in reached:
                reached.add(m)
                todo.append(m)
    for role, a, b, epath in options["elements"]:
        for n in (a, b):
            if n not in reached:
                raise ProjectError(f"node '{n}' is floating: nothing connects it to the "
                                   "input or to ground", path=f"{epath}.between")
            if count[n] == 1 and n not in (inp, out, GROUND):
                raise ProjectError(f"node '{n}' connects to this element only (a dangling "
                                   "end; a misspelt node name?)", path=f"{epath}.between")


def check_stage(stage):
    """Checks that need the whole stage (its load): run by the loader, before any analysis.

    Common netlist practice: every node needs a DC path (resistors, inductors)
    to ground or the driven input, else the DC solution is undefined; and no
    loop may consist of inductors only, else the loop's DC current is.
    """
    o, spath = stage.options, stage.path
    dc = _Groups()
    dc.join(o["input"], GROUND)            # the ideal source holds the input at DC
    if stage.load_r is not None:
        dc.join(o["output"], GROUND)
    for role, a, b, _ in o["elements"]:
        if stage.parts[role].kind in ("R", "L"):
            dc.join(a, b)
    for role, a, b, epath in o["elements"]:
        for n in (a, b):
            if dc.find(n) != dc.find(GROUND):
                raise ProjectError(f"node '{n}' has no DC path (through a resistor or an "
                                   "inductor) to ground or the input; its DC voltage is "
                                   "undefined", path=f"{epath}.between")
    loops = _Groups()
    for role, a, b, epath in o["elements"]:
        if stage.parts[role].kind == "L":
            if loops.find(a) == loops.find(b):
                raise ProjectError(f"inductor '{role}' closes a loop of inductors only; "
                                   "the current around it is undefined at DC",
                                   path=f"{epath}.part")
            loops.join(a, b)


class _Groups:
    """Union-find over node names."""

    def __init__(self):
        self.up: dict[str, str] = {}

    def find(self, n: str) -> str:
        while self.up.get(n, n) != n:
            n = self.up[n]
        return n

    def join(self, a: str, b: str) -> None:
        self.up[self.find(a)] = self.find(b)


def metrics(options, drive):
    extra = ("corner_low", "corner_high") if options.get("passband") == "band" else ()
    # f0, Q and peaking from the dominant complex pole pair (missing without one).
    return base.standard_metrics(drive, extra + base.SECOND_ORDER_METRICS)


def passband(stage) -> str:
    return stage.options.get("passband", PASSBAND)


def build(stage):
    o = stage.options
    # The user's node names as given: no renaming a user's node could collide with.
    els = [Element(role, stage.parts[role].kind, a, b) for role, a, b, _ in o["elements"]]
    return base.wrap(stage, els, input=o["input"], output=o["output"],
                     path=_series_path(stage))


def _series_path(stage):
    """Elements from the input to the output along single series branches, if any."""
    o = stage.options
    node, seen, path = o["input"], set(), []
    while node != o["output"]:
        nxt = [(r, b if a == node else a) for r, a, b, _ in o["elements"]
               if node in (a, b) and GROUND not in (a, b) and r not in seen]
        if len(nxt) != 1:
            return ()
        role, node = nxt[0]
        seen.add(role)
        path.append(role)
    return tuple(path)


def characteristic_hz(stage):
    return None   # found from the network's poles by the analysis


def schematic(stage):
    o = stage.options
    els = [(stage.parts[role].kind, base.label(stage.parts[role]), a, b)
           for role, a, b, _ in o["elements"]]
    return sch.netlist(els, input=o["input"], output=o["output"],
                       source=base.source_labels(stage), load=base.load_labels(stage))
