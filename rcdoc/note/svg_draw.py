"""The note's schematics drawn straight into the PDF, as weasyprint draws their SVG.

What it is for: weasyprint reads an SVG's path data one command at a time and
sizes every number through its CSS length parser; a schematic's outlined
labels are thousands of numbers, and drawing one schematic took a twelfth of
a stage's render. ``compile_svg`` reads rcdoc's own schematic SVG (a root
``svg`` with a viewBox, ``path``, ``polygon`` and ``circle`` elements painted
by plain colours) once: the path data split at its letters and its numbers
read in bulk, each shape turned into the PDF path operators weasyprint would
write (quadratic curves raised to cubic ones, arcs and circles as weasyprint's
cubic curves, computed as it computes them), and the paint of each element
set through weasyprint's own stream calls (colour, alpha, width, dashes,
caps, joins, miter limit, fill rule), in weasyprint's order.
``PathFigure`` is the result, for weasyprint's image cache.

What it must not do: guess. An SVG holding anything else (another element or
attribute, a transform, a unit or percentage, a smooth curve, an arc of zero
radius, a gradient, a colour not opaque) gets None, and the caller leaves it
to weasyprint.
"""

from __future__ import annotations

import math
import re
from xml.etree import ElementTree

__all__ = ["compile_svg", "PathFigure"]

_SVG_NS = "{http://www.w3.org/2000/svg}"
_ROOT_KEYS = {"width", "height", "viewBox", "{http://www.w3.org/XML/1998/namespace}lang"}
_PAINT_KEYS = {"style", "fill", "stroke", "stroke-width", "stroke-dasharray",
               "stroke-linecap", "stroke-linejoin", "fill-rule"}
_SHAPE_KEYS = {"path": {"d"}, "polygon": {"points"}, "circle": {"cx", "cy", "r"}}
_PLAIN = re.compile(r"^\s*[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?\s*$")
_TOKEN = re.compile(r"([MmLlHhVvCcQqAaZz])|([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)|([\s,]+)|(.)")
_ARGS = {"M": 2, "L": 2, "H": 1, "V": 1, "C": 6, "Q": 4, "A": 7, "Z": 0}
_CAPS = {"round": 1, "square": 2}
_JOINS = {"round": 1, "bevel": 2}


# Numbers are written as pydyf 0.13 writes them (rcdoc's drawing hands pydyf the
# operators as bytes): a whole number without a point ("-0.0" as "0"), any other
# with six decimals less its trailing zeros ("0." for 1e-7). All of a shape's
# numbers at once: its operators joined into one format, filled in one step.


def _written(formats: list[str], numbers: list[float]) -> bytes:
    text = "\n".join(formats).replace("%f", "%s")
    return (text % tuple([str(int(x)) if x.is_integer() else f"{x:f}".rstrip("0")
                          for x in numbers])).encode("ascii")


_LETTERS = re.compile(r"([MmLlHhVvCcQqAaZz])")
_STRAY = re.compile(r"[^MmLlHhVvCcQqAaZz\d\s,.eE+-]")      # "inf", "nan", "1_000", other letters


def _tokens(data: str) -> list | None:
    """Path data as [letter, numbers...] groups, or None on anything unexpected.
    Numbers apart by spaces or commas are read by float() in bulk; path data that
    runs numbers together ("1.5.5", "10-5") is read number by number."""
    pieces = _LETTERS.split(data)
    if pieces[0].strip() or _STRAY.search(data):
        return None
    try:
        return [[pieces[i], *map(float, pieces[i + 1].replace(",", " ").split())]
                for i in range(1, len(pieces), 2)]
    except ValueError:
        pass
    groups, current = [], None
    for letter, number, _space, other in _TOKEN.findall(data):
        if other:
            return None
        if letter:
            current = [letter]
            groups.append(current)
        elif number:
            if current is None:
                return None
            current.append(float(number))
    return groups


def _rotate(x: float, y: float, angle: float) -> tuple[float, float]:
    return x * math.cos(angle) - y * math.sin(angle), y * math.cos(angle) + x * math.sin(angle)


def _arc(x1, y1, rx, ry, rotation, large, sweep, x3, y3) -> list[tuple]:
    """The cubic curves weasyprint's svg/path.py draws for an elliptic arc from
    (x1, y1) to (x3, y3) (radii not zero), step by step as it computes them."""
    rotation = math.radians(rotation)
    xe, ye = _rotate(x3 - x1, y3 - y1, -rotation)
    y_scale = ry / rx
    ye /= y_scale
    angle = math.atan2(ye, xe)
    xe, ye = (xe ** 2 + ye ** 2) ** .5, 0
    rx = max(rx, xe / 2)
    xc = xe / 2
    yc = (rx ** 2 - xc ** 2) ** .5
    if large == sweep:
        yc = -yc
    xe, ye = _rotate(xe, ye, angle)
    xc, yc = _rotate(xc, yc, angle)
    angle1, angle2 = math.atan2(-yc, -xc), math.atan2(ye - yc, xe - xc)
    while angle1 < 0 or angle2 < 0:
        angle1 += 2 * math.pi
        angle2 += 2 * math.pi
    if math.isclose(abs(angle2 - angle1), math.pi):
        if sweep and angle2 < angle1:
            angle1 -= 2 * math.pi
        elif not sweep and angle2 > angle1:
            angle2 -= 2 * math.pi
    elif large == (abs(angle2 - angle1) < math.pi):
        if angle1 > angle2:
            angle1 -= 2 * math.pi
        else:
            angle2 -= 2 * math.pi
    if large:
        step = (angle2 - angle1) / 3
        angles = ((angle1, angle1 + step), (angle1 + step, angle1 + 2 * step),
                  (angle1 + 2 * step, angle2))
    else:
        angles = ((angle1, angle2),)
    a, b = math.cos(rotation), math.sin(rotation)
    c, d = -math.sin(rotation) * y_scale, math.cos(rotation) * y_scale

    def moved(x, y):                     # weasyprint's Matrix.transform_point, same order
        return 0 + x * a + y * c + 1 * x1, 0 + x * b + y * d + 1 * y1
    h = 4 / 3 * math.tan((angles[0][1] - angles[0][0]) / 4)
    curves = []
    for angle1, angle2 in angles:
        curves.append((*moved(xc + rx * math.cos(angle1) - h * rx * math.sin(angle1),
                              yc + rx * math.sin(angle1) + h * rx * math.cos(angle1)),
                       *moved(xc + rx * math.cos(angle2) + h * rx * math.sin(angle2),
                              yc + rx * math.sin(angle2) - h * rx * math.cos(angle2)),
                       *moved(xc + rx * math.cos(angle2), yc + rx * math.sin(angle2))))
    return curves


def _path_ops(data: str) -> bytes | None:
    """PDF path operators for SVG path data (M L H V C Q A Z, absolute or relative),
    as weasyprint's svg/path.py builds them; None for anything else."""
    groups = _tokens(data)
    if groups is None:
        return None
    fmt: list[str] = ["0 0 m"]          # weasyprint starts every path there
    out: list[float] = []
    x = y = 0.0
    start = None
    for letter, *args in groups:
        # The commands of outlined text, absolute and one segment each, first.
        if letter == "Q" and len(args) == 4:
            qx, qy, ex, ey = args
            fmt.append("%f %f %f %f %f %f c")
            out += (qx * 2 / 3 + x / 3, qy * 2 / 3 + y / 3,
                    qx * 2 / 3 + ex / 3, qy * 2 / 3 + ey / 3, ex, ey)
            x, y = ex, ey
            continue
        if letter == "L" and len(args) == 2:
            fmt.append("%f %f l")
            out += args
            x, y = args
            continue
        kind = letter.upper()
        need = _ARGS[kind]
        if need == 0:
            if args:
                return None
            if start is not None:
                fmt.append("h")
                x, y = start
            continue
        if not args or len(args) % need:
            return None
        for i in range(0, len(args), need):
            a = args[i:i + need]
            if kind == "A":
                rx, ry, rotation, large, sweep, ex, ey = a
                if large not in (0, 1) or sweep not in (0, 1) or not rx or not ry:
                    # Flags run together with numbers, or a zero radius (weasyprint
                    # then draws a line to the end point taken as relative): its own.
                    return None
                if letter == "a":
                    ex, ey = ex + x, ey + y
                for curve in _arc(x, y, rx, ry, rotation, bool(large), bool(sweep), ex, ey):
                    fmt.append("%f %f %f %f %f %f c")
                    out += curve
                x, y = ex, ey
                continue
            if letter.islower():
                a = ([a[0] + (x if kind == "H" else y)] if need == 1 else
                     [v + (x if j % 2 == 0 else y) for j, v in enumerate(a)])
            if kind == "C":
                fmt.append("%f %f %f %f %f %f c")
                out += a
                x, y = a[4], a[5]
            elif kind == "Q":                # raised to a cubic curve, as weasyprint does
                qx, qy, ex, ey = a
                fmt.append("%f %f %f %f %f %f c")
                out += (qx * 2 / 3 + x / 3, qy * 2 / 3 + y / 3,
                        qx * 2 / 3 + ex / 3, qy * 2 / 3 + ey / 3, ex, ey)
                x, y = ex, ey
            else:
                if kind == "H":
                    x = a[0]
                elif kind == "V":
                    y = a[0]
                else:
                    x, y = a
                # An M's first pair moves; the pairs after it are lines.
                move = kind == "M" and i == 0
                fmt.append("%f %f m" if move else "%f %f l")
                out += (x, y)
                if move:
                    start = (x, y)
    return _written(fmt, out)


def _polygon_ops(points: str) -> bytes | None:
    groups = _tokens("M" + points)
    if groups is None or len(groups) != 1 or len(groups[0]) < 3 or len(groups[0]) % 2 == 0:
        return None
    values = groups[0][1:]
    return _written(["%f %f m"] + ["%f %f l"] * (len(values) // 2 - 1) + ["h"], values)


def _circle_ops(cx: float, cy: float, r: float) -> bytes:
    # weasyprint's circle: four cubic curves with control points r/sqrt(pi) out.
    k = r / math.sqrt(math.pi)
    values = [cx + r, cy,
              cx + r, cy + k, cx + k, cy + r, cx, cy + r,
              cx - k, cy + r, cx - r, cy + k, cx - r, cy,
              cx - r, cy - k, cx - k, cy - r, cx, cy - r,
              cx + k, cy - r, cx + r, cy - k, cx + r, cy]
    return _written(["%f %f m"] + ["%f %f %f %f %f %f c"] * 4 + ["h"], values)


def _attributes(node) -> dict | None:
    """A shape's presentation attributes (its style declarations over its attributes)."""
    tag = node.tag.removeprefix(_SVG_NS)
    keys = _SHAPE_KEYS.get(tag)
    if keys is None or len(node) or (node.text or "").strip() or set(node.attrib) - keys - _PAINT_KEYS:
        return None
    attrs = {k: v for k, v in node.attrib.items() if k != "style"}
    for declaration in (node.get("style") or "").split(";"):
        if declaration.strip():
            name, sep, value = declaration.partition(":")
            if not sep or name.strip() not in _PAINT_KEYS:
                return None
            attrs[name.strip()] = value.strip()
    return {"tag": tag, **attrs}


def _shape(attrs: dict) -> bytes | None:
    tag = attrs["tag"]
    if tag == "path":
        return _path_ops(attrs.get("d", ""))
    if tag == "polygon":
        return _polygon_ops(attrs.get("points", ""))
    values = [attrs.get(k, "0") for k in ("cx", "cy", "r")]
    if not all(_PLAIN.match(v) for v in values):
        return None
    cx, cy, r = map(float, values)
    return _circle_ops(cx, cy, r) if r > 0 else None


class PathFigure:
    """A compiled schematic for weasyprint's image cache (its image interface:
    get_intrinsic_size and draw)."""

    def __init__(self, width: float, height: float, viewbox, items):
        self._width, self._height, self._viewbox, self._items = width, height, viewbox, items

    def get_intrinsic_size(self, image_resolution, font_size):
        return self._width, self._height, self._width / self._height

    def draw(self, stream, concrete_width, concrete_height, _style):
        """The operators weasyprint's SVG drawing writes for the same SVG."""
        vx, vy, vw, vh = self._viewbox
        scale = min(concrete_width / vw, concrete_height / vh)        # xMidYMid meet
        stream.push_state()
        stream.transform(e=0, f=0)
        stream.transform(a=scale, d=scale, e=(concrete_width - vw * scale) / 2 - vx * scale,
                         f=(concrete_height - vh * scale) / 2 - vy * scale)
        for paint, ops in self._items:
            stream.push_state()
            fill, stroke, width, dashes, cap, join, even_odd = paint
            if fill is not None:
                stream.set_color(fill)
            if stroke is not None:
                stream.set_color(stroke, stroke=True)
                stream.set_line_width(width)
            stream.set_dash(dashes, 0)
            stream.set_line_cap(cap)
            stream.set_line_join(join)
            stream.set_miter_limit(4)
            stream.stream.append(ops)
            if fill is not None and stroke is not None:
                stream.fill_and_stroke(even_odd)
            elif stroke is not None:
                stream.stroke()
            elif fill is not None:
                stream.fill(even_odd)
            else:
                stream.end()
            stream.pop_state()
        stream.pop_state()


def _paint(attrs: dict, diagonal: float):
    """(fill, stroke, width, dashes, cap, join, even_odd) as weasyprint's
    set_graphical_state reads them, or None for a paint it would not take plainly."""
    from weasyprint.svg.utils import color, size
    values = {}
    for key, default in (("fill", "black"), ("stroke", "")):
        value = attrs.get(key, default).strip()
        if value.startswith(("url", "context")) or "(" in value and not value.startswith("#"):
            return None
        values[key] = None if value in ("", "none") else color(value)
        if values[key] is not None and values[key].alpha != 1:
            return None
    width_text = attrs.get("stroke-width", "1px")
    if "%" in width_text:
        return None
    width = size(width_text, 12, diagonal)
    stroke = values["stroke"] if width else None
    dash_text = attrs.get("stroke-dasharray", "")
    if "%" in dash_text:
        return None
    from weasyprint.svg.utils import normalize
    dashes = tuple(size(v, 12, diagonal) for v in normalize(dash_text).split() if v != "none")
    if not dashes or all(v == 0 for v in dashes) or any(v < 0 for v in dashes):
        dashes = ()
    return (values["fill"], stroke, width, dashes,
            _CAPS.get(attrs.get("stroke-linecap"), 0), _JOINS.get(attrs.get("stroke-linejoin"), 0),
            attrs.get("fill-rule") == "evenodd")


def compile_svg(svg: str) -> PathFigure | None:
    """The schematic ``svg`` compiled for weasyprint, or None when it holds
    anything this module does not draw exactly as weasyprint would."""
    from weasyprint.svg.utils import size
    try:
        root = ElementTree.fromstring(svg.encode("utf-8"))
    except ElementTree.ParseError:
        return None
    if root.tag != _SVG_NS + "svg" or set(root.attrib) - _ROOT_KEYS or (root.text or "").strip():
        return None
    box = root.get("viewBox", "").replace(",", " ").split()
    sizes = [root.get("width", ""), root.get("height", "")]
    if len(box) != 4 or not all(_PLAIN.match(v) for v in box) \
            or not all(re.fullmatch(r"[\d.]+(pt|px)?", s) for s in sizes):
        return None
    viewbox = tuple(map(float, box))
    width, height = (size(s, 12) for s in sizes)
    if not (viewbox[2] > 0 and viewbox[3] > 0 and width > 0 and height > 0):
        return None
    diagonal = math.hypot(viewbox[2], viewbox[3]) / math.sqrt(2)
    items = []
    for node in root:
        if (node.tail or "").strip():
            return None
        attrs = _attributes(node)
        if attrs is None:
            return None
        paint, ops = _paint(attrs, diagonal), _shape(attrs)
        if paint is None or ops is None:
            return None
        items.append((paint, ops))
    return PathFigure(width, height, viewbox, items)
