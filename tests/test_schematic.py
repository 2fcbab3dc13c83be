"""Schematic recipes and their SVG rendering (rcdoc.kinds.recipes).

The recipes are checked against the circuits they stand for: the placement
of parts in each stage kind is the contract in shared/project-format.md
(cited as "format"); drawing conventions (ground symbols, junction dots,
dashed parasitics) are common practice in schematic drawing.
"""

import re
import subprocess
import sys
import xml.etree.ElementTree as ET

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from rcdoc.kinds.recipes import (
    UNIT, Label, Recipe, Step, inductive_snubber, ladder, mfb, netlist, sallen_key,
    switch_snubber,
)
from rcdoc.note.schematic import render_svg

SVG_NS = "{http://www.w3.org/2000/svg}"

R14 = Label("R14", "4.7 kΩ")
C9 = Label("C9", "10 nF")
RS = Label("Rs", "50 Ω")
LS = Label("Ls", "10 nH")
RL = Label("RL", "1 MΩ")
CL = Label("CL", "8 pF")


def refs(recipe):
    return [label.ref for label in recipe.parts()]


def path_back(recipe, name, hops):
    """The point reached by following `hops` steps back from step `name`."""
    for _ in range(hops):
        name = recipe.start_of(name)
    return name


def parts_by_ref(recipe):
    return {s.label.ref: s for s in recipe.steps if s.label is not None}


def svg_root(svg_text):
    root = ET.fromstring(svg_text)
    assert root.tag == SVG_NS + "svg"
    return root


# --- Label and Recipe --------------------------------------------------------------

def test_label_is_two_lines_ref_then_value():
    assert R14.lines() == ("R14", "4.7 kΩ")
    assert Label("", "48 Ω").lines() == ("48 Ω",)


def test_a_long_designator_is_drawn_shortened_around_an_ellipsis():
    # A file may give a 200-character designator; the schematic shows its start
    # and its end (the parts table the whole), so that it does not run over the
    # parts beside it.
    from rcdoc.kinds.recipes_base import REF_CHARS, shortened
    ref = "R12_" + "K" * 40 + "7"
    line = Label(ref, "2.2 kΩ").lines()[0]
    assert len(line) == REF_CHARS and line.startswith("R12_") and line.endswith("K7")
    assert "…" in line
    assert shortened("R120A", REF_CHARS) == "R120A"
    assert shortened("abcdefghijk", 5) == "ab…jk" and shortened("abcdef", 5) == "ab…ef"


def test_recipe_rejects_reference_to_a_point_not_yet_drawn():
    with pytest.raises(ValueError, match="refers to 'later'"):
        Recipe((Step("R", "r1", start="later"), Step("dot", "later")))


def test_recipe_rejects_duplicate_names_and_unknown_elements():
    with pytest.raises(ValueError):
        Recipe((Step("R", "x"), Step("C", "x")))
    with pytest.raises(ValueError):
        Recipe((Step("transistor", "q1"),))


# --- ladders -----------------------------------------------------------------------

def test_rc_lowpass_is_series_r_then_shunt_c():
    # format: rc-lowpass = series R, shunt C, output across C
    recipe = ladder([("series", "R", R14), ("shunt", "C", C9)])
    assert refs(recipe) == ["R14", "C9"]
    parts = parts_by_ref(recipe)
    assert parts["R14"].element == "R" and parts["R14"].direction == "right"
    assert parts["C9"].element == "C" and parts["C9"].direction == "down"
    # the shunt hangs from the node where the series part ends
    assert recipe.start_of(parts["C9"].name) == parts["R14"].name
    texts = recipe.texts()
    assert texts.index("IN") < texts.index("R14") < texts.index("C9") < texts.index("OUT")
    assert "Vs" in texts
    assert recipe.elements().count("source") == 1
    assert "ground" in recipe.elements()


def test_rc_highpass_swaps_the_kinds():
    # format: rc-highpass = series C, shunt R, output across R
    recipe = ladder([("series", "C", C9), ("shunt", "R", R14)])
    parts = parts_by_ref(recipe)
    assert (parts["C9"].element, parts["C9"].direction) == ("C", "right")
    assert (parts["R14"].element, parts["R14"].direction) == ("R", "down")


def test_ladder_with_source_and_load_frames_both():
    sections = [("series", "R", Label(f"R{i}", "10 kΩ")) if k == 0 else
                ("shunt", "C", Label(f"C{i}", "4.7 nF"))
                for i in (1, 2, 3) for k in (0, 1)]
    recipe = ladder(sections, source=[("R", RS), ("L", LS)], load=[("R", RL), ("C", CL)])
    assert refs(recipe) == ["Rs", "Ls", "R1", "C1", "R2", "C2", "R3", "C3", "RL", "CL"]
    parts = parts_by_ref(recipe)
    assert parts["Ls"].element == "L"
    boxes = {s.text: s for s in recipe.steps if s.element == "box"}
    assert set(boxes) == {"source", "load"}
    assert boxes["source"].members == (parts["Rs"].name, parts["Ls"].name)
    assert boxes["load"].members == (parts["RL"].name, parts["CL"].name)
    assert all(s.dashed for s in boxes.values())
    # load parts are shunts after the output terminal
    texts = recipe.texts()
    assert texts.index("OUT") < texts.index("RL")
    assert parts["RL"].direction == parts["CL"].direction == "down"
    # common practice: one bottom rail, a dot wherever a branch meets it
    # except at its far end (a corner): 3 ladder shunts + RL
    rail = [s for s in recipe.steps if s.name == "rail"]
    assert len(rail) == 1 and rail[0].end == parts["CL"].name
    shunts = {p.name for p in parts.values() if p.direction == "down"}
    rail_dots = [s for s in recipe.steps if s.element == "dot" and s.start in shunts]
    assert len(rail_dots) == 4


def test_ladder_without_source_parts_draws_source_straight_to_input():
    recipe = ladder([("series", "R", R14), ("shunt", "C", C9)])
    assert "box" not in recipe.elements()
    source = next(s for s in recipe.steps if s.element == "source")
    assert source.variant == "sine" and source.text == "Vs"


def test_ladder_spreads_sections_for_long_labels():
    short = ladder([("shunt", "C", Label("C1", "1 nF")), ("series", "R", R14),
                    ("shunt", "C", C9)])
    wide = ladder([("shunt", "C", Label("C1", "1 nF (X7R, 50 V rated)")),
                   ("series", "R", R14), ("shunt", "C", C9)])
    def run_before_r14(recipe):
        i = next(i for i, s in enumerate(recipe.steps) if s.label == R14)
        return recipe.steps[i - 1].length if recipe.steps[i - 1].element == "wire" else 0.0
    assert run_before_r14(short) == 0.0
    assert run_before_r14(wide) > 2.0


def test_ladder_rejects_bad_positions_and_kinds():
    with pytest.raises(ValueError):
        ladder([("across", "R", R14)])
    with pytest.raises(ValueError):
        ladder([("series", "D", R14)])


# --- op-amp circuits -----------------------------------------------------------------

def _sk(**kwargs):
    return sallen_key(Label("R1", "10 kΩ"), Label("R2", "10 kΩ"), Label("C1", "22 nF"),
                      Label("C2", "10 nF"), **kwargs)


def test_sallen_key_follower_places_parts_as_the_format_says():
    recipe = _sk(opamp_label="U3")
    parts = parts_by_ref(recipe)
    start = recipe.start_of
    # r1 from the input to node A, r2 from A to node B
    assert start(parts["R1"].name) == "in"
    assert start(parts["R2"].name) == "node_a"
    assert path_back(recipe, "node_a", 2) == parts["R1"].name
    # B is the + input: a wire from the end of r2 to the op-amp's + pin
    amp = next(s for s in recipe.steps if s.element == "opamp")
    assert amp.pin == "plus" and amp.text == "U3"
    assert path_back(recipe, amp.name, 2) == parts["R2"].name
    # c2 from B to ground
    assert start(parts["C2"].name) == parts["R2"].name
    assert any(s.element == "ground" and s.start == parts["C2"].name for s in recipe.steps)
    # c1 from node A (up, across) to the output node
    assert path_back(recipe, parts["C1"].name, 3) == "node_a"
    assert any(start(s.name) == parts["C1"].name and s.end == "node_out" for s in recipe.steps)
    assert path_back(recipe, "node_out", 2) == "op.out"
    # follower: the - input is wired to the output; no rf, rg
    assert set(refs(recipe)) == {"R1", "R2", "C1", "C2"}
    assert path_back(recipe, "fb_node", 2) == "op.minus"
    assert any(start(s.name) == "fb_node" and s.end == "node_out" for s in recipe.steps)


def test_sallen_key_with_gain_setting_resistors():
    recipe = _sk(rf=Label("R5", "10 kΩ"), rg=Label("R6", "5.6 kΩ"))
    parts = parts_by_ref(recipe)
    start = recipe.start_of
    # rf from the - input to the output, rg from the - input to ground
    assert start(parts["R5"].name) == "fb_node"
    assert any(start(s.name) == parts["R5"].name and s.end == "node_out" for s in recipe.steps)
    assert start(parts["R6"].name) == "fb_node" and parts["R6"].direction == "down"
    assert any(s.element == "ground" and s.start == parts["R6"].name for s in recipe.steps)
    assert not any(start(s.name) == "fb_node" and s.end == "node_out" for s in recipe.steps)


def test_mfb_places_parts_as_the_format_says():
    recipe = mfb(Label("R1", "10 kΩ"), Label("R2", "10 kΩ"), Label("R3", "4.7 kΩ"),
                 Label("C1", "47 nF"), Label("C2", "2.2 nF"), load=[("C", CL)],
                 opamp_label="U2")
    parts = parts_by_ref(recipe)
    start = recipe.start_of
    amp = next(s for s in recipe.steps if s.element == "opamp")
    assert amp.pin == "minus"
    # r1 input -> A; c1 A -> ground; r3 A -> the - input (node M)
    assert start(parts["R1"].name) == "in"
    assert path_back(recipe, "node_a", 2) == parts["R1"].name
    assert start(parts["C1"].name) == "node_a"
    assert any(s.element == "ground" and s.start == parts["C1"].name for s in recipe.steps)
    assert path_back(recipe, parts["R3"].name, 2) == "node_a"
    assert path_back(recipe, "node_m", 2) == parts["R3"].name
    assert path_back(recipe, amp.name, 2) == "node_m"
    # + input grounded
    plus = next(s for s in recipe.steps if s.start == "op.plus")
    assert recipe.steps[recipe.steps.index(plus) + 1].element == "ground"
    # c2 from the - input and r2 from A both end on the output
    assert path_back(recipe, parts["C2"].name, 3) == "node_m"
    assert path_back(recipe, parts["R2"].name, 3) == "node_a"
    assert any(start(s.name) == parts["C2"].name and s.end == "node_out" for s in recipe.steps)
    assert any(start(s.name) == parts["R2"].name and s.end == "loop_corner"
               for s in recipe.steps)
    assert recipe.step("loop_corner").end == "node_out"
    assert refs(recipe)[-1] == "CL"


# --- snubbers ------------------------------------------------------------------------

def test_switch_snubber_parts_and_parasitics():
    recipe = switch_snubber(snubber_r=Label("R40", "4.7 Ω"), snubber_c=Label("C40", "1 nF"),
                            parasitic_l=Label("Lp", "12 nH"),
                            parasitic_c=Label("Cp", "540 pF"), voltage_label="48 V")
    parts = parts_by_ref(recipe)
    assert refs(recipe) == ["Lp", "Cp", "R40", "C40"]
    supply = next(s for s in recipe.steps if s.element == "source")
    assert supply.variant == "dc" and supply.text == "48 V"
    # common practice: parasitics drawn dashed and named as such
    assert parts["Cp"].dashed and "parasitic" in parts["Cp"].lines()
    switch = next(s for s in recipe.steps if s.element == "switch")
    # switch, Cp and the snubber all hang from the switching node
    assert recipe.start_of(switch.name) == "node_sw"
    assert path_back(recipe, parts["Cp"].name, 2) == "node_sw"
    assert path_back(recipe, parts["R40"].name, 2) == recipe.start_of(parts["Cp"].name)
    assert recipe.start_of(parts["C40"].name) == parts["R40"].name


def test_switch_snubber_without_snubber_parts():
    recipe = switch_snubber(snubber_r=None, snubber_c=None, parasitic_l=Label("Lp", "12 nH"),
                            parasitic_c=Label("Cp", "540 pF"), voltage_label="48 V")
    assert refs(recipe) == ["Lp", "Cp"]
    assert "switch" in recipe.elements()


def test_inductive_snubber_dc_and_ac():
    common = dict(snubber_r=Label("R7", "100 Ω"), snubber_c=Label("C7", "100 nF"),
                  coil_l=Label("K1", "85 mH"), coil_r=Label("", "48 Ω"))
    dc = inductive_snubber(voltage_label="24 V", ac=False, **common)
    ac = inductive_snubber(voltage_label="230 V", ac=True, **common)
    assert next(s for s in dc.steps if s.element == "source").variant == "dc"
    assert next(s for s in ac.steps if s.element == "source").variant == "sine"
    parts = parts_by_ref(dc)
    assert parts["K1"].element == "coil"
    contact = dc.step("contact")
    assert contact.element == "switch" and dc.start_of("contact") == "contact_top"
    # the snubber RC sits across the contact: both branches start at its top
    assert path_back(dc, parts["R7"].name, 2) == "contact_top"
    assert dc.start_of(parts["C7"].name) == parts["R7"].name
    assert "48 Ω" in dc.texts()
    bare = inductive_snubber(voltage_label="24 V", ac=False, **{
        **common, "snubber_r": None, "snubber_c": None})
    assert refs(bare) == ["K1", ""]


# --- networks ------------------------------------------------------------------------

LOWPASS_NET = [("R", Label("R3", "10 kΩ"), "in", "mid"), ("C", Label("C1", "1 nF"), "mid", "0"),
               ("R", Label("R4", "10 kΩ"), "out", "mid"), ("C", Label("C2", "1 nF"), "0", "out")]


def test_netlist_that_is_a_ladder_draws_as_the_ladder():
    # a chain in -> mid -> out with shunts to ground is a two-section RC ladder
    expected = ladder([("series", "R", Label("R3", "10 kΩ")), ("shunt", "C", Label("C1", "1 nF")),
                       ("series", "R", Label("R4", "10 kΩ")), ("shunt", "C", Label("C2", "1 nF"))],
                      load=[("R", RL)])
    assert netlist(LOWPASS_NET, input="in", output="out", load=[("R", RL)]) == expected


def test_bridged_t_is_drawn_on_node_buses():
    bridged_t = [("R", Label("R1", "10 kΩ"), "in", "mid"), ("R", Label("R2", "10 kΩ"), "mid", "out"),
                 ("C", Label("C1", "1 nF"), "in", "out"), ("C", Label("C2", "22 nF"), "mid", "0")]
    recipe = netlist(bridged_t, input="in", output="out", source=[("R", RS)])
    assert sorted(refs(recipe)) == ["C1", "C2", "R1", "R2", "Rs"]
    texts = recipe.texts()
    assert {"IN", "OUT", "mid"} <= set(texts)
    assert any(s.element == "ground" and s.start == parts_by_ref(recipe)["C2"].name
               for s in recipe.steps)
    svg_root(render_svg(recipe))


# The damped LC filter of the example board: L3 in series, C70 across, an
# R70 + C71 damping leg from mid to ground (inner node "damp"), R71 in series,
# C72 across the output. A damping leg is a series RC in parallel with the
# filter capacitor (common practice for LC supply filters).
L3, C70, R70 = Label("L3", "10 µH"), Label("C70", "1 µF"), Label("R70", "3.3 Ω")
C71, R71, C72 = Label("C71", "4.7 µF"), Label("R71", "1 Ω"), Label("C72", "1 µF")
DAMPED_LC = [("L", L3, "in", "mid"), ("C", C70, "mid", "0"), ("R", R70, "mid", "damp"),
             ("C", C71, "damp", "0"), ("R", R71, "mid", "out"), ("C", C72, "out", "0")]


def wired_from(recipe, name):
    """The first non-wire step reached going back from step `name`'s start."""
    name = recipe.start_of(name)
    while recipe.step(name).element == "wire":
        name = recipe.start_of(name)
    return name


def is_grid(recipe):
    # the grid fallback draws every node as a bus named bus_<column>
    return any(s.name.startswith("bus_") for s in recipe.steps)


def test_damping_leg_draws_as_a_ladder_with_a_stacked_leg():
    recipe = netlist(DAMPED_LC, input="in", output="out", source=[("R", RS)],
                     load=[("R", RL)])
    assert not is_grid(recipe)
    assert refs(recipe) == ["Rs", "L3", "C70", "R70", "C71", "R71", "C72", "RL"]
    parts = parts_by_ref(recipe)
    start = recipe.start_of
    # C70 and the leg hang from the node where L3 ends; R71 leaves from there
    assert start(parts["C70"].name) == parts["L3"].name
    assert path_back(recipe, parts["R70"].name, 2) == parts["L3"].name
    assert wired_from(recipe, parts["R71"].name) == parts["L3"].name
    assert wired_from(recipe, parts["R70"].name) == parts["L3"].name
    # stacked: C71 continues straight down from the end of R70
    assert start(parts["C71"].name) == parts["R70"].name
    assert parts["R70"].direction == parts["C71"].direction == "down"
    # the leg spans the same depth as the single shunts beside it
    assert parts["R70"].length + parts["C71"].length == pytest.approx(parts["C70"].length)
    assert parts["R70"].length == pytest.approx(parts["C71"].length)
    # the inner node is named, small, at the joint; chain node names are not shown
    node = next(s for s in recipe.steps if s.text == "damp")
    assert node.element == "text" and node.variant == "small"
    assert node.start == parts["R70"].name
    assert "mid" not in recipe.texts()
    # one bottom rail from the source to the load, the leg's foot on it
    assert recipe.step("rail").end == parts["RL"].name
    assert any(s.element == "dot" and s.start == parts["C71"].name for s in recipe.steps)
    svg_root(render_svg(recipe))


def test_damping_leg_recipe_equals_the_ladder_with_a_stack_section():
    expected = ladder([("series", "L", L3), ("shunt", "C", C70), ("shunt", "R", R70),
                       ("stack", "C", C71, "damp"), ("series", "R", R71),
                       ("shunt", "C", C72)], source=[("R", RS)], load=[("R", RL)])
    got = netlist(DAMPED_LC, input="in", output="out", source=[("R", RS)], load=[("R", RL)])
    assert got == expected
    # deterministic: the same netlist gives the same recipe
    assert netlist(DAMPED_LC, input="in", output="out", source=[("R", RS)],
                   load=[("R", RL)]) == got


def test_legs_at_one_node_keep_the_order_of_the_elements():
    # the leg listed first is drawn first, wherever its ground end is listed
    reordered = [DAMPED_LC[i] for i in (0, 3, 2, 1, 4, 5)]
    assert refs(netlist(reordered, input="in", output="out")) == \
        ["L3", "R70", "C71", "C70", "R71", "C72"]


def test_leg_elements_may_be_listed_either_way_round():
    flipped = [(k, lab, b, a) for k, lab, a, b in DAMPED_LC]
    recipe = netlist(flipped, input="in", output="out")
    assert refs(recipe) == ["L3", "C70", "R70", "C71", "R71", "C72"]
    assert recipe.start_of(parts_by_ref(recipe)["C71"].name) == parts_by_ref(recipe)["R70"].name


def test_three_part_leg_at_the_output_names_both_inner_nodes():
    net = [("R", Label("R1", "10 kΩ"), "in", "out"), ("R", Label("R2", "100 Ω"), "out", "a"),
           ("L", Label("L2", "1 mH"), "a", "b"), ("C", Label("C2", "100 nF"), "b", "0"),
           ("C", Label("C1", "1 nF"), "out", "0")]
    recipe = netlist(net, input="in", output="out")
    assert not is_grid(recipe)
    assert refs(recipe) == ["R1", "R2", "L2", "C2", "C1"]
    parts = parts_by_ref(recipe)
    assert recipe.start_of(parts["L2"].name) == parts["R2"].name
    assert recipe.start_of(parts["C2"].name) == parts["L2"].name
    small = [(s.text, s.start) for s in recipe.steps if s.variant == "small"]
    assert small == [("a", parts["R2"].name), ("b", parts["L2"].name)]
    # three stacked parts share the depth of the single shunt C1, and the
    # rail lies deep enough for each to have a full part length
    assert sum(parts[r].length for r in ("R2", "L2", "C2")) == pytest.approx(parts["C1"].length)
    assert [parts[r].length for r in ("R2", "L2", "C2")] == pytest.approx([UNIT] * 3)


def test_series_branch_of_several_parts_is_a_run_of_chain_steps():
    # L then R in series from in to mid: the inner node "x" is a chain node
    net = [("L", Label("L1", "10 µH"), "in", "x"), ("R", Label("R1", "1 Ω"), "x", "mid"),
           ("C", Label("C1", "1 µF"), "mid", "0"), ("R", Label("R2", "1 kΩ"), "mid", "out")]
    recipe = netlist(net, input="in", output="out")
    parts = parts_by_ref(recipe)
    assert not is_grid(recipe) and refs(recipe) == ["L1", "R1", "C1", "R2"]
    assert recipe.start_of(parts["R1"].name) == parts["L1"].name
    assert parts["R1"].direction == "right"


@pytest.mark.parametrize("extra", [
    # the inner node also feeds the output: no longer a leg
    ("R", Label("R99", "1 kΩ"), "damp", "out"),
    # a part across the whole filter bridges the chain
    ("C", Label("C99", "10 pF"), "in", "out"),
])
def test_networks_that_are_no_ladder_fall_back_to_the_grid(extra):
    recipe = netlist(DAMPED_LC + [extra], input="in", output="out")
    assert is_grid(recipe)
    assert sorted(refs(recipe)) == sorted([e[1].ref for e in DAMPED_LC] + [extra[1].ref])


def test_parts_hanging_only_from_ground_are_no_leg():
    # x connects only to ground, through two parts: a loop, not a shunt leg
    net = [("R", R14, "in", "out"), ("C", Label("C5", "1 nF"), "x", "0"),
           ("R", Label("R5", "1 kΩ"), "x", "0")]
    recipe = netlist(net, input="in", output="out")
    assert is_grid(recipe) and sorted(refs(recipe)) == ["C5", "R14", "R5"]


def test_ladder_rejects_a_stack_without_a_shunt_above():
    with pytest.raises(ValueError, match="stack"):
        ladder([("series", "R", R14), ("stack", "C", C9, "x")])
    with pytest.raises(ValueError):
        ladder([("shunt", "R", R14), ("stack", "C", C9)])   # node name missing


def _width_pt(svg):
    return float(re.match(r"([0-9.]+)pt", svg_root(svg).get("width")).group(1))


def _pt_per_unit(svg):
    return _width_pt(svg) / float(svg_root(svg).get("viewBox").split()[2])


def test_grid_fallback_keeps_the_page_scale():
    # The note shows schematics at their own size and shrinks only what is
    # wider than the text column, so a grid must fit 16 cm (453.5 pt) like
    # the ladders, or its labels come out smaller than theirs.
    bridged = DAMPED_LC + [("C", Label("C99", "10 pF"), "in", "out")]
    grid = netlist(bridged, input="in", output="out", source=[("R", RS)], load=[("R", RL)])
    assert is_grid(grid)
    grid_svg = render_svg(grid)
    assert _width_pt(grid_svg) < 453.5
    # same scale as a ladder: stated size per viewBox unit is the same, so
    # labels (one font size in drawing units) come out the same size
    ladder_svg = render_svg(netlist(DAMPED_LC, input="in", output="out",
                                    source=[("R", RS)], load=[("R", RL)]))
    assert _pt_per_unit(grid_svg) == pytest.approx(_pt_per_unit(ladder_svg), rel=1e-3)


def test_grid_spaces_hanging_parts_by_their_labels():
    wide = Label("C1", "1 nF (C0G, 50 V rated)")
    net = [("C", wide, "in", "0"), ("C", Label("C2", "1 nF"), "in", "0"),
           ("R", R14, "in", "out"), ("C", C9, "out", "in")]
    recipe = netlist(net, input="in", output="out")
    assert is_grid(recipe)
    xs = {s.name[len("hang_"):-2]: s.length for s in recipe.steps
          if s.name.startswith("hang_") and s.name.endswith("~x")}
    # the second part stands clear of the first one's 23-character label:
    # at least one character width (about 0.2 units, common practice for
    # DejaVu Sans at the label size) per character
    assert xs["e2"] - xs["e1"] > 23 * 0.2


node_names = st.sampled_from(["0", "in", "out", "a", "b"])
elements_strategy = st.lists(
    st.tuples(st.sampled_from("RCL"), st.integers(1, 99), node_names, node_names),
    max_size=7)


@settings(max_examples=60, deadline=None)
@given(elements_strategy, node_names, node_names, st.booleans())
def test_netlist_builds_a_valid_recipe_for_any_graph(raw, input_node, output_node, loaded):
    elements = [(kind, Label(f"{kind}{n}", f"{n} k"), a, b) for kind, n, a, b in raw]
    recipe = netlist(elements, input=input_node, output=output_node,
                     load=[("R", RL)] if loaded else ())
    # every element and the load appear exactly once; Recipe itself has
    # checked that every step refers only to points already drawn
    expected = [e[1].ref for e in elements] + (["RL"] if loaded else [])
    assert sorted(label.ref for label in recipe.parts()) == sorted(expected)


@pytest.mark.parametrize("elements,input_node,output_node", [
    ([("R", Label("R1", "1 k"), "a", "a"), ("C", Label("C1", "1 n"), "0", "0")], "in", "out"),
    ([("R", Label("R1", "1 k"), "0", "0")], "0", "0"),
    ([], "in", "in"),
])
def test_netlist_degenerate_graphs_still_render(elements, input_node, output_node):
    svg_root(render_svg(netlist(elements, input=input_node, output=output_node)))


# --- rendering -----------------------------------------------------------------------

ALL_RECIPES = {
    "lowpass": lambda: ladder([("series", "R", R14), ("shunt", "C", C9)]),
    "ladder": lambda: ladder([("series", "R", R14), ("shunt", "C", C9)] * 3,
                             source=[("R", RS), ("L", LS)], load=[("R", RL), ("C", CL)]),
    "sallen-key": lambda: _sk(rf=Label("R5", "10 kΩ"), rg=Label("R6", "5.6 kΩ"),
                              source=[("R", RS)], load=[("R", RL)], opamp_label="U3"),
    "snubber": lambda: switch_snubber(
        snubber_r=Label("R40", "4.7 Ω"), snubber_c=Label("C40", "1 nF"),
        parasitic_l=Label("Lp", "12 nH"), parasitic_c=Label("Cp", "540 pF"),
        voltage_label="48 V"),
}


@pytest.mark.parametrize("name", sorted(ALL_RECIPES))
def test_render_svg_is_valid_deterministic_and_text_free(name):
    recipe = ALL_RECIPES[name]()
    first = render_svg(recipe)
    assert render_svg(recipe) == first
    root = svg_root(first)
    # text drawn as outlines: no dependence on the reader's fonts
    assert root.find(f".//{SVG_NS}text") is None
    outlines = [p for p in root.iter(f"{SVG_NS}path") if p.get("fill") not in (None, "none")]
    assert outlines and sum(p.get("d").count("Z") for p in outlines) > 10   # glyph contours
    width_pt = float(re.match(r"([0-9.]+)pt", root.get("width")).group(1))
    # the widest stages stay near the 16 cm page width (453 pt)
    assert 100 < width_pt < 530


def test_dashed_parts_are_dashed_in_svg():
    svg = render_svg(ALL_RECIPES["snubber"]())
    assert re.search(r"stroke-dasharray:\s*[0-9]", svg)


@pytest.mark.slow
def test_render_is_byte_identical_in_a_fresh_process(tmp_path):
    # reproducible output (rules): same recipe, same bytes across processes
    script = ("import sys; from rcdoc.kinds.recipes import *; "
              "from rcdoc.note.schematic import render_svg; "
              "sys.stdout.write(render_svg(ladder([('series','R',Label('R14','4.7 kΩ')),"
              "('shunt','C',Label('C9','10 nF'))])))")
    out = subprocess.run([sys.executable, "-c", script], capture_output=True, check=True,
                         env={"PYTHONHASHSEED": "123", "PATH": "/usr/bin:/bin",
                              "PYTHONPATH": ":".join(sys.path)}).stdout.decode("utf-8")
    assert out == render_svg(ALL_RECIPES["lowpass"]())


@pytest.mark.slow
def test_reused_record_classes_give_the_same_outlines():
    # rcdoc.note.outline_font hands ziafont one namedtuple class per (name, fields)
    # instead of a new one per record. Reference: ziafont itself, unchanged, in a
    # fresh process (the font is cached per process): every byte of a schematic
    # with kerned text, Ω, µ and digits must be the same either way.
    script = ("import sys; import rcdoc.note.outline_font as o; "
              "o.speed_up = (lambda: None) if sys.argv[1] == 'plain' else o.speed_up; "
              "from rcdoc.kinds.recipes import *; from rcdoc.note.schematic import render_svg; "
              "sys.stdout.write(render_svg(ladder([('series','R',Label('R14','4.7 kΩ')),"
              "('shunt','C',Label('C9','10 µF')), ('series','R',Label('RA','AVAWAY 0.1 Ω'))])))")

    def svg(mode):
        return subprocess.run([sys.executable, "-c", script, mode], capture_output=True,
                              check=True, env={"PYTHONHASHSEED": "123", "PATH": "/usr/bin:/bin",
                                               "PYTHONPATH": ":".join(sys.path)}).stdout
    fast, plain = svg("fast"), svg("plain")
    assert b"<path" in fast and fast == plain


def test_reusing_factory_keeps_namedtuple_behaviour():
    # Source: the Python documentation of collections.namedtuple (fields, equality
    # with the plain tuple); options other than the plain form go to the real one.
    from rcdoc.note.outline_font import _namedtuple
    a = _namedtuple("Anchor", ["x", "y"])
    assert a is _namedtuple("Anchor", ("x", "y")) and a(1, 2) == (1, 2) and a(1, 2).y == 2
    b = _namedtuple("Anchor", "x y", defaults=(0,))
    assert b is not a and b(1) == (1, 0)


# --- labels merged into one path per colour (rcdoc.note.schematic.merged_text) ---------

def _unmerged(recipe, monkeypatch):
    import rcdoc.note.schematic as sch
    monkeypatch.setattr(sch, "merged_text", lambda svg: svg)
    return sch.render_svg(recipe)


def _points(svg_text, only_text):
    """Every absolute (x, y) of the filled paths (text) in user units, translations applied."""
    root = svg_root(svg_text)
    out = []

    def walk(node, dx, dy, fill):
        m = re.match(r"translate\(([-0-9.e]+) ([-0-9.e]+)\)", node.get("transform", ""))
        if m:
            dx, dy = dx + float(m.group(1)), dy + float(m.group(2))
        fill = node.get("fill", fill)      # inherited from the groups around (SVG 1.1 §6.7)
        if node.tag == SVG_NS + "path" and (not only_text or fill not in (None, "none")):
            nums = [float(v) for v in re.findall(r"[-+]?(?:\d+\.?\d*|\.\d+)", node.get("d"))]
            out.extend((round(x + dx, 3), round(y + dy, 3)) for x, y in zip(nums[::2], nums[1::2]))
        for child in node:
            walk(child, dx, dy, fill)
    walk(root, 0.0, 0.0, None)
    return sorted(out)


@pytest.mark.parametrize("name", sorted(ALL_RECIPES))
def test_merged_labels_keep_every_outline_point(name, monkeypatch):
    # Source: SVG 1.1 §7.6 (a group's translate moves its children) and §8.3 (absolute
    # M/L/Q/C coordinates): the merged text holds the same points, to the 3 decimals
    # schemdraw writes, and the drawing is otherwise unchanged.
    recipe = ALL_RECIPES[name]()
    merged, plain = render_svg(recipe), _unmerged(recipe, monkeypatch)
    assert _points(merged, True) == _points(plain, True)
    assert len(svg_root(merged).findall(f".//{SVG_NS}g")) < len(svg_root(plain).findall(f".//{SVG_NS}g"))
    for tag in ("circle", "polygon", "line"):
        assert len(svg_root(merged).findall(f".//{SVG_NS}{tag}")) == \
            len(svg_root(plain).findall(f".//{SVG_NS}{tag}"))


def test_merge_leaves_other_path_commands_alone():
    # Relative and arc commands are not x y pairs (SVG 1.1 §8.3): left as they are.
    from rcdoc.note.schematic import merged_text
    svg = ('<svg xmlns="http://www.w3.org/2000/svg"><g><g transform="translate(1 2)" fill="black">'
           '<path d="M 0 0 l 1 1 Z" /></g></g></svg>')
    assert merged_text(svg) == svg
    ok = svg.replace("l 1 1", "L 1 1")
    assert merged_text(ok) == ('<svg xmlns="http://www.w3.org/2000/svg">'
                               '<path d="M 1 2 L 2 3 Z" fill="black" /></svg>')


@pytest.mark.slow
def test_merged_labels_draw_the_same_pixels(monkeypatch, tmp_path):
    # Reference: weasyprint and pdftoppm (poppler) drawing the schematic as schemdraw
    # wrote it; the merged one must give the same pixels at 150 dpi.
    import shutil
    import weasyprint
    from PIL import Image, ImageChops
    if shutil.which("pdftoppm") is None:
        pytest.skip("pdftoppm (poppler-utils) not installed")
    recipe = ALL_RECIPES["ladder"]()
    pngs = []
    for tag, svg in (("a", _unmerged(recipe, monkeypatch)), ("b", render_svg(recipe))):
        import base64
        url = "data:image/svg+xml;base64," + base64.b64encode(svg.encode()).decode()
        weasyprint.HTML(string=f'<img src="{url}" style="width:16cm">').write_pdf(tmp_path / f"{tag}.pdf")
        subprocess.run(["pdftoppm", "-png", "-r", "150", "-singlefile", tmp_path / f"{tag}.pdf",
                        tmp_path / tag], check=True)
        pngs.append(Image.open(tmp_path / f"{tag}.png").convert("L"))
    assert pngs[0].getbbox() is not None
    assert ImageChops.difference(*pngs).getbbox() is None


def test_drawn_after_another_library_took_the_default_xml_prefix():
    # weasyprint's PDF metadata module registers ElementTree's empty prefix for
    # elements without a namespace, taking it from the SVG namespace that
    # schemdraw registered; the schematic must still be a plain <svg> root in the
    # SVG namespace (W3C SVG 1.1, section 5.1.2), and the prefix goes back to its holder.
    recipe = ladder([("series", "R", R14), ("shunt", "C", C9)])
    render_svg(recipe)                           # schemdraw's SVG backend imported
    ET.register_namespace("", "")                # as weasyprint.pdf.metadata does
    svg = render_svg(recipe)
    assert svg.lstrip().startswith("<svg") and "ns0:" not in svg
    svg_root(svg)
    assert ET._namespace_map.get("") == ""       # given back
