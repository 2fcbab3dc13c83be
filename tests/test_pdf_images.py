"""Tests of rcdoc.note.pdf_images: charts written back as indexed images.

Sources: the PNG format (ISO/IEC 15948: an IDAT of 8-bit RGB rows with their
filter bytes) as written and read by Pillow, a general-purpose imaging
library; the /Indexed colour space (ISO 32000-1 §8.6.6.3: a base space, the
highest index, a lookup string of three bytes per entry, one byte per pixel
at 8 bits) as read back by pypdf, a general-purpose PDF library, and pixels
as drawn by weasyprint itself.
"""

from __future__ import annotations

import base64
import io
import shutil
import subprocess
import zlib

import numpy as np
import pypdf
import pytest
import weasyprint
from PIL import Image

from rcdoc.note import pdf_images


def _idat(image: Image.Image) -> bytes:
    """The deflated, PNG-predicted rows of ``image`` saved as a PNG by Pillow."""
    out = io.BytesIO()
    image.save(out, format="PNG")
    data, raw, pos = b"", out.getvalue(), 8
    while pos < len(raw):
        n = int.from_bytes(raw[pos:pos + 4], "big")
        if raw[pos + 4:pos + 8] == b"IDAT":
            data += raw[pos + 8:pos + 8 + n]
        pos += 12 + n
    return data


def _few_colours(w: int, h: int, n: int, seed: int = 1) -> np.ndarray:
    rng = np.random.default_rng(seed)
    colours = rng.integers(0, 256, size=(n, 3), dtype=np.uint8)
    return colours[rng.integers(0, n, size=(h, w))]


def test_indexed_gives_back_every_pixel():
    rgb = _few_colours(37, 23, 200)
    palette, data = pdf_images.indexed(37, 23, _idat(Image.fromarray(rgb, "RGB")))
    table = np.frombuffer(palette, np.uint8).reshape(-1, 3)
    index = np.frombuffer(zlib.decompress(data), np.uint8).reshape(23, 37)
    # ISO 32000-1 §8.6.6.3: pixel = lookup[index]; the lookup is the colours used.
    assert (table[index] == rgb).all()
    assert len(table) == len(np.unique(rgb.reshape(-1, 3), axis=0))
    # Sorted palette: the same image always gives the same bytes.
    packed = [(int(r) << 16) | (int(g) << 8) | int(b) for r, g, b in table]
    assert packed == sorted(packed)


def test_more_than_256_colours_are_left_alone():
    rgb = _few_colours(40, 40, 1000, seed=2)
    assert len(np.unique(rgb.reshape(-1, 3), axis=0)) > 256
    assert pdf_images.indexed(40, 40, _idat(Image.fromarray(rgb, "RGB"))) is None


@pytest.mark.parametrize("colours", [12, 256, 1000])
def test_finisher_keeps_the_pixels_weasyprint_drew(colours):
    rgb = _few_colours(60, 30, colours, seed=colours)
    image = Image.fromarray(rgb, "RGB")
    if colours <= 256:        # the charts' case: an indexed PNG
        image = image.quantize(colors=256, method=Image.Quantize.FASTOCTREE,
                               dither=Image.Dither.NONE)
    png = io.BytesIO()
    image.save(png, format="PNG")
    url = "data:image/png;base64," + base64.b64encode(png.getvalue()).decode()
    html = weasyprint.HTML(string=f'<img src="{url}" style="width:6cm">')
    plain = html.write_pdf()
    small = html.write_pdf(finisher=pdf_images.index_images)
    imgs = [pypdf.PdfReader(io.BytesIO(b)).pages[0].images[0] for b in (plain, small)]
    want = np.asarray(image.convert("RGB"))
    assert (np.asarray(imgs[0].image.convert("RGB")) == want).all()
    assert (np.asarray(imgs[1].image.convert("RGB")) == want).all()
    space = pypdf.PdfReader(io.BytesIO(small)).pages[0]["/Resources"]["/XObject"]
    space = next(iter(space.values())).get_object()["/ColorSpace"]
    if colours <= 256:
        assert space[0] == "/Indexed" and space[1] == "/DeviceRGB"
    else:
        assert space == "/DeviceRGB"
    # Deterministic: the same document, the same bytes.
    assert html.write_pdf(finisher=pdf_images.index_images) == small


def _palette_png(w: int, h: int, colours: int, seed: int, **save) -> tuple[bytes, np.ndarray]:
    """A palette PNG written by Pillow (which picks 1, 2, 4 or 8 bits from the
    palette's size) and its pixels as Pillow reads them back."""
    rng = np.random.default_rng(seed)
    index = rng.integers(0, colours, size=(h, w), dtype=np.uint8)
    image = Image.fromarray(index, "P")
    image.putpalette(rng.integers(0, 256, size=3 * colours, dtype=np.uint8).tobytes())
    out = io.BytesIO()
    image.save(out, format="PNG", **save)
    data = out.getvalue()
    return data, np.asarray(Image.open(io.BytesIO(data)).convert("RGB"))


@pytest.mark.parametrize("colours", [17, 200, 256])
def test_palette_png_goes_into_the_pdf_as_it_is(colours, tmp_path):
    # ISO 32000-1 §7.4.4.4: PNG predictors (Predictor >= 10) read rows with PNG's
    # filter bytes, so a palette PNG's IDAT under /Indexed (§8.6.6.3) keeps every
    # pixel. References: the pixels Pillow decodes from the PNG, against those
    # pypdf decodes from the PDF and those poppler's pdfimages takes out of it.
    for width in (37, 9):
        png, want = _palette_png(width, 11, colours, seed=colours + width)
        w, h, bits, _palette, _idat = pdf_images.palette_png(png)
        assert (w, h, bits) == (width, 11, 8)
        url = pdf_images.FIGURE_SCHEME + "test"
        html = weasyprint.HTML(string=f'<img src="{url}" style="width:6cm">')
        data = html.write_pdf(cache={url: pdf_images.IndexedPNG(url, png)})
        image = pypdf.PdfReader(io.BytesIO(data)).pages[0].images[0]
        assert (np.asarray(image.image.convert("RGB")) == want).all()
        if shutil.which("pdfimages"):
            (tmp_path / "n.pdf").write_bytes(data)
            subprocess.run(["pdfimages", "-png", str(tmp_path / "n.pdf"), str(tmp_path / "x")],
                           check=True)
            got = np.asarray(Image.open(tmp_path / "x-000.png").convert("RGB"))
            assert (got == want).all()
        # The same bytes the next time (no clock, no random order).
        again = html.write_pdf(cache={url: pdf_images.IndexedPNG(url, png)})
        assert again == data


def test_palette_png_refuses_what_it_cannot_pass_through():
    png, _ = _palette_png(8, 8, 40, seed=3)
    assert pdf_images.palette_png(png) is not None
    # Fewer than 8 bits (Pillow writes 4 for 16 colours): weasyprint's own path.
    four, _ = _palette_png(8, 8, 16, seed=3)
    assert four[24] == 4 and pdf_images.palette_png(four) is None
    # Transparency (tRNS): weasyprint's own path makes the soft mask.
    transparent, _ = _palette_png(8, 8, 40, seed=3, transparency=0)
    assert pdf_images.palette_png(transparent) is None
    # Interlaced rows (Adam7) are no PDF predictor's rows.
    interlaced = bytearray(png)
    interlaced[28] = 1
    assert pdf_images.palette_png(bytes(interlaced)) is None
    rgb = io.BytesIO()
    Image.fromarray(_few_colours(8, 8, 5), "RGB").save(rgb, format="PNG")
    assert pdf_images.palette_png(rgb.getvalue()) is None
    assert pdf_images.palette_png(png[:40]) is None          # cut short
    assert pdf_images.palette_png(b"<svg/>") is None


@pytest.mark.slow
def test_note_figures_keep_their_pixels_in_one_document_and_in_parts(tmp_path):
    # The note's PNG figures go to weasyprint by a short URL and its image cache;
    # the PDF, rendered whole or in parts, holds them pixel for pixel (reference:
    # Pillow's decoding of the PNG against pypdf's decoding of the PDF).
    import copy

    from test_report import make_context

    from rcdoc.note import pdf, report
    png, want = _palette_png(120, 50, 180, seed=7)
    ctx = copy.deepcopy(make_context())
    ctx["stages"][0]["blocks"].insert(0, {"type": "figure", "title": "Chart", "image": png,
                                          "caption": "", "width": "full"})
    figures: dict = {}
    html = report.render_html(ctx, figures=figures)
    assert list(figures.values()) == [png] and next(iter(figures)) in html
    assert "data:image/png" not in html
    assert "data:image/png" in report.render_html(ctx)     # without figures: data URLs
    for name, dirs in (("parts.pdf", ()), ("one.pdf", None)):
        if dirs is None:                 # an own note.html: one document
            own = tmp_path / "tpl"
            own.mkdir()
            (own / "note.html").write_text(
                (report.shipped_templates_dir() / "note.html").read_text() + "\n")
            dirs = [own]
        pdf.render_pdf(ctx, tmp_path / name, template_dirs=dirs)
        found = [i for p in pypdf.PdfReader(tmp_path / name).pages for i in p.images
                 if i.image.size == (120, 50)]
        assert found and all((np.asarray(i.image.convert("RGB")) == want).all() for i in found)


@pytest.mark.slow
def test_schematic_from_the_image_cache_draws_as_its_data_url(tmp_path):
    # A text-free SVG (a schematic, its text as outlines) handed to weasyprint through
    # its image cache (report.figure_images) must draw the same pixels as the same SVG
    # fetched from a data: URL. Reference: weasyprint's own SVG loading, poppler's pdftoppm.
    if shutil.which("pdftoppm") is None:
        pytest.skip("pdftoppm (poppler-utils) not installed")
    from rcdoc.kinds.recipes import Label, ladder
    from rcdoc.note import report
    from rcdoc.note.schematic import render_svg
    svg = render_svg(ladder([("series", "R", Label("R14", "4.7 kΩ")),
                             ("shunt", "C", Label("C9", "10 nF"))]))
    assert "<text" not in svg
    figures: dict = {}
    token = report._FIGURES.set(figures)
    try:
        cached = str(report._figure_markup(svg, "schematic"))
    finally:
        report._FIGURES.reset(token)
    plain = str(report._figure_markup(svg, "schematic"))
    assert "data:" not in cached and "data:image/svg+xml" in plain and list(figures.values()) == [svg]
    pixels = []
    for name, img, cache in (("a", plain, {}), ("b", cached, report.figure_images(figures, {}))):
        html = weasyprint.HTML(string=f'<div style="width:12cm">{img}</div>'
                               '<style>img{width:100%}</style>')
        (tmp_path / f"{name}.pdf").write_bytes(html.write_pdf(cache=cache))
        subprocess.run(["pdftoppm", "-png", "-r", "100", "-singlefile", tmp_path / f"{name}.pdf",
                        tmp_path / name], check=True)
        pixels.append(np.asarray(Image.open(tmp_path / f"{name}.png").convert("L")))
    assert (pixels[0] < 128).sum() > 500          # the schematic was drawn
    assert (pixels[0] == pixels[1]).all()
