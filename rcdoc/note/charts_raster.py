"""The raster renderer of the note's charts: matplotlib's Agg with its text work kept.

A chart's PNG is drawn by matplotlib's Agg renderer, which lays out, measures
and rasterises every piece of text anew for every chart: most of a chart's
drawing time went to text whose strings ("0", "10 k", "Gain [dB]", the legend
entries) repeat from chart to chart. `TextCachingAgg` is that renderer with
three process-wide caches in front of the same FreeType calls:

- the size of a string (what matplotlib's layout asks for, per chart), worked
  out from the glyphs it is shaped into and each glyph's advance and box, as
  FreeType's set_text adds them up (set_text cost as much as the shaping: a
  string is laid out once, not twice; strings with glyphs of a fallback font
  are measured by set_text),
- the glyphs and their places that a string is shaped into,
- each glyph's coverage bitmap, by font, size, glyph and the fraction of a
  pixel where it lands (FreeType rasterises a glyph moved by whole pixels to
  the same bitmap, moved: the outline is placed relative to its own pixel
  grid; tests/test_charts_raster.py checks every pixel against plain Agg),
- with each shaped string, the bitmaps it was drawn as (its glyphs merged into
  one where no pixel is covered twice), by the fractions of a pixel where its
  glyphs land and the whole pixels between them: a string drawn again on the
  same fractions (a tick label on the next chart) is one lookup, placed.

Each string is drawn with its anchor on the nearest whole pixel (as matplotlib
placed text up to version 3.9; later versions place it to 1/64 pixel, so a
string's glyphs land on new fractions of a pixel nearly every time and are
rendered anew): text moves by at most half a pixel (0.08 mm at 150 dpi).
Otherwise the pixels are those of plain Agg; only the repeated work is gone.
The caches are keyed by everything the results depend on (string, font
properties, the text rcParams, resolution, hinting), and bounded.

`layout_once` spares a legend the same repetition: matplotlib works the
boxes of a legend (rows of a handle and a label, columns, the title) out
again for every box that asks, about thirty times in one drawing.
"""

from __future__ import annotations

import io
import math
import os
import threading

import matplotlib as mpl
import numpy as np
from matplotlib.backends.backend_agg import FigureCanvasAgg, RendererAgg, get_hinting_flag
from matplotlib.figure import Figure
from matplotlib.font_manager import fontManager, get_font

try:        # how matplotlib makes a font for get_font (unshared: _get_font's uncached body)
    from matplotlib.font_manager import FontPath, _cached_realpath
    from matplotlib.font_manager import _get_font as _shared_font
    _make_font = _shared_font.__wrapped__
except (ImportError, AttributeError):                  # pragma: no cover - other matplotlib
    FontPath = _cached_realpath = _make_font = None
from matplotlib.ft2font import RenderMode
from matplotlib.offsetbox import OffsetBox
from matplotlib.text import Text

_LIMIT = 50_000          # entries per cache: a note's charts use a few thousand
_RUNS_PER_STRING = 4096  # places of one string kept (by fractions of a pixel and glyph spacing)
_SIZES: dict = {}        # (string, font, dpi, ...) -> (width, height, descent)
_SHAPES: dict = {}       # (string, font, dpi, ...) -> (((ft font, glyph, x, y), ...), its runs)
_GLYPHS: dict = {}       # (ft font, size, dpi, glyph, matrix, x % 64, y % 64, ...) -> bitmap
_METRICS: dict = {}      # (font, glyph, flags, font key) -> (advance, box bottom, box top)
_HEIGHTS: dict = {}      # (font, dpi, ...) -> (ascent, descent, line gap)
_SIZED: dict = {}        # (font files, kerning, last resort, size, dpi) -> a font at that size
_AT_SIZE: set = set()    # those fonts: nothing else sets their size
_LAYOUTS: dict = {}      # (string, font, alignment, rotation, ...) -> Text._get_layout's answer

# rcParams that change how a string is shaped or rasterised (fonts found, hinting, kerning).
_TEXT_RC = ("font.family", "font.sans-serif", "font.serif", "font.monospace", "font.cursive",
            "font.fantasy", "font.style", "font.variant", "font.weight", "font.stretch",
            "text.hinting", "text.hinting_factor", "text.kerning_factor", "text.antialiased")


def _forget_fonts() -> None:
    """FreeType's fonts must not be used across a fork (matplotlib forgets its own too)."""
    _SIZED.clear()
    _AT_SIZE.clear()
    _SHAPES.clear()


if hasattr(os, "register_at_fork"):
    os.register_at_fork(after_in_child=_forget_fonts)


def _remember(cache: dict, key, value):
    if len(cache) >= _LIMIT:
        cache.clear()            # rare (never in one note); cheaper than an LRU's bookkeeping
    cache[key] = value
    return value


class TextCachingAgg(RendererAgg):
    """Agg with cached text measures, shapes and glyph bitmaps (plain Agg's pixels, text
    anchored on whole pixels)."""

    def __init__(self, width, height, dpi):
        super().__init__(width, height, dpi)
        self._rc_key = tuple(str(mpl.rcParams[k]) for k in _TEXT_RC if k in mpl.rcParams)
        # The rcParams stay as they are while a renderer draws (it is made for one drawing).
        self._hinting = get_hinting_flag()

    def _font_key(self, prop) -> tuple:
        return (tuple(prop.get_family()), prop.get_slant(), prop.get_variant(), prop.get_weight(),
                prop.get_stretch(), prop.get_size_in_points(), prop.get_file(),
                prop.get_math_fontfamily(), self.dpi, self._hinting, self._rc_key)

    def _prepare_font(self, font_prop):
        """RendererAgg._prepare_font: the font of ``font_prop`` cleared, at its size; here a
        font of this module's own per size and resolution, set to its size once (matplotlib
        shares one font object per file and sets its size at every use, which cost as much
        as rendering a glyph)."""
        files = fontManager._find_fonts_by_props(font_prop)
        size = font_prop.get_size_in_points()
        font = _sized_font(files, size, self.dpi)
        if font is None:
            return super()._prepare_font(font_prop)
        font._set_transform([[0x10000, 0], [0, 0x10000]], [0, 0])     # as get_font leaves it
        font.clear()
        return font

    def get_text_width_height_descent(self, s, prop, ismath):
        if ismath:
            return super().get_text_width_height_descent(s, prop, ismath)
        font_key = self._font_key(prop)
        got = _SIZES.get((s, font_key))
        if got is None:
            got = _remember(_SIZES, (s, font_key), self._measure(s, prop, font_key))
        return got

    def _measure(self, s, prop, font_key) -> tuple:
        """RendererAgg.get_text_width_height_descent: width (the pen's advance), height and
        descent (of the glyphs' boxes) of FT2Font.set_text, worked out from the string's
        shape (kept for drawing it) and each glyph's advance and box (kept per glyph):
        laying a string out cost as much again as shaping it. A string with glyphs of a
        fallback font is measured by set_text itself."""
        font = self._prepare_font(prop)
        items = self._shape(s, prop, font_key, None, None)[0]
        if any(ft is not font for ft, _, _, _ in items):
            return super().get_text_width_height_descent(s, prop, False)
        if not items:
            return 0.0, 0.0, 0.0
        flags = self._hinting
        font._set_transform([[0x10000, 0], [0, 0x10000]], [0, 0])
        y_lo, y_hi = 32000, -32000                    # set_text's starting box
        for _, glyph, _, _ in items:
            key = (font, glyph, flags, font_key)
            got = _METRICS.get(key)
            if got is None:
                g = font.load_glyph(glyph, flags)
                got = _remember(_METRICS, key, (g.horiAdvance, g.bbox[1], g.bbox[3]))
            y_lo, y_hi = min(y_lo, got[1]), max(y_hi, got[2])
        advance = round(items[-1][2] * 64) + got[0]
        return advance / 64.0, (y_hi - y_lo) / 64.0, -y_lo / 64.0

    def _shape(self, s, prop, font_key, features, language) -> tuple:
        """The glyphs a string is shaped into (font, glyph, x, y), kept with its runs."""
        key = (s, font_key, None if features is None else tuple(features), language)
        shape = _SHAPES.get(key)
        if shape is None:
            font = self._prepare_font(prop)
            items = tuple((item.ft_object, item.glyph_index, item.x, item.y)
                          for item in font._layout(s, flags=self._hinting, features=features,
                                                   language=language))
            shape = _remember(_SHAPES, key, (items, {}))
        return shape

    def _get_font_height_metrics(self, prop):
        """Ascent, descent and line gap of the font at this resolution, as matplotlib's
        Text._get_layout reads them from the font's tables (same formula, same floats)."""
        key = self._font_key(prop)
        got = _HEIGHTS.get(key)
        if got is None:
            got = (None, None, None)
            font = get_font(fontManager._find_fonts_by_props(prop))
            for table_name, gap_key, ascent_key, descent_key in (
                    ('OS/2', 'sTypoLineGap', 'sTypoAscender', 'sTypoDescender'),
                    ('hhea', 'lineGap', 'ascent', 'descent')):
                table = font.get_sfnt_table(table_name)
                if table is None:
                    continue
                fontsize = prop.get_size_in_points()
                units_per_em = font.get_sfnt_table('head')['unitsPerEm']
                scale = 1 / units_per_em * fontsize * self.dpi / 72
                got = (table[ascent_key] * scale, -table[descent_key] * scale, table[gap_key] * scale)
                break
            _remember(_HEIGHTS, key, got)
        return got

    def draw_text(self, gc, x, y, s, prop, angle, ismath=False, mtext=None):
        if ismath:
            return super().draw_text(gc, x, y, s, prop, angle, ismath, mtext)
        features = mtext.get_fontfeatures() if mtext is not None else None
        language = mtext.get_language() if mtext is not None else None
        shape = self._shape(s, prop, self._font_key(prop), features, language)
        # The string's anchor on a whole pixel (as matplotlib placed text up to 3.9): its
        # glyphs then land on the same fractions of a pixel wherever it is drawn, so their
        # bitmaps are rendered once per process, not once for nearly every place.
        self._draw_glyphs(gc, round(x), round(y), angle, prop.get_size_in_points(), *shape)

    def _draw_glyphs(self, gc, x, y, angle, size, items, runs):
        """Draw a shaped string (``items``) at (x, y): its bitmaps are those the string
        drew before wherever its glyphs landed on the same fractions of a pixel and the
        same whole pixels apart (``runs``, the string's own cache), placed where its first
        glyph's whole pixel is; else worked out by ``_glyph_run``."""
        cos = math.cos(math.radians(angle))
        sin = math.sin(math.radians(angle))
        height = self.height
        # Each glyph's place in 64ths of a pixel, as _glyph_run (and RendererAgg) works it out.
        tx = [round(0x40 * (x + dx * cos - dy * sin)) for _, _, dx, dy in items]
        ty = [round(0x40 * (height - y + dx * sin + dy * cos)) for _, _, dx, dy in items]
        if not tx:
            return
        bx, by = tx[0] >> 6, ty[0] >> 6
        smooth = bool(gc.get_antialiased())
        key = (angle, smooth, self._hinting, tuple(t - (bx << 6) for t in tx),
               tuple(t - (by << 6) for t in ty))
        run = runs.get(key)
        if run is None:
            if len(runs) >= _RUNS_PER_STRING:
                runs.clear()
            run = runs[key] = self._glyph_run(cos, sin, size, items, tx, ty, smooth, bx, by)
        column0, row0 = bx, int(height) - by
        for buffer, column, row in run:
            self._renderer.draw_text_image(buffer, column0 + column, row0 + row + buffer.shape[0], 0, gc)

    def _glyph_run(self, cos, sin, size, items, tx, ty, smooth, bx, by) -> tuple:
        """The bitmaps of a string whose glyphs land at ``tx``, ``ty`` (64ths of a pixel,
        y downwards): ((bitmap, first column, first row), ...) relative to the first
        glyph's whole pixel (``bx``, ``by``), as RendererAgg._draw_text_glyphs_and_boxes
        renders them, each glyph's bitmap taken from the cache when it was rendered before
        at the same fraction of a pixel.

        The glyphs go to Agg as one bitmap when no pixel is covered by two of them: Agg
        blends each pixel by its own coverage and leaves a pixel of zero coverage as it
        is, so the pixels are those of one blend per glyph (which cost Agg a conversion
        of the graphics context each)."""
        matrix = (0x10000 * np.array([[cos, -sin], [sin, cos]])).round().astype(int)
        m_key = tuple(matrix.ravel().tolist())
        flags = self._hinting
        placed = []                                # (bitmap, first column, first row)
        sized = set()           # the fonts given this size here (set_size cost as much as a glyph)
        for (font, glyph, _dx, _dy), gx, gy in zip(items, tx, ty):
            key = (font, size, self.dpi, glyph, m_key, gx & 63, gy & 63, flags, smooth)
            got = _GLYPHS.get(key)
            if got is None:
                if font not in sized and font not in _AT_SIZE:
                    # Nothing else uses the font before this loop ends, and _set_transform
                    # replaces the transform that set_size sets: once per font is enough.
                    font.set_size(size, self.dpi)
                    sized.add(font)
                font._set_transform(matrix, [gx, gy])
                bitmap = font._render_glyph(glyph, flags,
                                            RenderMode.NORMAL if smooth else RenderMode.MONO)
                buffer = np.array(bitmap.buffer, copy=True)
                if not smooth:
                    buffer *= 0xff
                got = _remember(_GLYPHS, key, (buffer, bitmap.left - (gx >> 6), bitmap.top - (gy >> 6)))
            buffer, left, top = got
            if buffer.size:
                placed.append((buffer, left + (gx >> 6) - bx, -(top + (gy >> 6) - by)))
        if len(placed) > 1:
            whole, column, row = _merged(placed, 0, 0)
            if whole is not None:
                placed = [(whole, column, row)]
        return tuple(placed)


def _sized_font(files, size: float, dpi: float):
    """A font of the files matplotlib's get_font(files) opens, made as get_font makes it
    but kept here and set to ``size`` at ``dpi`` once; None where this matplotlib makes its
    fonts otherwise (then the renderer takes matplotlib's shared font)."""
    key = (tuple(files), mpl.rcParams["text.kerning_factor"],
           mpl.rcParams["font.enable_last_resort"], size, dpi)
    font = _SIZED.get(key)
    if font is None and _SIZED.get(None, True):
        try:
            paths = tuple((_cached_realpath(f.path), f.face_index) if isinstance(f, FontPath)
                          else (_cached_realpath(f), 0) for f in key[0])
            font = _make_font(paths, _kerning_factor=key[1], thread_id=threading.get_ident(),
                              enable_last_resort=key[2])
        except (AttributeError, TypeError):           # another matplotlib's internals
            _SIZED[None] = False
            return None
        font._set_transform([[0x10000, 0], [0, 0x10000]], [0, 0])
        font.set_size(size, dpi)
        _AT_SIZE.add(font)
        _SIZED[key] = font
    return font


def _merged(placed: list, column0: int, row0: int) -> tuple:
    """The glyph bitmaps ``placed`` (bitmap, first column, first row) as one: (bitmap,
    its first column and row relative to ``column0``, ``row0``), or (None, 0, 0) when a
    pixel is covered by two of them (Agg would blend it twice)."""
    top = min(row for _, _, row in placed)
    left = min(column for _, column, _ in placed)
    bottom = max(row + b.shape[0] for b, _, row in placed)
    right = max(column + b.shape[1] for b, column, _ in placed)
    whole = np.zeros((bottom - top, right - left), np.uint8)
    for buffer, column, row in placed:
        h, w = buffer.shape
        region = whole[row - top:row - top + h, column - left:column - left + w]
        if np.logical_and(region, buffer).any():
            return None, 0, 0
        region |= buffer
    return whole, left - column0, top - row0


def _text_layout(text, renderer):
    """Text._get_layout, kept per string and the properties it depends on when the
    renderer is a TextCachingAgg (the offsets of lines and box from the text's anchor:
    the same for a tick label drawn at any place). Others, wrapped text, TeX and math
    are worked out by matplotlib every time."""
    if not isinstance(renderer, TextCachingAgg) or text.get_wrap() or text.get_usetex():
        return _PLAIN_LAYOUT(text, renderer)
    string = text.get_text()
    if "$" in string:
        return _PLAIN_LAYOUT(text, renderer)
    key = (string, renderer._font_key(text.get_fontproperties()), text._linespacing,
           text._get_multialignment(), text.get_rotation(), text.get_horizontalalignment(),
           text.get_verticalalignment(), text.get_rotation_mode(), text.get_parse_math(),
           text.get_figure(root=True).dpi)
    got = _LAYOUTS.get(key)
    if got is None:
        got = _remember(_LAYOUTS, key, _PLAIN_LAYOUT(text, renderer))
    return got


_PLAIN_LAYOUT = Text._get_layout
# Process-wide, but only a TextCachingAgg's drawing takes the kept layouts (above); its
# callers in matplotlib only read what it returns.
Text._get_layout = _text_layout


def layout_once(box) -> None:
    """Let each box under ``box`` (a legend's offset boxes) work out its extent and its
    children's places once per renderer: a drawing asks again and again, and nothing
    they depend on changes while it draws (the renderer is new for every drawing)."""
    for child in [box, *box.get_children()]:
        if child is not box:
            layout_once(child)
        elif isinstance(box, OffsetBox):
            for name in ("get_bbox", "_get_bbox_and_child_offsets"):
                if name not in vars(box):
                    setattr(box, name, _Once(getattr(box, name)))


class _Once:
    """A method's result for the last renderer it was called with."""

    def __init__(self, method):
        self.method, self.last = method, None

    def __call__(self, renderer):
        if self.last is not None and self.last[0] is renderer:
            return self.last[1]
        out = self.method(renderer)
        self.last = (renderer, out)
        return out


def rgba(fig: Figure, dpi: float) -> tuple[tuple[int, int], memoryview]:
    """Draw `fig` at `dpi` with TextCachingAgg: ((width, height), its RGBA buffer)."""
    fig.set_dpi(dpi)
    canvas = FigureCanvasAgg(fig)
    w, h = canvas.get_width_height(physical=True)
    canvas.renderer = TextCachingAgg(w, h, fig.dpi)
    canvas._lastKey = (w, h, fig.dpi)        # FigureCanvasAgg.get_renderer keeps this one
    canvas.draw()
    return (w, h), canvas.buffer_rgba()


#: The RGBA bytes of an opaque white pixel, read as one 32-bit word (either byte order).
_WHITE = np.uint32(0xFFFFFFFF)


def indexed_png(size: tuple[int, int], buffer, dpi: float, level: int) -> bytes:
    """An RGBA drawing (``rgba``'s answer) as a PNG of at most 256 colours, deflated at
    zlib ``level``, without text chunks or dates (the same pixels, the same bytes).

    Opaque white, the background and most of a chart's pixels, is a colour of its own;
    the other pixels (about an eighth) are quantised by Pillow's fast octree (no
    dithering: deterministic) into at most 255. Quantising the whole image took twice
    as long, and its octree folded the white background into the average of its
    near-white neighbours (254, not 255)."""
    from PIL import Image
    words = np.frombuffer(buffer, np.uint32)
    inked = np.flatnonzero(words != _WHITE)
    index = np.zeros(words.size, np.uint8)
    palette: list = []
    if inked.size:
        part = Image.frombuffer("RGBA", (inked.size, 1), words[inked].tobytes(), "raw", "RGBA", 0, 1)
        quantised = part.convert("RGB").quantize(colors=255, method=Image.Quantize.FASTOCTREE,
                                                 dither=Image.Dither.NONE)
        palette = quantised.getpalette()
        index.fill(len(palette) // 3)                # white after the octree's colours
        index[inked] = np.frombuffer(quantised.tobytes(), np.uint8)
    image = Image.frombuffer("P", size, index.tobytes(), "raw", "P", 0, 1)
    image.putpalette(palette + [255, 255, 255])
    out = io.BytesIO()
    image.save(out, format="PNG", dpi=(dpi, dpi), compress_level=level)
    return out.getvalue()
