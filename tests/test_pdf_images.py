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
