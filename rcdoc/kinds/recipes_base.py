"""Schematic recipes, the shared part: Label, Step, Recipe, the pen, layout constants.

The data types and helpers every recipe builder uses (rcdoc.kinds.recipes,
rcdoc.kinds.recipes_grid). Backend-neutral: nothing here draws.
"""

from __future__ import annotations

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


# The longest designator a schematic shows whole: a longer one (a file may give 200
# characters) would run over the parts beside it; the parts table shows it in full.
REF_CHARS = 10


def shortened(text: str, limit: int) -> str:
    """``text`` in at most ``limit`` characters: a longer one keeps its start and its
    end around an ellipsis (designators and ids differ at either end)."""
    if len(text) <= limit:
        return text
    head = (limit - 1) // 2
    return f"{text[:head]}…{text[len(text) - (limit - 1 - head):]}"


@dataclass(frozen=True)
class Label:
    """A part's designator and its value, already formatted ("R14", "4.7 kΩ")."""

    ref: str
    value: str

    def lines(self) -> tuple[str, ...]:
        return tuple(line for line in (shortened(self.ref, REF_CHARS), self.value) if line)


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
