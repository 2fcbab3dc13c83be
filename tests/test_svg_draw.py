"""The schematics compiled to PDF operators (rcdoc.note.svg_draw) against
weasyprint's own SVG drawing of the same SVG, the reference they stand in for.

Reference: weasyprint (a general-purpose HTML/CSS/SVG renderer) drawing each
SVG into a page stream: the compiled figure must write the same operators in
the same order, with the same numbers to the six decimals pydyf writes, the
same graphics-state resources and the same intrinsic size.
"""

from __future__ import annotations

import re

import pydyf
import pytest
from weasyprint.pdf.stream import Stream

from rcdoc.note import pdf_images, svg_draw     # imports weasyprint before schemdraw draws

_NUMBER = re.compile(rb"^-?\d+\.?\d*$")


def _drawn(image, width: float, height: float) -> tuple[list[bytes], dict]:
    """The operators ``image`` writes into a fresh page stream, as tokens, and the
    stream's resources."""
    resources = {key: pydyf.Dictionary() for key in ("ExtGState", "XObject", "Pattern", "Shading")}
    stream = Stream({}, (0, 0, 600, 800), resources, {}, [], {}, None)
    image.draw(stream, width, height, None)
    return b"\n".join(pydyf._to_bytes(item) for item in stream.stream).split(), resources


def _same_drawing(svg: str, scale: float = 0.87) -> None:
    ours = svg_draw.compile_svg(svg)
    assert ours is not None
    theirs = pdf_images.weasy_svg_image("rcdoc-figure:test", svg)
    size = theirs.get_intrinsic_size(1, 16)
    assert ours.get_intrinsic_size(1, 16) == pytest.approx(size, rel=1e-12)
    # Drawn into a box of another size and shape than its own: the viewBox's fit too.
    ops_theirs, res_theirs = _drawn(theirs, size[0] * scale, size[1] * scale * 1.1)
    ops_ours, res_ours = _drawn(ours, size[0] * scale, size[1] * scale * 1.1)
    assert res_ours == res_theirs
    assert len(ops_ours) == len(ops_theirs)
    for a, b in zip(ops_ours, ops_theirs):
        if a != b:
            # The same number written with six decimals: "9." for 9.000000000000002.
            assert _NUMBER.match(a) and _NUMBER.match(b) and abs(float(a) - float(b)) <= 1e-6, (a, b)


def _example_schematics() -> list[tuple[str, str]]:
    from rcdoc.kinds import kind_of, load_project
    from rcdoc.note.report import shipped_templates_dir
    from rcdoc.note.schematic import render_svg
    project = load_project(shipped_templates_dir().parent / "projects" / "greenhouse-controller.toml")
    return [(stage.id, render_svg(kind_of(stage).schematic(stage))) for stage in project.stages]


@pytest.mark.slow
def test_every_schematic_of_the_example_is_drawn_as_weasyprint_draws_it():
    drawn = _example_schematics()
    assert any(re.search(r'd="[^"]*[Aa]', svg) for _, svg in drawn)     # a coil's arcs
    for stage, svg in drawn:
        _same_drawing(svg)


SVG = ('<svg xmlns="http://www.w3.org/2000/svg" width="120pt" height="60pt" '
       'viewBox="-10 -20 160 80">{}</svg>')


@pytest.mark.parametrize("body", [
    # Relative commands, implicit repeats, H and V, a cubic and a quadratic curve, Z.
    '<path d="M 1,2 l 10 0 5 5 h 7 v -3 H 40 V 1 c 1 2 3 4 5 6 q 1 1 2 0 Z m 3 3 L 50 50 z" '
    'style="stroke:black;fill:none;stroke-width:1.4;stroke-linecap:round;stroke-linejoin:bevel" />',
    '<path d="M1e1-2.5.5.5Q 3 4 5 6 T" fill="#555555" />'.replace(" T", ""),
    '<polygon points="0,0 10,0 10,10" style="stroke:#555555;fill:white;stroke-width:1.0;'
    'stroke-dasharray:7.4,3.2;" fill-rule="evenodd" />',
    '<circle cx="5" cy="-4" r="3.24" style="stroke:black;fill:black;stroke-width:1.4;'
    'stroke-dasharray:-;" />',
    '<path d="M 0 0 L 10 10" style="stroke:black;stroke-width:0" />',
    # Arcs: small and large, both sweeps, rotated, elliptic, relative, a radius too
    # small for its chord, a half turn.
    '<path d="M 144 -144 a 4.5 4.5 0 1 1 9 0 a 4.5 4.5 0 1 1 9 0 A 3 6 30 0 0 170 -130 '
    'a 5 2 -45 1 0 -8 4 A 1 1 0 0 1 200 -120 A 5 5 0 0 0 190 -120" '
    'style="stroke:black;fill:none;stroke-width:1.4" />',
    '<path d="M 10 10 A 5 5 0 1 1 20 10 Z" fill="white" stroke="black" />',
])
def test_shapes_are_drawn_as_weasyprint_draws_them(body):
    _same_drawing(SVG.format(body))


@pytest.mark.parametrize("svg", [
    SVG.format('<path d="M 0 0 A 5 5 0 11 10 10" stroke="black" />'),          # flags run together
    SVG.format('<path d="M 0 0 A 0 4 0 0 1 10 10" stroke="black" />'),         # a zero radius
    SVG.format('<path d="M 0 0 S 1 1 2 2" stroke="black" />'),                 # a smooth curve
    SVG.format('<g><path d="M 0 0 L 1 1" stroke="black" /></g>'),              # a group
    SVG.format('<path d="M 0 0 L 1 1" transform="scale(2)" stroke="black" />'),
    SVG.format('<path d="M 0 0 L 1 1" stroke="black" opacity="0.5" />'),
    SVG.format('<path d="M 0 0 L 1 1" style="stroke:url(#g)" />'),
    SVG.format('<path d="M 0 0 L 1 1" style="stroke:rgba(0,0,0,0.5)" />'),
    SVG.format('<text x="0" y="0">R1</text>'),
    SVG.format('<circle cx="0" cy="0" r="2em" stroke="black" />'),
    SVG.format('<path d="M 0 0 L 1 1 2" stroke="black" />'),                  # an odd number
    SVG.format('<path d="M 0 0 L nan 1" stroke="black" />'),
    SVG.format('<path d="M 0 0 L 1_000 1" stroke="black" />'),
    SVG.format("").replace('width="120pt"', 'width="100%"'),
    SVG.format("").replace(' viewBox="-10 -20 160 80"', ""),
    "<svg xmlns='http://www.w3.org/2000/svg'",                                 # not XML
])
def test_what_it_does_not_draw_exactly_is_left_to_weasyprint(svg):
    assert svg_draw.compile_svg(svg) is None
    if svg.endswith("</svg>"):
        # pdf_images.svg_image then hands weasyprint's own SVG image to the cache.
        assert not isinstance(pdf_images.svg_image("rcdoc-figure:x", svg), svg_draw.PathFigure)


def test_numbers_are_written_as_pydyf_writes_them():
    # pydyf 0.13's _to_bytes, the reference: a whole float without a point (minus
    # zero as "0"), any other with six decimals less its trailing zeros.
    values = [0.0, -0.0, 5.0, -12.0, 1e-7, -1e-7, 0.1, -2.5, 123.4567891, 9.000000000000002,
              1e15, 2.0 ** 60, 0.0000015, -99.9999996]
    written = svg_draw._written(["%f"] * len(values), values).split(b"\n")
    assert written == [pydyf._to_bytes(v) for v in values]
    assert written[:6] == [b"0", b"0", b"5", b"-12", b"0.", b"-0."]
    # Operators around the numbers stay as they are.
    assert svg_draw._written(["0 0 m", "%f %f l", "h"], [1.5, -0.0]) == b"0 0 m\n1.5 0 l\nh"
