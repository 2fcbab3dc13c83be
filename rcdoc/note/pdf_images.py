"""Charts back to indexed colour inside the PDF that weasyprint writes.

What it is for: the note's charts are indexed-colour PNGs (rcdoc.note.charts,
at most 256 colours), but weasyprint turns every palette image into 8-bit RGB
before it writes it, which made the charts three quarters of a 40-stage
note's bytes. ``index_images`` is a weasyprint *finisher* (called on the
pydyf document before it is written): it rewrites each RGB image of at most
256 distinct colours as an /Indexed image (ISO 32000-1 §8.6.6.3) with the
same pixels, one byte each. Lossless and deterministic (palette in sorted
colour order, zlib at a fixed level): the same chart, the same bytes.

``IndexedPNG`` goes further for the note's own figures: weasyprint would
decode each palette PNG, convert it to RGB, deflate it twice and the finisher
would decode and deflate it once more (a fifth of the note's render). Given to
weasyprint ready-made (report.py puts it in the image cache under the figure's
URL), a palette PNG becomes an /Indexed image whose data are the PNG's own
compressed rows: PNG row filters are the PDF's PNG predictors (ISO 32000-1
§7.4.4.4), so nothing is decoded or compressed again.

What it must not do: change any pixel, or touch an image it does not
understand (other colour spaces, soft masks, JPEG, other predictors).
"""

from __future__ import annotations

import io
import struct
import zlib
from hashlib import md5

import numpy as np
import pydyf
from rcdoc.note import renderer_libs  # noqa: F401 - weasyprint, without ctypes' library search
from weasyprint.images import RasterImage

__all__ = ["index_images", "indexed", "palette_png", "IndexedPNG", "svg_image", "weasy_svg_image",
           "FIGURE_SCHEME"]

#: The URL scheme of the note's own figures (PNG, SVG) in its HTML ("rcdoc-figure:<sha256>"):
#: never fetched, always found in the image cache (report.figure_images).
FIGURE_SCHEME = "rcdoc-figure:"

#: zlib level of the index bytes: 6 wrote 16 % more bytes than 9 on the
#: 40-stage note's charts but took a fifth of the time (README, Performance).
_LEVEL = 6


def _png(width: int, height: int, idat: bytes) -> bytes:
    """A PNG file around weasyprint's image data (PNG-predicted 8-bit RGB rows,
    deflated: exactly a PNG's IDAT), so that Pillow undoes the predictors."""
    def chunk(kind: bytes, data: bytes) -> bytes:
        return (struct.pack("!I", len(data)) + kind + data
                + struct.pack("!I", zlib.crc32(kind + data)))
    head = struct.pack("!IIBBBBB", width, height, 8, 2, 0, 0, 0)   # 8-bit RGB
    return b"\x89PNG\r\n\x1a\n" + chunk(b"IHDR", head) + chunk(b"IDAT", idat) + chunk(b"IEND", b"")


def indexed(width: int, height: int, idat: bytes,
            table: np.ndarray | None = None) -> tuple[bytes, bytes] | None:
    """(palette, deflated indices) of an RGB image given as its PNG IDAT data,
    or None when it has more than 256 colours. The palette is the image's own
    colours in sorted order, three bytes each; an index is one byte per pixel.
    ``table``: 2^24 zero bytes to work in (left zero), to reuse between images."""
    from PIL import Image
    image = Image.open(io.BytesIO(_png(width, height, idat)))
    colours = image.getcolors(256)
    if colours is None:
        return None
    rgb = np.asarray(image)
    packed = ((rgb[..., 0].astype(np.uint32) << 16) | (rgb[..., 1].astype(np.uint32) << 8)
              | rgb[..., 2])
    palette = np.array(sorted((r << 16) | (g << 8) | b for _n, (r, g, b) in colours),
                       dtype=np.uint32)
    # Colour -> index through a table over all 2^24 colours (only the palette's
    # entries written, and cleared again): one gather per pixel.
    if table is None:
        table = np.zeros(1 << 24, dtype=np.uint8)
    table[palette] = np.arange(palette.size, dtype=np.uint8)
    index = table[packed]
    table[palette] = 0
    rgb_palette = np.stack([(palette >> 16) & 255, (palette >> 8) & 255, palette & 255],
                           axis=1).astype(np.uint8)
    return rgb_palette.tobytes(), zlib.compress(index.tobytes(), _LEVEL)


def _plain_rgb(extra) -> bool:
    """True for the image streams weasyprint writes for an opaque PNG."""
    parms = extra.get("DecodeParms") or {}
    return (extra.get("Subtype") == "/Image" and extra.get("ColorSpace") == "/DeviceRGB"
            and extra.get("BitsPerComponent") == 8 and extra.get("Filter") == "/FlateDecode"
            and "SMask" not in extra and "Decode" not in extra
            and parms.get("Predictor") == 15 and parms.get("Colors") == 3)


def index_images(_document, pdf: pydyf.PDF) -> None:
    """weasyprint finisher: every opaque RGB image of at most 256 colours in
    ``pdf`` becomes an /Indexed image with the same pixels."""
    table = None         # 16 MiB: made only for a document with such an image
    for obj in pdf.objects:
        if not isinstance(obj, pydyf.Stream) or obj.compress or not _plain_rgb(obj.extra):
            continue
        width, height = int(obj.extra["Width"]), int(obj.extra["Height"])
        if len(obj.stream) != 1:      # not one block of image data: leave it
            continue
        idat = pydyf._to_bytes(obj.stream[0])
        if table is None:
            table = np.zeros(1 << 24, dtype=np.uint8)
        done = indexed(width, height, idat, table)
        if done is None:
            continue
        palette, data = done
        obj.stream = [data]
        obj.extra["ColorSpace"] = pydyf.Array(
            ["/Indexed", "/DeviceRGB", len(palette) // 3 - 1, b"<" + palette.hex().encode() + b">"])
        del obj.extra["DecodeParms"]


def palette_png(data: bytes) -> tuple[int, int, int, bytes, bytes] | None:
    """(width, height, bits, palette, IDAT data) of a PNG that is a plain palette
    image (colour type 3, 8 bits, not interlaced, no transparency), else None.
    Fewer bits (Pillow writes them for palettes of at most 16 colours) are left to
    weasyprint's own path: not every PDF reader unpacks them under /Indexed."""
    if not isinstance(data, bytes) or data[:8] != b"\x89PNG\r\n\x1a\n":
        return None
    pos, head, palette, idat = 8, None, None, []
    while pos + 8 <= len(data):
        size, kind = struct.unpack("!I4s", data[pos:pos + 8])
        body = data[pos + 8:pos + 8 + size]
        if len(body) != size:
            return None
        if kind == b"IHDR":
            head = struct.unpack("!IIBBBBB", body)
        elif kind == b"PLTE":
            palette = body
        elif kind == b"IDAT":
            idat.append(body)
        elif kind == b"tRNS":          # transparency: weasyprint's own path (a soft mask)
            return None
        elif kind == b"IEND":
            break
        pos += 12 + size
    if head is None or palette is None or not idat:
        return None
    width, height, bits, colour, _method, _filter, interlace = head
    if colour != 3 or interlace or bits != 8 or not 3 <= len(palette) <= 768:
        return None
    return width, height, bits, palette, b"".join(idat)


class IndexedPNG(RasterImage):
    """A palette PNG for weasyprint's image cache (see the module's docstring):
    laid out like weasyprint's own raster image, written as an /Indexed image
    with the PNG's compressed rows as they are. Build it only from data that
    ``palette_png`` accepts."""

    def __init__(self, url: str, data: bytes):     # noqa: D107 - RasterImage's __init__ re-encodes
        width, height, bits, palette, idat = palette_png(data)
        self.id = md5(url.encode(), usedforsecurity=False).hexdigest()   # as weasyprint names it
        self._cache, self._jpeg_quality, self._dpi = {}, None, None
        self.mode, self.format, self.optimize, self.invert_colors = "P", "PNG", False, False
        self.width, self.height = width, height
        self.ratio = width / height if height else float("inf")
        self._bits, self._palette, self._idat = bits, palette, idat

    def get_x_object(self, interpolate, dpi_ratio):
        # rcdoc sets no dpi option, so weasyprint never asks for a smaller copy.
        return pydyf.Stream([self._idat], pydyf.Dictionary({
            "Type": "/XObject", "Subtype": "/Image", "Width": self.width,
            "Height": self.height, "BitsPerComponent": self._bits,
            "ColorSpace": pydyf.Array(["/Indexed", "/DeviceRGB", len(self._palette) // 3 - 1,
                                       b"<" + self._palette.hex().encode() + b">"]),
            "Interpolate": "true" if interpolate else "false",
            "Filter": "/FlateDecode",
            "DecodeParms": pydyf.Dictionary({"Predictor": 15, "Colors": 1,
                                             "BitsPerComponent": self._bits,
                                             "Columns": self.width}),
        }))


def svg_image(url: str, svg: str):
    """An SVG figure (rcdoc's schematics: no text elements, no external references)
    for weasyprint's image cache: compiled to PDF path operators where
    rcdoc.note.svg_draw takes it (the same drawing, a fraction of the time),
    else as weasyprint parses an SVG it fetches (weasy_svg_image)."""
    from rcdoc.note import svg_draw
    return svg_draw.compile_svg(svg) or weasy_svg_image(url, svg)


def weasy_svg_image(url: str, svg: str):
    """An SVG figure for weasyprint's image cache, parsed as weasyprint parses an
    SVG it fetches. No layout context is given: it only serves SVG text, which
    these lack."""
    from xml.etree import ElementTree
    from weasyprint.images import SVGImage
    return SVGImage(ElementTree.fromstring(svg.encode("utf-8")), url, None, None)
