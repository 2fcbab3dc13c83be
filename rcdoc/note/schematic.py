"""The schemdraw adapter: draw a schematic recipe (rcdoc.kinds.recipes) as SVG.

Recipes are backend-neutral data built by the stage kinds; this is the only
module that knows schemdraw. Text is drawn as outlines so the same recipe
gives the same bytes on any machine.
"""

from __future__ import annotations

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
