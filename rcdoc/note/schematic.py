"""The schemdraw adapter: draw a schematic recipe (rcdoc.kinds.recipes) as SVG.

Recipes are backend-neutral data built by the stage kinds; this is the only
module that knows schemdraw. Text is drawn as outlines so the same recipe
gives the same bytes on any machine.
"""

from __future__ import annotations

import math
import re

from rcdoc.kinds.recipes import (DISPLAY_SCALE, FONT_PT, INCHES_PER_UNIT, NODE_CLEAR,
                                 PART_ELEMENTS, SMALL_PT, UNIT, Recipe, Step)

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
    from rcdoc.note.outline_font import speed_up
    speed_up()      # before schemdraw's first text loads the font
    import schemdraw
    from schemdraw import svgconfig
    _speed_up_layout()

    schemdraw.use("svg")
    svgconfig.text = "path"
    svgconfig.svg2 = False
    font = _font_file()
    d = schemdraw.Drawing(canvas="svg", show=False)
    d.config(unit=UNIT, inches_per_unit=INCHES_PER_UNIT, fontsize=FONT_PT,
             font=font, lw=LINE_PT, margin=0.2)
    plotter = _Plotter(d)
    for step in recipe.steps:
        plotter.draw(step)
    return _scaled(merged_text(_svg_text(d)))


def _speed_up_layout() -> None:
    """Hand schemdraw's Transform a faster ``transform``: the same arithmetic, step by
    step, without building a Point for each of its steps. schemdraw moves every point
    of every element through it, again each time it asks for a bounding box: a fifth
    of a schematic's drawing. Idempotent."""
    global _Point, _PLAIN_TRANSFORM
    from schemdraw.transform import Transform
    from schemdraw.util import Point
    if getattr(Transform.transform, "_rcdoc_fast", False):
        return
    _Point, _PLAIN_TRANSFORM = Point, Transform.transform
    Transform.transform = _transform
    Transform.transform._rcdoc_fast = True


def _transform(self, pt):
    """schemdraw.transform.Transform.transform: ((pt + localshift) * zoom), rotated by
    theta degrees about the origin (schemdraw.util.rotate), + shift; the same
    operations on the same floats in the same order, so the same results (signed
    zeros included; tests/test_schematic_outlines.py compares them)."""
    Point = _Point
    zoom = self.zoom
    if not isinstance(zoom, Point) or len(pt) != 2:      # not as schemdraw makes them
        return _PLAIN_TRANSFORM(self, pt)
    shift, local = self.shift, self.localshift
    x = zoom[0] * (pt[0] + local[0])
    y = zoom[1] * (pt[1] + local[1])
    # util.rotate: cos and sin of the angle, the point less the centre (0, 0), its dot
    # product with ((cos, sin), (-sin, cos)) by sum(), plus the centre again.
    co = math.cos(math.radians(self.theta))
    so = math.sin(math.radians(self.theta))
    x, y = x - 0, y - 0
    rx = sum((x * co, y * -so)) + 0
    ry = sum((x * so, y * co)) + 0
    return Point((rx + shift[0], ry + shift[1]))


# schemdraw's Point and its own Transform.transform, once _speed_up_layout has run.
_Point = None
_PLAIN_TRANSFORM = None


_SVG_NS = "http://www.w3.org/2000/svg"


def _svg_text(d) -> str:
    """schemdraw's SVG text, with the SVG namespace as the default one.

    schemdraw gives ElementTree's empty prefix to the SVG namespace when its SVG
    backend is imported; weasyprint's PDF metadata module, imported after it,
    takes that prefix for elements without a namespace, and schemdraw's output
    would then read <ns0:svg ...>. The prefix is lent to the SVG namespace for
    the drawing and given back to whoever held it."""
    import xml.etree.ElementTree as ET
    holders = [uri for uri, prefix in ET._namespace_map.items() if prefix == ""]
    ET.register_namespace("", _SVG_NS)
    try:
        return d.get_imagedata("svg").decode("utf-8")
    finally:
        for uri in holders:
            ET.register_namespace("", uri)


class _Plotter:
    """Draws a recipe's steps one by one, remembering named points and what each drew."""

    def __init__(self, d):
        import schemdraw.elements as elm
        from schemdraw.util import Point
        self.d, self.elm, self.Point = d, elm, Point
        self.points = {"origin": Point((0.0, 0.0))}
        self.drawn: dict[str, list] = {}
        self.here = self.points["origin"]
        self.step_of = {"right": Point((1, 0)), "left": Point((-1, 0)),
                        "up": Point((0, 1)), "down": Point((0, -1))}

    def text_at(self, xy, lines, halign, valign, colour="black", size=FONT_PT):
        # ofst=(0, 0): the drawing's default label offset would shift text
        # diagonally away from where it is aimed.
        mark = self.elm.Label().at(xy).label("\n".join(lines), halign=halign,
                                             valign=valign, fontsize=size,
                                             color=colour, ofst=(0, 0))
        return self.d.add(mark)

    def beside_part(self, step: Step, centre, clearance: float):
        lines = step.lines()
        if not lines:
            return []
        horizontal = step.direction in ("right", "left")
        side = step.side or ("above" if horizontal else "right")
        x, y = centre
        if side == "above":
            return [self.text_at((x, y + clearance), lines, "center", "bottom")]
        if side == "below":
            return [self.text_at((x, y - clearance), lines, "center", "top")]
        if side == "left":
            return [self.text_at((x - clearance, y), lines, "right", "center")]
        return [self.text_at((x + clearance, y), lines, "left", "center")]

    def beside_point(self, step: Step, xy, clearance: float = 0.2):
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
        return [self.text_at(place[0], [step.text], place[1], place[2])]

    def draw(self, step: Step) -> None:
        start = self.points[step.start] if step.start else self.here
        style = {"ls": "--"} if step.dashed else {}
        kind = step.element
        if kind in PART_ELEMENTS or kind in ("source", "switch"):
            self.part(step, start, style)
        elif kind == "opamp":
            self.opamp(step, start)
        elif kind == "wire":
            self.wire(step, start, style)
        elif kind == "point":
            self.here = start + self.step_of[step.direction] * step.length
            self.drawn[step.name] = []
        elif kind in ("dot", "terminal"):
            mark = self.d.add(self.elm.Dot(open=kind == "terminal", radius=0.09).at(start))
            self.here = start
            self.drawn[step.name] = [mark, *self.beside_point(step, start, 0.3)]
        elif kind == "ground":
            self.drawn[step.name] = [self.d.add(self.elm.Ground().at(start))]
            self.here = start
        elif kind == "text":
            if step.variant == "small":
                # A node's name: small, grey, level with the node, so that
                # it reads as secondary to the part labels around it.
                self.drawn[step.name] = [self.text_at(start + self.Point((NODE_CLEAR, 0)),
                                                      [step.text], "left", "center",
                                                      FRAME_COLOUR, SMALL_PT)]
            else:
                self.drawn[step.name] = self.beside_point(step, start, 0.2)
            self.here = start
        elif kind == "box":
            self.box(step)
        self.points[step.name] = self.here

    def part(self, step: Step, start, style) -> None:
        elm, Point, kind = self.elm, self.Point, step.element
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
        self.d.add(part)
        ends = part.absanchors
        self.points[f"{step.name}.start"] = Point(ends["start"])
        self.points[f"{step.name}.center"] = Point(ends["center"])
        self.here = Point(ends["end"])
        self.drawn[step.name] = [part, *self.beside_part(step, Point(ends["center"]),
                                                         _CLEARANCE[kind])]

    def opamp(self, step: Step, start) -> None:
        Point = self.Point
        pin = {"plus": "in2", "minus": "in1", "out": "out"}[step.pin]
        amp = self.elm.Opamp(leads=True)
        if step.variant == "plus-top":
            amp.flip()
        self.d.add(amp.anchor(pin).at(start))
        ends = amp.absanchors
        for name, anchor in (("plus", "in2"), ("minus", "in1"), ("out", "out")):
            self.points[f"{step.name}.{name}"] = Point(ends[anchor])
        self.here = Point(ends["out"])
        self.drawn[step.name] = [amp]
        if step.text:
            top = max(ends["in1"][1], ends["in2"][1]) + 0.625
            self.drawn[step.name].append(self.text_at(
                (ends["in1"][0] + 0.75, top + 0.15), [step.text], "left", "bottom"))

    def wire(self, step: Step, start, style) -> None:
        Point, elm = self.Point, self.elm
        if step.end:
            goal = self.points[step.end]
            if step.route == "x":
                goal = Point((goal[0], start[1]))
            elif step.route == "y":
                goal = Point((start[0], goal[1]))
            shape = step.route if step.route in ("-|", "|-") else "-"
            line = elm.Wire(shape, **style).at(start).to(goal)
        else:
            goal = start + self.step_of[step.direction] * (step.length or UNIT)
            line = elm.Line(**style).at(start).to(goal)
        self.d.add(line)
        self.here = goal
        self.drawn[step.name] = [line]

    def box(self, step: Step) -> None:
        Point = self.Point
        members = [e for name in step.members for e in self.drawn[name]]
        frame = self.d.add(self.elm.EncircleBox(members, padx=0.2, pady=0.15,
                                                cornerradius=0.1, includelabels=True)
                           .linestyle("--").color(FRAME_COLOUR).linewidth(1.0))
        frame_ends = frame.absanchors
        if step.side == "below":
            caption = self.text_at(Point(frame_ends["S"]) + Point((0, -0.15)),
                                   [step.text], "center", "top", FRAME_COLOUR)
        else:
            caption = self.text_at(Point(frame_ends["N"]) + Point((0, 0.15)),
                                   [step.text], "center", "bottom", FRAME_COLOUR)
        self.drawn[step.name] = [frame, caption]


def _scaled(svg: str) -> str:
    """Shrink the stated width and height of the root element (not the viewBox)."""
    def shrink(match: re.Match) -> str:
        return f'{match.group(1)}="{float(match.group(2)) * DISPLAY_SCALE:.2f}pt"'

    head, sep, body = svg.partition(">")
    head = re.sub(r'\b(width|height)="([0-9.]+)pt"', shrink, head)
    return head + sep + body


# A text label as schemdraw writes it: a translated group of one <path> per glyph.
_LABEL = re.compile(r'<g transform="translate\(([-0-9.e]+) ([-0-9.e]+)\)" fill="([^"]+)">'
                    r'\s*((?:<path d="[^"]*" />\s*)*)</g>')
_GLYPH = re.compile(r'<path d="([^"]*)" />')
_EMPTY_GROUP = re.compile(r"<g>\s*</g>")
_TOKEN = re.compile(r"[A-Za-z]|[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?")


def _shifted(d: str, dx: float, dy: float) -> str | None:
    """Path data ``d`` moved by (dx, dy); None when it holds a command other than
    absolute M, L, Q, C or Z (whose numbers are all x y pairs)."""
    out, pair = [], []
    for token in _TOKEN.findall(d):
        if token.isalpha():
            if token not in "MLQCZ" or pair:
                return None
            out.append(token)
            continue
        pair.append(float(token))
        if len(pair) == 2:
            out += [f"{pair[0] + dx:.3f}".rstrip("0").rstrip("."),
                    f"{pair[1] + dy:.3f}".rstrip("0").rstrip(".")]
            pair = []
    return None if pair else " ".join(out)


def merged_text(svg: str) -> str:
    """The schematic with every text label of one colour as a single <path>, drawn
    last (over the lines, as the labels were). schemdraw writes each label as a
    group of one path per glyph in nested groups: a fifth of a stage's page in
    weasyprint went into those ~100 nodes per schematic. Same outlines, same
    place (glyphs of a label do not overlap, so one path fills as many did);
    an SVG in any other shape is returned as it is."""
    runs: dict[str, list[str]] = {}
    for m in _LABEL.finditer(svg):
        dx, dy, colour = float(m.group(1)), float(m.group(2)), m.group(3)
        for d in _GLYPH.findall(m.group(4)):
            moved = _shifted(d, dx, dy)
            if moved is None:
                return svg
            runs.setdefault(colour, []).append(moved)
    if not runs:
        return svg
    body = _LABEL.sub("", svg)
    while True:
        emptied = _EMPTY_GROUP.sub("", body)
        if emptied == body:
            break
        body = emptied
    head, tail = body.rsplit("</svg>", 1)
    paths = "".join(f'<path d="{" ".join(ds)}" fill="{colour}" />'
                    for colour, ds in runs.items())
    return head + paths + "</svg>" + tail
