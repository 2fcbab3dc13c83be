"""Schematics of the stages: backend-neutral drawing recipes.

A stage's schematic is data first: the builders here (`ladder`, `sallen_key`,
`mfb`, `netlist`, `switch_snubber`, `inductive_snubber`,
`debounce`) return a `Recipe`, a
frozen list of drawing steps in the manner of a pen plotter (place a part,
run a wire, go back to a named point). Tests read recipes; only the note's
`rcdoc.note.schematic.render_svg` knows schemdraw and turns a recipe into SVG
text. The shared types live in rcdoc.kinds.recipes_base (re-exported here),
the node-grid layout of arbitrary networks in rcdoc.kinds.recipes_grid. This
module formats no values (labels arrive as text), computes no circuit
behaviour and reads no project files.
"""

from __future__ import annotations

from collections.abc import Sequence

from rcdoc.kinds.recipes_base import (_back, _front, _legs, _Pen, _room_right, _small_units,
    _text_units, AIR, CHAR_UNITS, DIRECTIONS, DISPLAY_SCALE, ELEMENTS, FONT_PT, INCHES_PER_UNIT,
    Label, LABEL_CLEAR, LEAD, LOAD_LEAD, NODE_CLEAR, OPAMP_PINS, PART_ELEMENTS, Recipe, ROUTES,
    SHUNT, SIDES, SLOT, SMALL_PT, Step, UNIT)
from rcdoc.kinds.recipes_grid import _grid, _ladder_sections


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
