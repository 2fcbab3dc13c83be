"""Schematics of the stages: backend-neutral drawing recipes and one SVG adapter.

A stage's schematic is data first: the builders here (`ladder`, `sallen_key`,
`mfb`, `netlist`, `switch_snubber`, `inductive_snubber`,
`debounce`) return a `Recipe`, a
frozen list of drawing steps in the manner of a pen plotter (place a part,
run a wire, go back to a named point). Tests read recipes; only `render_svg`
knows schemdraw and turns a recipe into SVG text. This module formats no
values (labels arrive as text), computes no circuit behaviour and reads no
project files.
"""

from __future__ import annotations

import re
from collections.abc import Sequence
from dataclasses import dataclass

# Kinds of drawing step. Parts: R, C, L (inductor, humps), coil (an inductive
# load: inductor with a core line), source (variant "sine" or "dc"), opamp,
# switch. Marks: ground, dot, terminal (open circle with text), text, box
# (dashed frame around named steps), wire, and point (an invisible move that
# only names a place to return to).
ELEMENTS = ("R", "C", "L", "coil", "source", "opamp", "switch",
            "ground", "dot", "terminal", "text", "box", "wire", "point")
PART_ELEMENTS = ("R", "C", "L", "coil")
DIRECTIONS = ("right", "left", "up", "down")
SIDES = ("", "above", "below", "left", "right", "above-left", "above-right")
ROUTES = ("", "-", "-|", "|-", "x", "y")
OPAMP_PINS = ("plus", "minus", "out")

# Drawing units (schemdraw's resistor body is one unit long). Chosen so a
# two-line label fits beside a shunt part before the next part starts, and a
# three-section ladder with source and load stays about 16 cm wide.
UNIT = 2.0       # length of a part with its leads
SHUNT = 2.5      # height of a shunt branch, top rail to bottom rail
LEAD = 0.5       # short connecting wire
SLOT = 2.25      # pitch of neighbouring shunt branches (part + its label)
FONT_PT = 13     # label size as drawn; shown at FONT_PT * DISPLAY_SCALE
SMALL_PT = 10    # secondary text (names of inner nodes), 6.5 pt at natural size
# schemdraw sizes text boxes assuming half an inch per unit, so the drawing
# keeps that scale and the SVG's stated size is shrunk instead: one unit
# becomes 0.65 * 36 pt = 8.3 mm and labels 8.5 pt at natural size.
INCHES_PER_UNIT = 0.5
DISPLAY_SCALE = 0.65
# Builders space parts by the width of their labels. Width of one character
# at FONT_PT in drawing units, DejaVu Sans, erring wide (digits and "Ω" are
# about 0.21, "m" and "W" 0.35).
CHAR_UNITS = 0.23
LABEL_CLEAR = 0.45   # from a vertical part's axis to its text (see _CLEARANCE)
AIR = 0.35           # least gap between a text and the next line or text


@dataclass(frozen=True)
class Label:
    """A part's designator and its value, already formatted ("R14", "4.7 kΩ")."""

    ref: str
    value: str

    def lines(self) -> tuple[str, ...]:
        return tuple(line for line in (self.ref, self.value) if line)


@dataclass(frozen=True)
class Step:
    """One drawing step.

    element: one of ELEMENTS. The step starts at the named point `start`, or
    where the previous step ended. Every step has a unique `name`; it names
    the step's end point, and two-terminal parts also define `name.start`
    and `name.center`; an op-amp defines `name.plus`, `name.minus`,
    `name.out` (its end is the output).

    direction, length: where a part or a free wire runs (length 0: UNIT).
    end, route: a wire that runs to the named point `end`: "-" straight,
    "-|" first across then up or down, "|-" the other way round, "x" across
    until level with `end`, "y" up or down until level with it.
    label: part designator and value; text: a further line (terminal name,
    source name, box caption, op-amp name). side: where the text sits;
    "above-left" and "above-right" run the text from above the point towards
    that side.
    dashed: drawn dashed (parasitic parts, frames). variant: "sine"/"dc" for
    a source, "plus-top" for an op-amp drawn with + above, "small" for a
    text drawn small and grey just right of its point (an inner node's name). pin: the op-amp
    input placed at the start point. members: steps a box surrounds.
    """

    element: str
    name: str
    direction: str = "right"
    length: float = 0.0
    label: Label | None = None
    text: str = ""
    start: str = ""
    end: str = ""
    route: str = ""
    side: str = ""
    dashed: bool = False
    variant: str = ""
    pin: str = ""
    members: tuple[str, ...] = ()

    def lines(self) -> tuple[str, ...]:
        """The text drawn beside the step, top line first."""
        label = self.label.lines() if self.label is not None else ()
        return label + ((self.text,) if self.text else ())


@dataclass(frozen=True)
class Recipe:
    """A schematic as an ordered, checked tuple of steps."""

    steps: tuple[Step, ...]

    def __post_init__(self) -> None:
        known: set[str] = {"origin"}
        for index, step in enumerate(self.steps):
            where = f"step {index} ({step.element} {step.name!r})"
            if step.element not in ELEMENTS:
                raise ValueError(f"{where}: unknown element")
            if step.direction not in DIRECTIONS or step.side not in SIDES:
                raise ValueError(f"{where}: bad direction or side")
            if step.route not in ROUTES or step.length < 0:
                raise ValueError(f"{where}: bad route or length")
            if step.element == "opamp" and step.pin not in OPAMP_PINS:
                raise ValueError(f"{where}: op-amp needs pin in {OPAMP_PINS}")
            if not step.name or step.name in known:
                raise ValueError(f"{where}: names must be unique and non-empty")
            for ref in (step.start, step.end, *step.members):
                if ref and ref not in known:
                    raise ValueError(f"{where}: refers to {ref!r} before it exists")
            if step.element == "wire" and bool(step.end) != bool(step.route):
                raise ValueError(f"{where}: a wire to a point needs a route")
            known.add(step.name)
            if step.element == "opamp":
                known.update(f"{step.name}.{pin}" for pin in OPAMP_PINS)
            elif step.element in PART_ELEMENTS + ("source", "switch"):
                known.update((f"{step.name}.start", f"{step.name}.center"))

    def parts(self) -> tuple[Label, ...]:
        """Labels of the passive parts in drawing order."""
        return tuple(s.label for s in self.steps
                     if s.element in PART_ELEMENTS and s.label is not None)

    def elements(self) -> tuple[str, ...]:
        return tuple(s.element for s in self.steps)

    def texts(self) -> tuple[str, ...]:
        """Every line of text the drawing shows, in drawing order."""
        return tuple(line for s in self.steps for line in s.lines())

    def start_of(self, name: str) -> str:
        """The point where step `name` begins: its `start`, else the end of
        the step before it, else the origin."""
        for before, step in zip((None, *self.steps), self.steps):
            if step.name == name:
                return step.start or (before.name if before else "origin")
        raise KeyError(name)

    def step(self, name: str) -> Step:
        for s in self.steps:
            if s.name == name:
                return s
        raise KeyError(name)


class _Pen:
    """Collects steps and hands out unique names."""

    def __init__(self) -> None:
        self.steps: list[Step] = []
        self._used: dict[str, int] = {}

    def __call__(self, element: str, *, name: str = "", **fields) -> str:
        if not name:
            count = self._used.get(element, 0) + 1
            self._used[element] = count
            name = f"{element.lower()}{count}"
        self.steps.append(Step(element, name, **fields))
        return name

    def recipe(self) -> Recipe:
        return Recipe(tuple(self.steps))


def _text_units(lines: Sequence[str]) -> float:
    """Estimated width of a block of text, in drawing units."""
    return CHAR_UNITS * max((len(line) for line in lines), default=0)


def _room_right(label: Label, text: str = "") -> float:
    """How far right of a vertical part the next vertical line may start."""
    return LABEL_CLEAR + _text_units(label.lines() + ((text,) if text else ())) + AIR


def _check_kind(kind: str, where: str) -> str:
    if kind not in ("R", "C", "L"):
        raise ValueError(f"{where}: part kind must be R, C or L, not {kind!r}")
    return kind


# --- shared front and back ends ------------------------------------------------

def _front(pen: _Pen, source: Sequence[tuple[str, Label]], input_label: str,
           text: str = "Vs", height: float = SHUNT) -> str:
    """Source symbol rising from ground, its series impedance, the input terminal.

    Returns the name of the input terminal.
    """
    pen("ground", name="gnd_source", start="origin")
    pen("source", name="vs", start="origin", direction="up", length=height,
        variant="sine", text=text, side="left")
    # Without an impedance the input node sits clear of the source circle,
    # since a shunt part may hang from it.
    pen("wire", direction="right", length=LEAD if source else 3 * LEAD)
    impedance = [pen(_check_kind(kind, "source"), name=f"src_{i + 1}",
                     direction="right", label=label)
                 for i, (kind, label) in enumerate(source)]
    if impedance:
        pen("box", name="source_box", members=tuple(impedance), text="source",
            side="below", dashed=True)
        pen("wire", start=impedance[-1], direction="right", length=2 * LEAD)
    return pen("terminal", name="in", text=input_label, side="above-left")


def _back(pen: _Pen, at: str, load: Sequence[tuple[str, Label]],
          output_label: str, lead: float,
          height: float = SHUNT) -> tuple[str, list[str]]:
    """Output terminal after a wire of `lead`, then the load's shunt parts.

    Returns the output terminal's name and the names of the load parts
    (their ends lie `height` below the output).
    """
    pen("wire", start=at, direction="right", length=lead)
    out = pen("terminal", name="out", text=output_label, side="above-right")
    parts: list[str] = []
    for i, (kind, label) in enumerate(load):
        pitch = max(SLOT, _room_right(load[i - 1][1])) if i else LOAD_LEAD
        pen("wire", name=f"load_wire_{i + 1}", start=f"load_wire_{i}" if i else out,
            direction="right", length=pitch)
        if i < len(load) - 1:
            pen("dot")
        parts.append(pen(_check_kind(kind, "load"), name=f"load_{i + 1}",
                         direction="down", length=height, label=label,
                         side="right", start=f"load_wire_{i + 1}"))
    if parts:
        pen("box", name="load_box", members=tuple(parts), text="load",
            side="above", dashed=True)
    return out, parts


LOAD_LEAD = 1.25   # from the output terminal to the first load part


# --- passive ladder ------------------------------------------------------------

def _legs(sections: Sequence[tuple]) -> list[int]:
    """For each section, how many parts the shunt leg it belongs to has
    (0 for series parts); checks positions and kinds."""
    sizes: list[int] = []
    for i, section in enumerate(sections):
        position, kind = section[0], section[1]
        _check_kind(kind, f"section {i}")
        if position == "series":
            sizes.append(0)
        elif position == "shunt":
            sizes.append(1)
        elif position == "stack":
            if not sizes or not sizes[-1]:
                raise ValueError(f"section {i}: a stacked part must follow a shunt part")
            leg_start = len(sizes) - sizes[-1]
            sizes[leg_start:] = [sizes[-1] + 1] * (sizes[-1] + 1)
        else:
            raise ValueError(f"section {i}: position must be series, shunt or stack")
        if len(section) != (4 if position == "stack" else 3):
            raise ValueError(f"section {i}: (position, kind, label) or "
                             "('stack', kind, label, node name)")
    return sizes


def _small_units(text: str) -> float:
    return CHAR_UNITS * SMALL_PT / FONT_PT * len(text)


NODE_CLEAR = 0.2   # from a vertical wire to the name of the node on it


def ladder(sections: Sequence[tuple], *,
           source: Sequence[tuple[str, Label]] = (),
           load: Sequence[tuple[str, Label]] = (),
           input_label: str = "IN", output_label: str = "OUT") -> Recipe:
    """A series/shunt ladder between a driven input and a loaded output.

    sections: left to right, (position, kind, label) with position "series"
    or "shunt" and kind "R", "C" or "L"; or ("stack", kind, label, node):
    a part in series below the shunt (or stacked) part before it, `node`
    naming the inner node between the two (drawn small; "" for none).
    Shunt legs hang from the top rail to a common bottom rail that is
    grounded below the source; a leg of n parts gives each part 1/n of the
    rail depth, and the rail lies deep enough for a part of UNIT per step.
    """
    pen = _Pen()
    sizes = _legs(sections)
    depth = max([SHUNT] + [n * UNIT for n in sizes])
    here = _front(pen, source, input_label, height=depth)
    bottoms: list[str] = []
    last = "terminal"
    room = 0.0            # the last shunt's labels need this much to its right
    series_text = None    # width of the last series part's label
    for i, (section, size) in enumerate(zip(sections, sizes)):
        position, kind, label = section[:3]
        if position == "series":
            # Stretch the section when labels would otherwise touch.
            width = _text_units(label.lines())
            need = room
            if series_text is not None:
                need = max(need, (series_text + width) / 2 + AIR)
            if need > UNIT:
                here = pen("wire", start=here, direction="right", length=need - UNIT)
            here = pen(kind, name=f"series_{i + 1}", start=here,
                       direction="right", label=label)
            series_text, room, last = width, 0.0, "series"
        elif position == "shunt":
            if last == "shunt":
                here = pen("wire", start=here, direction="right",
                           length=max(SLOT, room))
            if last != "terminal":
                pen("dot", start=here)
            bottoms.append(pen(kind, name=f"shunt_{i + 1}", start=here,
                               direction="down", length=depth / size, label=label,
                               side="right"))
            room, last = _room_right(label), "shunt"
        else:
            # A stacked part continues the leg down from the part above it;
            # its inner node is named on the right, between the two labels.
            above = bottoms[-1]
            node = section[3]
            if node:
                pen("text", name=f"node_{i + 1}", start=above, text=node,
                    side="right", variant="small")
                room = max(room, NODE_CLEAR + _small_units(node) + AIR)
            bottoms[-1] = pen(kind, name=f"stack_{i + 1}", start=above,
                              direction="down", length=depth / size, label=label,
                              side="right")
            room = max(room, _room_right(label))
    lead = {"shunt": max(SLOT, room - LOAD_LEAD + 0.2), "series": LEAD,
            "terminal": UNIT}[last]
    _out, load_parts = _back(pen, here, load, output_label, lead, depth)
    bottoms += load_parts
    # One return rail along the bottom; junction dots where branches meet it.
    if bottoms:
        pen("wire", name="rail", start="origin", end=bottoms[-1], route="x")
    for bottom in bottoms[:-1]:
        pen("dot", start=bottom)
    return pen.recipe()


# --- active second-order low-passes --------------------------------------------

LOOP_RISE = 2.25   # height of a feedback loop above the signal line
OPAMP_GAP = 3.0    # wire from the last input node to the op-amp (room for labels)


def _grounded_load(pen: _Pen, at: str, load: Sequence[tuple[str, Label]]) -> None:
    """Output terminal and load for circuits without a bottom rail."""
    _out, parts = _back(pen, at, load, "OUT", 1.0)
    for part in parts:
        pen("ground", start=part)


def sallen_key(r1: Label, r2: Label, c1: Label, c2: Label, *,
               rf: Label | None = None, rg: Label | None = None,
               source: Sequence[tuple[str, Label]] = (),
               load: Sequence[tuple[str, Label]] = (),
               opamp_label: str = "") -> Recipe:
    """Sallen-Key low-pass: r1 in->A, r2 A->B (+), c1 A->out, c2 B->ground.

    Without rf and rg the op-amp is a follower; rf runs from the output to
    the - input and rg from the - input to ground.
    """
    pen = _Pen()
    here = _front(pen, source, "IN")
    pen("R", name="r1", start=here, label=r1)
    pen("wire", start="r1", direction="right", length=LEAD)
    pen("dot", name="node_a", text="A", side="below")
    pen("R", name="r2", start="node_a", label=r2)
    pen("dot", name="node_b", text="B", side="left")
    pen("wire", start="r2", direction="right", length=OPAMP_GAP)
    pen("opamp", name="op", pin="plus", variant="plus-top", text=opamp_label)
    pen("C", name="c2", start="r2", direction="down", length=SHUNT, label=c2,
        side="right")
    pen("ground", start="c2")
    pen("wire", start="op.out", direction="right", length=1.0)
    pen("dot", name="node_out")
    # c1 returns the output to node A over the top of the op-amp.
    pen("wire", start="node_a", direction="up", length=LOOP_RISE)
    pen("wire", direction="right", length=1.0)
    pen("C", name="c1", label=c1)
    pen("wire", start="c1", end="node_out", route="-|")
    # The - input: follower wire, or the rf/rg divider.
    pen("wire", start="op.minus", direction="left", length=0.5)
    pen("wire", name="fb_node", direction="down", length=1.25)
    if rf is not None:
        pen("R", name="rf", start="fb_node", label=rf, side="below")
        pen("wire", start="rf", end="node_out", route="-|")
    else:
        pen("wire", start="fb_node", end="node_out", route="-|")
    if rg is not None:
        pen("dot", start="fb_node")
        pen("R", name="rg", start="fb_node", direction="down", length=SHUNT,
            label=rg, side="left")
        pen("ground", start="rg")
    _grounded_load(pen, "node_out", load)
    return pen.recipe()


def mfb(r1: Label, r2: Label, r3: Label, c1: Label, c2: Label, *,
        source: Sequence[tuple[str, Label]] = (),
        load: Sequence[tuple[str, Label]] = (),
        opamp_label: str = "") -> Recipe:
    """Multiple-feedback low-pass: r1 in->A, c1 A->ground, r2 A->out,
    r3 A->(-), c2 (-)->out, + input grounded."""
    pen = _Pen()
    here = _front(pen, source, "IN")
    pen("R", name="r1", start=here, label=r1)
    pen("wire", start="r1", direction="right", length=LEAD)
    pen("dot", name="node_a", text="A", side="left")
    pen("C", name="c1", start="node_a", direction="down", length=SHUNT, label=c1,
        side="right")
    pen("ground", start="c1")
    pen("wire", start="node_a", direction="right", length=LEAD)
    pen("R", name="r3", label=r3)
    pen("wire", start="r3", direction="right", length=LEAD)
    pen("dot", name="node_m")
    pen("wire", start="node_m", direction="right", length=1.0)
    pen("opamp", name="op", pin="minus", text=opamp_label)
    pen("wire", start="op.plus", direction="down", length=0.75)
    pen("ground")
    pen("wire", start="op.out", direction="right", length=1.0)
    pen("dot", name="node_out")
    # Inner loop c2 from the - input, outer loop r2 from node A; both land
    # on one wire down to the output.
    pen("wire", start="node_m", direction="up", length=LOOP_RISE)
    pen("wire", direction="right", length=1.0)
    pen("C", name="c2", label=c2)
    pen("wire", name="loop_corner", start="c2", end="node_out", route="x")
    pen("wire", end="node_out", route="y")
    pen("dot", start="loop_corner")
    pen("wire", start="node_a", direction="up", length=2 * LOOP_RISE)
    pen("wire", direction="right", length=2.0)
    pen("R", name="r2", label=r2)
    pen("wire", start="r2", end="loop_corner", route="-|")
    _grounded_load(pen, "node_out", load)
    return pen.recipe()


# --- snubbers -------------------------------------------------------------------

SNUB_H = 4.0   # height of the switch and snubber branches


def _snubber_branch(pen: _Pen, top: str, r: Label | None, c: Label | None,
                    pitch: float) -> str | None:
    """Series RC `pitch` right of `top`, down to the rail; returns its bottom."""
    parts = [(kind, label) for kind, label in (("R", r), ("C", c)) if label is not None]
    if not parts:
        return None
    pen("wire", name="snubber_top", start=top, direction="right", length=pitch)
    bottom = "snubber_top"
    for kind, label in parts:
        bottom = pen(kind, name=f"snubber_{kind.lower()}", start=bottom,
                     direction="down", length=SNUB_H / len(parts), label=label,
                     side="right")
    return bottom


def _rail(pen: _Pen, bottoms: Sequence[str]) -> None:
    """Bottom return wire from the supply to the last branch, with junction dots."""
    pen("wire", name="rail", start="origin", end=bottoms[-1], route="x")
    for bottom in bottoms[:-1]:
        pen("dot", start=bottom)


def switch_snubber(*, snubber_r: Label | None, snubber_c: Label | None,
                   parasitic_l: Label, parasitic_c: Label,
                   voltage_label: str) -> Recipe:
    """A switching node: DC supply, loop inductance, switch to ground, the
    node's parasitic capacitance (dashed) and the RC snubber across the switch."""
    pen = _Pen()
    pen("ground", name="gnd_supply", start="origin")
    pen("source", name="supply", start="origin", direction="up", length=SNUB_H,
        variant="dc", text=voltage_label, side="left")
    pen("wire", direction="right", length=LEAD)
    pen("L", name="lp", label=parasitic_l, text="loop")
    pen("wire", direction="right", length=1.25)
    pen("dot", name="node_sw", text="switch node", side="above")
    pen("switch", name="switch", start="node_sw", direction="down",
        length=SNUB_H, text="switch", side="left")
    pen("wire", name="cp_top", start="node_sw", direction="right", length=SLOT)
    pen("C", name="cp", start="cp_top", direction="down", length=SNUB_H,
        label=parasitic_c, text="parasitic", dashed=True, side="right")
    bottoms = ["switch", "cp"]
    snubber = _snubber_branch(pen, "cp_top", snubber_r, snubber_c,
                              max(SLOT, _room_right(parasitic_c, "parasitic")))
    if snubber is not None:
        pen("dot", start="cp_top")
        bottoms.append(snubber)
    _rail(pen, bottoms)
    return pen.recipe()


def inductive_snubber(*, snubber_r: Label | None, snubber_c: Label | None,
                      coil_l: Label, coil_r: Label, voltage_label: str,
                      ac: bool) -> Recipe:
    """A contact opening an inductive load (series L and R), RC snubber across it."""
    pen = _Pen()
    if not ac:
        pen("ground", name="gnd_supply", start="origin")
    pen("source", name="supply", start="origin", direction="up", length=SNUB_H,
        variant="sine" if ac else "dc", text=voltage_label, side="left")
    pen("wire", direction="right", length=LEAD)
    pen("coil", name="coil_l", label=coil_l)
    pen("R", name="coil_r", label=coil_r)
    pen("box", name="coil_box", members=("coil_l", "coil_r"), text="coil",
        side="below", dashed=True)
    pen("wire", name="contact_top", start="coil_r", direction="right", length=LEAD)
    pen("switch", name="contact", direction="down", length=SNUB_H,
        text="contact", side="left")
    bottoms = ["contact"]
    snubber = _snubber_branch(pen, "contact_top", snubber_r, snubber_c, SLOT)
    if snubber is not None:
        pen("dot", start="contact_top")
        bottoms.append(snubber)
    _rail(pen, bottoms)
    return pen.recipe()


# --- logic inputs ----------------------------------------------------------------


def debounce(*, r_pull: Label, r: Label, c: Label, supply_label: str, pull: str) -> Recipe:
    """A contact read by a logic input: pull resistor and contact at the contact
    node (pull-up: r_pull from the supply, the contact to ground; pull-down: the
    contact from the supply, r_pull to ground), r to the input, c to ground."""
    pen = _Pen()
    pen("ground", name="gnd_supply", start="origin")
    pen("source", name="supply", start="origin", direction="up", length=SNUB_H,
        variant="dc", text=supply_label, side="left")
    pen("wire", direction="right", length=LEAD)
    if pull == "up":
        pen("R", name="r_pull", label=r_pull, text="pull-up")
    else:
        pen("switch", name="contact", text="contact", side="above")
    pen("wire", direction="right", length=LEAD)
    pen("dot", name="node")
    if pull == "up":
        pen("switch", name="contact", start="node", direction="down", length=SNUB_H,
            text="contact", side="left")
        leg = "contact"
    else:
        pen("R", name="r_pull", start="node", direction="down", length=SNUB_H,
            label=r_pull, text="pull-down", side="left")
        leg = "r_pull"
    pen("R", name="r", start="node", direction="right", label=r)
    pen("wire", direction="right", length=LEAD)
    pen("dot", name="input_node")
    pen("C", name="c", start="input_node", direction="down", length=SNUB_H, label=c,
        side="right")
    pen("wire", name="to_pin", start="input_node", direction="right",
        length=max(SLOT, _room_right(c)))
    pen("terminal", name="pin", text="logic input", side="above")
    _rail(pen, [leg, "c"])
    return pen.recipe()


# --- arbitrary networks ----------------------------------------------------------

GROUND = "0"
ROW = 2.0        # pitch of element rows in the node grid


def _shunt_legs(elements: Sequence[tuple[str, Label, str, str]], input: str,
                output: str) -> list[tuple[str, list[int], list[str]]] | None:
    """The branches to ground: (top node, element indices top to bottom,
    inner nodes top to bottom), in the order of their first element.

    A leg climbs from an element on ground through nodes that touch exactly
    two elements and are neither input nor output; the node where it stops
    is its top. None when a climb comes back to ground (a loop hanging from
    ground alone is no ladder).
    """
    touching: dict[str, list[int]] = {}
    for i, (_k, _l, a, b) in enumerate(elements):
        for node in {a, b}:
            touching.setdefault(node, []).append(i)
    legs = []
    for i, (_k, _l, a, b) in enumerate(elements):
        if GROUND not in (a, b):
            continue
        chain, inner = [i], []
        node = b if a == GROUND else a
        while node not in (input, output) and len(touching[node]) == 2:
            nxt = next(j for j in touching[node] if j != chain[-1])
            _k2, _l2, a2, b2 = elements[nxt]
            if GROUND in (a2, b2):
                return None
            chain.append(nxt)
            inner.append(node)
            node = b2 if a2 == node else a2
        legs.append((node, chain[::-1], inner[::-1]))
    legs.sort(key=lambda leg: min(leg[1]))
    return legs


def _ladder_sections(elements: Sequence[tuple[str, Label, str, str]],
                     input: str, output: str) -> list[tuple] | None:
    """The network as ladder sections, or None when it is not a ladder.

    A ladder is one chain of elements from input to output that visits each
    node once, with every other element in a shunt leg: a single element
    from a chain node to ground, or several in series from a chain node to
    ground whose inner nodes connect to nothing else (an RC damping leg).
    Elements in series along the chain are simply consecutive steps.
    """
    if GROUND in (input, output) or any(a == b for _k, _l, a, b in elements):
        return None
    legs = _shunt_legs(elements, input, output)
    if legs is None:
        return None
    in_legs = {i for _top, chain, _inner in legs for i in chain}
    series = [e for i, e in enumerate(elements) if i not in in_legs]
    path = [input]
    used: list[int] = []
    while path[-1] != output:
        touching = [i for i, e in enumerate(series)
                    if i not in used and path[-1] in (e[2], e[3])]
        if len(touching) != 1:
            return None
        used.append(touching[0])
        _k, _l, a, b = series[touching[0]]
        nxt = b if a == path[-1] else a
        if nxt in path:
            return None
        path.append(nxt)
    if len(used) != len(series):
        return None
    legs_at: dict[str, list[tuple[list[int], list[str]]]] = {node: [] for node in path}
    for top, chain, inner in legs:
        if top not in legs_at:
            return None
        legs_at[top].append((chain, inner))
    sections: list[tuple] = []
    for k, node in enumerate(path):
        for chain, inner in legs_at[node]:
            kind, label, _a, _b = elements[chain[0]]
            sections.append(("shunt", kind, label))
            for j, above in zip(chain[1:], inner):
                kind, label, _a, _b = elements[j]
                sections.append(("stack", kind, label, above))
        if k < len(used):
            kind, label, _a, _b = series[used[k]]
            sections.append(("series", kind, label))
    return sections


def _goto(pen: _Pen, name: str, x: float, y: float) -> str:
    """Name the point (x, y) measured from the origin."""
    pen("point", name=f"{name}~x", start="origin",
        direction="right" if x >= 0 else "left", length=abs(x))
    return pen("point", name=name, direction="up" if y >= 0 else "down",
               length=abs(y))


def _node_order(elements: Sequence[tuple[str, Label, str, str]],
                input: str, output: str) -> list[str]:
    """Columns: input first, then breadth-first from it, output last."""
    order = [input]
    for node in order:
        for _k, _l, a, b in elements:
            for here, there in ((a, b), (b, a)):
                if here == node != GROUND and there not in order \
                        and there not in (GROUND, output):
                    order.append(there)
    for _k, _l, a, b in elements:
        for node in (a, b):
            if node not in order and node not in (GROUND, output):
                order.append(node)
    if output != input:
        order.append(output)
    return order


def _node_text(node: str, terminal: str) -> str:
    if not terminal or node.upper() == terminal:
        return terminal or node
    return f"{terminal} ({node})"


GRID_GAP = UNIT + 1.0   # least distance between node buses: a part and two leads


def _hang_offsets(labels: Sequence[Label]) -> list[float]:
    """Distances from a bus to the parts hanging side by side from it."""
    offsets = [0.0]
    for label in labels[:-1]:
        offsets.append(offsets[-1] + max(SLOT, _room_right(label)))
    return offsets[:len(labels)]


def _grid(elements: Sequence[tuple[str, Label, str, str]], input: str,
          output: str, source: Sequence[tuple[str, Label]],
          load: Sequence[tuple[str, Label]]) -> Recipe:
    """Any network: each node a vertical bus, each element in its own row."""
    pen = _Pen()
    columns = _node_order(elements, input, output)
    col = {node: i for i, node in enumerate(columns)}
    rows: list[tuple[int, str, Label, str, str]] = []
    hanging: dict[str, list[tuple[str, Label, str]]] = {n: [] for n in columns}
    grounded: list[tuple[str, Label]] = []
    for i, (kind, label, a, b) in enumerate(elements):
        _check_kind(kind, f"element {i}")
        if a == GROUND and b == GROUND:
            grounded.append((kind, label))
        elif GROUND in (a, b):
            hanging[b if a == GROUND else a].append((kind, label, f"e{i + 1}"))
        else:
            rows.append((i, kind, label, a, b))
    hanging[output] += [(kind, label, f"load_{i + 1}")
                        for i, (kind, label) in enumerate(load)]
    # Parts to ground hang side by side, each clear of its left neighbour's
    # label; a column's gap fits them and the labels of the row parts drawn
    # in it, and no more, so the grid keeps the ladders' scale.
    offsets = {node: _hang_offsets([label for _k, label, _n in hanging[node]])
               for node in columns}
    gaps = []
    for c, node in enumerate(columns):
        need = [GRID_GAP]
        if hanging[node]:
            need.append(offsets[node][-1] + _room_right(hanging[node][-1][1]))
        need += [_text_units(label.lines()) + 2 * AIR for _i, _k, label, a, b in rows
                 if min(col[a], col[b]) == c]
        gaps.append(max(need))
    xs = [sum(gaps[:i]) for i in range(len(columns))]
    # Long spans go on top, so that buses of the nodes they pass over start
    # below them and the wires cross fewer buses.
    rows.sort(key=lambda row: (-abs(col[row[3]] - col[row[4]]), row[0]))
    row_y = [-(r + 1) * ROW for r in range(len(rows))]
    hang_y = -(len(rows) + 1) * ROW + (0.5 if not rows else 0.0)
    # Where connections meet each bus; a bus runs between the outermost.
    meets: dict[str, list[float]] = {node: [] for node in columns}
    for (_i, _k, _l, a, b), y in zip(rows, row_y):
        meets[a].append(y)
        meets[b].append(y - 0.8 if a == b else y)
    for node in columns:
        if hanging[node]:
            meets[node].append(hang_y)
        if node in (input, output):
            meets[node].append(0.0)
        if meets[node] == [0.0]:
            meets[node].append(-0.75)   # an unconnected terminal keeps a stub
    top = {node: max(meets[node]) for node in columns}
    bottom = {node: min(meets[node]) for node in columns}

    def junction(node: str, y: float) -> None:
        # Only a T needs a dot; bus ends are corners (or terminals).
        if bottom[node] < y < top[node]:
            pen("dot")

    # Buses with their node names; input and output as terminals on top.
    for node in columns:
        head = _goto(pen, f"bus_{col[node]}", xs[col[node]], top[node])
        terminal = "IN" if node == input else "OUT" if node == output else ""
        if top[node] > bottom[node]:
            pen("wire", start=head, direction="down", length=top[node] - bottom[node])
        pen("terminal" if terminal else "text", start=head,
            text=_node_text(node, terminal),
            side={"IN": "above-left", "OUT": "above-right"}.get(terminal, "above-right"))
    _grid_source(pen, source)
    # Rows: the part sits in the gap right of its left-hand node.
    for (i, kind, label, a, b), y in zip(rows, row_y):
        left, right = sorted((col[a], col[b]))
        gap = gaps[left]
        _goto(pen, f"row_{i + 1}", xs[left], y)
        junction(columns[left], y)
        pen("wire", direction="right", length=(gap - UNIT) / 2)
        pen(kind, name=f"e{i + 1}", label=label)
        if a == b:
            pen("wire", direction="down", length=0.8)
            pen("wire", end=f"bus_{left}", route="x")
            junction(a, y - 0.8)
        else:
            pen("wire", direction="right", length=xs[right] - xs[left] - (gap + UNIT) / 2)
            junction(columns[right], y)
    # Parts to ground hang below the last row, side by side.
    load_names: list[str] = []
    for node in columns:
        for s, (kind, label, name) in enumerate(hanging[node]):
            at = _goto(pen, f"hang_{name}", xs[col[node]] + offsets[node][s], hang_y)
            if s:
                pen("wire", start=f"hang_{hanging[node][s - 1][2]}", end=at, route="-")
            if s < len(hanging[node]) - 1 and len(hanging[node]) > 1:
                pen("dot", start=at)
            pen(kind, name=name, start=at, direction="down", length=SHUNT,
                label=label, side="right")
            pen("ground", start=name)
            if name.startswith("load_"):
                load_names.append(name)
    if load_names:
        pen("box", name="load_box", members=tuple(load_names), text="load",
            side="above", dashed=True)
    # A part with both ends on ground, drawn between two ground symbols.
    for k, (kind, label) in enumerate(grounded):
        at = _goto(pen, f"shorted_{k + 1}", k * (UNIT + 1.5),
                   hang_y - SHUNT - 1.5 - ROW)
        pen("ground", start=at)
        pen(kind, name=f"shorted_part_{k + 1}", start=at, label=label)
        pen("ground")
    return pen.recipe()


def _grid_source(pen: _Pen, source: Sequence[tuple[str, Label]]) -> None:
    """Source with its impedance, left of the input bus and joining its top."""
    width = 2 * LEAD + UNIT * len(source) + 3 * LEAD
    at = _goto(pen, "source_foot", -width, -SHUNT)
    pen("ground", name="gnd_source", start=at)
    pen("source", name="vs", start=at, direction="up", length=SHUNT,
        variant="sine", text="Vs", side="left")
    pen("wire", direction="right", length=2 * LEAD)
    names = [pen(_check_kind(kind, "source"), name=f"src_{i + 1}", label=label)
             for i, (kind, label) in enumerate(source)]
    if names:
        pen("box", name="source_box", members=tuple(names), text="source",
            side="below", dashed=True)
    pen("wire", start=names[-1] if names else "", end="bus_0", route="-")


def netlist(elements: Sequence[tuple[str, Label, str, str]], *, input: str,
            output: str, source: Sequence[tuple[str, Label]] = (),
            load: Sequence[tuple[str, Label]] = ()) -> Recipe:
    """Any network of two-terminal parts; node "0" is ground.

    elements: (kind, label, node_a, node_b). A series/shunt ladder from
    input to output, shunt legs of several parts in series included, is
    drawn as `ladder`; anything else as a grid of node buses with one row
    per element.
    """
    sections = _ladder_sections(elements, input, output)
    if sections is not None:
        return ladder(sections, source=source, load=load)
    return _grid(elements, input, output, source, load)


# --- the schemdraw adapter -------------------------------------------------------

FRAME_COLOUR = "#555555"   # dashed frames and their captions stay secondary
LINE_PT = 1.4
# Half the height of each symbol across its axis, plus air: where its text starts.
_CLEARANCE = {"R": 0.45, "C": 0.45, "L": 0.45, "coil": 0.6, "source": 0.75,
              "switch": 0.7}


def _font_file() -> str:
    """The DejaVu Sans that ziafont ships: text outlines that do not depend on
    the fonts of the machine, so the same recipe gives the same bytes anywhere."""
    from importlib.resources import files
    return str(files("ziafont") / "fonts" / "DejaVuSans.ttf")


def render_svg(recipe: Recipe) -> str:
    """Draw a recipe with schemdraw's SVG backend; returns the SVG text.

    Text is drawn as outlines (svgconfig.text = "path"), SVG 1.1 for
    weasyprint. Same recipe, same bytes.
    """
    import schemdraw
    import schemdraw.elements as elm
    from schemdraw import svgconfig
    from schemdraw.util import Point

    schemdraw.use("svg")
    svgconfig.text = "path"
    svgconfig.svg2 = False
    font = _font_file()
    d = schemdraw.Drawing(canvas="svg", show=False)
    d.config(unit=UNIT, inches_per_unit=INCHES_PER_UNIT, fontsize=FONT_PT,
             font=font, lw=LINE_PT, margin=0.2)

    points: dict[str, Point] = {"origin": Point((0.0, 0.0))}
    drawn: dict[str, list] = {}
    here = points["origin"]
    step_of = {"right": Point((1, 0)), "left": Point((-1, 0)),
               "up": Point((0, 1)), "down": Point((0, -1))}

    def text_at(xy, lines, halign, valign, colour="black", size=FONT_PT):
        # ofst=(0, 0): the drawing's default label offset would shift text
        # diagonally away from where it is aimed.
        mark = elm.Label().at(xy).label("\n".join(lines), halign=halign,
                                        valign=valign, fontsize=size,
                                        color=colour, ofst=(0, 0))
        return d.add(mark)

    def beside_part(step: Step, centre: Point, clearance: float):
        lines = step.lines()
        if not lines:
            return []
        horizontal = step.direction in ("right", "left")
        side = step.side or ("above" if horizontal else "right")
        x, y = centre
        if side == "above":
            return [text_at((x, y + clearance), lines, "center", "bottom")]
        if side == "below":
            return [text_at((x, y - clearance), lines, "center", "top")]
        if side == "left":
            return [text_at((x - clearance, y), lines, "right", "center")]
        return [text_at((x + clearance, y), lines, "left", "center")]

    def beside_point(step: Step, xy: Point, clearance: float = 0.2):
        if not step.text:
            return []
        x, y = xy
        side = step.side or "above"
        place = {"above": ((x, y + clearance), "center", "bottom"),
                 "below": ((x, y - clearance), "center", "top"),
                 "above-left": ((x + 0.15, y + clearance), "right", "bottom"),
                 "above-right": ((x - 0.15, y + clearance), "left", "bottom"),
                 "left": ((x - 0.15, y - 0.15), "right", "top"),
                 "right": ((x + 0.15, y - 0.15), "left", "top")}[side]
        return [text_at(place[0], [step.text], place[1], place[2])]

    for step in recipe.steps:
        start = points[step.start] if step.start else here
        style = {"ls": "--"} if step.dashed else {}
        kind = step.element
        if kind in PART_ELEMENTS or kind in ("source", "switch"):
            if kind == "source":
                part = elm.SourceSin(**style) if step.variant == "sine" \
                    else elm.Battery(**style).reverse()
            else:
                part = {"R": lambda: elm.ResistorIEC(**style),
                        "C": lambda: elm.Capacitor(**style),
                        "L": lambda: elm.Inductor(**style),
                        "coil": lambda: elm.Inductor(core=1, **style),
                        "switch": lambda: elm.Switch(**style)}[kind]()
            getattr(part.at(start), step.direction)()
            if step.length:
                part.length(step.length)
            d.add(part)
            ends = part.absanchors
            points[f"{step.name}.start"] = Point(ends["start"])
            points[f"{step.name}.center"] = Point(ends["center"])
            here = Point(ends["end"])
            drawn[step.name] = [part, *beside_part(step, Point(ends["center"]),
                                                   _CLEARANCE[kind])]
        elif kind == "opamp":
            pin = {"plus": "in2", "minus": "in1", "out": "out"}[step.pin]
            amp = elm.Opamp(leads=True)
            if step.variant == "plus-top":
                amp.flip()
            d.add(amp.anchor(pin).at(start))
            ends = amp.absanchors
            for name, anchor in (("plus", "in2"), ("minus", "in1"), ("out", "out")):
                points[f"{step.name}.{name}"] = Point(ends[anchor])
            here = Point(ends["out"])
            drawn[step.name] = [amp]
            if step.text:
                top = max(ends["in1"][1], ends["in2"][1]) + 0.625
                drawn[step.name].append(text_at(
                    (ends["in1"][0] + 0.75, top + 0.15), [step.text], "left", "bottom"))
        elif kind == "wire":
            if step.end:
                goal = points[step.end]
                if step.route == "x":
                    goal = Point((goal[0], start[1]))
                elif step.route == "y":
                    goal = Point((start[0], goal[1]))
                shape = step.route if step.route in ("-|", "|-") else "-"
                line = elm.Wire(shape, **style).at(start).to(goal)
            else:
                goal = start + step_of[step.direction] * (step.length or UNIT)
                line = elm.Line(**style).at(start).to(goal)
            d.add(line)
            here = goal
            drawn[step.name] = [line]
        elif kind == "point":
            here = start + step_of[step.direction] * step.length
            drawn[step.name] = []
        elif kind in ("dot", "terminal"):
            mark = d.add(elm.Dot(open=kind == "terminal", radius=0.09).at(start))
            here = start
            drawn[step.name] = [mark, *beside_point(step, start, 0.3)]
        elif kind == "ground":
            drawn[step.name] = [d.add(elm.Ground().at(start))]
            here = start
        elif kind == "text":
            if step.variant == "small":
                # A node's name: small, grey, level with the node, so that
                # it reads as secondary to the part labels around it.
                drawn[step.name] = [text_at(start + Point((NODE_CLEAR, 0)), [step.text],
                                            "left", "center", FRAME_COLOUR, SMALL_PT)]
            else:
                drawn[step.name] = beside_point(step, start, 0.2)
            here = start
        elif kind == "box":
            members = [e for name in step.members for e in drawn[name]]
            frame = d.add(elm.EncircleBox(members, padx=0.2, pady=0.15,
                                          cornerradius=0.1, includelabels=True)
                          .linestyle("--").color(FRAME_COLOUR).linewidth(1.0))
            frame_ends = frame.absanchors
            if step.side == "below":
                caption = text_at(Point(frame_ends["S"]) + Point((0, -0.15)),
                                  [step.text], "center", "top", FRAME_COLOUR)
            else:
                caption = text_at(Point(frame_ends["N"]) + Point((0, 0.15)),
                                  [step.text], "center", "bottom", FRAME_COLOUR)
            drawn[step.name] = [frame, caption]
        points[step.name] = here
    return _scaled(d.get_imagedata("svg").decode("utf-8"))


def _scaled(svg: str) -> str:
    """Shrink the stated width and height of the root element (not the viewBox)."""
    def shrink(match: re.Match) -> str:
        return f'{match.group(1)}="{float(match.group(2)) * DISPLAY_SCALE:.2f}pt"'

    head, sep, body = svg.partition(">")
    head = re.sub(r'\b(width|height)="([0-9.]+)pt"', shrink, head)
    return head + sep + body


def sampled_input(*, r: Label, c: Label, pin_c: Label | None, switch_r: Label,
                  sampling_c: Label, source: Sequence[tuple[str, Label]] = ()) -> Recipe:
    """RC in front of a converter pin: series R, C to ground at the pin, the pin
    capacitance (dashed), then the converter's switch, its on-resistance and the
    sampling capacitor, framed as the converter."""
    pen = _Pen()
    _front(pen, source, "in")
    pen("wire", direction="right", length=LEAD)
    pen("R", name="r", direction="right", label=r)
    pen("dot", name="pin", text="pin", side="above")
    pen("C", name="c", start="pin", direction="down", length=SHUNT, label=c, side="right")
    pen("ground", start="c")
    last, pitch = "pin", max(SLOT, _room_right(c))
    if pin_c is not None:
        pen("wire", name="pin_c_top", start="pin", direction="right", length=pitch)
        pen("C", name="pin_c", start="pin_c_top", direction="down", length=SHUNT,
            label=pin_c, dashed=True, side="right")
        pen("ground", start="pin_c")
        last, pitch = "pin_c_top", max(SLOT, _room_right(pin_c))
    pen("wire", start=last, direction="right", length=pitch)
    pen("switch", name="switch", direction="right", text="switch", side="above")
    pen("R", name="switch_r", direction="right", label=switch_r)
    pen("dot", name="hold", text="", side="above")
    pen("C", name="sampling_c", start="hold", direction="down", length=SHUNT,
        label=sampling_c, side="right")
    pen("ground", start="sampling_c")
    pen("box", name="converter_box", members=("switch", "switch_r", "sampling_c"),
        text="converter", side="below", dashed=True)
    return pen.recipe()
