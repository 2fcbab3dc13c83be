"""rcdoc.note.charts_raster against the method it replaces: matplotlib's own Agg renderer.

The caching renderer keeps string sizes, shaped glyph runs and glyph bitmaps
(by the fraction of a pixel where a glyph lands) from one drawing to the next.
Every check draws the same figure with plain matplotlib Agg (the reference; its
strings anchored on whole pixels, as TextCachingAgg anchors them) and with
TextCachingAgg, and compares the pixels exactly: texts at whole and
fractional pixel positions, the same string moved by whole pixels (a cached
bitmap placed elsewhere), rotated and non-antialiased text, mathtext (drawn by
matplotlib itself), symbols the note prints (µ, Ω, minus sign, thin space), and
whole charts (with legends laid out once per drawing, against matplotlib's
own repeated layout).
"""

from __future__ import annotations

import numpy as np
import pytest
from matplotlib.backends.backend_agg import FigureCanvasAgg, RendererAgg
from matplotlib.figure import Figure
from matplotlib.transforms import IdentityTransform

from rcdoc.note import charts, charts_freq, charts_raster, charts_reuse, charts_time


class _WholePixelAgg(RendererAgg):
    """Plain Agg with each string's anchor on the nearest whole pixel, as TextCachingAgg
    places text (mathtext, drawn by matplotlib itself in both, as it comes)."""

    def draw_text(self, gc, x, y, s, prop, angle, ismath=False, mtext=None):
        if not ismath:
            x, y = round(x), round(y)
        return super().draw_text(gc, x, y, s, prop, angle, ismath, mtext)


def _plain_canvas(fig: Figure) -> FigureCanvasAgg:
    canvas = FigureCanvasAgg(fig)
    w, h = canvas.get_width_height(physical=True)
    canvas.renderer = _WholePixelAgg(w, h, fig.dpi)
    canvas._lastKey = (w, h, fig.dpi)
    return canvas


def _plain(fig: Figure, dpi: float) -> np.ndarray:
    fig.set_dpi(dpi)
    canvas = _plain_canvas(fig)
    canvas.draw()
    return np.asarray(canvas.buffer_rgba()).copy()


def _cached(fig: Figure, dpi: float) -> np.ndarray:
    (w, h), buf = charts_raster.rgba(fig, dpi)
    return np.frombuffer(buf, np.uint8).reshape(h, w, 4).copy()


def _text_figure() -> Figure:
    fig = Figure(figsize=(4.0, 3.0))
    rng = np.random.default_rng(7)
    strings = ["0", "10\N{THIN SPACE}k", "Gain [dB]", "\N{MINUS SIGN}45°", "4.7\N{THIN SPACE}µ",
               "220 Ω", "corner 1.59 kHz", "$f_c = 1/(2\\pi RC)$"]
    for i, s in enumerate(strings):
        x0, y0 = 8.0 + 3.0 * i, 20.0 + 30.0 * i
        # The same string at a fractional place, moved by whole pixels (a cached bitmap
        # reused elsewhere), and at another fraction.
        for dx, dy in ((0.0, 0.0), (150.0, 3.0), (150.37, 3.81)):
            fig.text(x0 + dx + rng.random(), y0 + dy, s, transform=IdentityTransform(),
                     fontsize=6 + i)
    fig.text(0.9, 0.5, "Phase [°]", rotation=90.0)
    fig.text(0.6, 0.2, "tilted 30°", rotation=30.0, fontsize=9)
    fig.text(0.1, 0.9, "aliased 123", antialiased=False)
    return fig


@pytest.mark.parametrize("dpi", [100.0, 150.0, 203.0])
def test_text_pixels_equal_plain_agg(dpi):
    fig = _text_figure()
    reference = _plain(fig, dpi)
    first = _cached(fig, dpi)            # fills the caches
    again = _cached(fig, dpi)            # served from them
    assert np.array_equal(first, reference)
    assert np.array_equal(again, reference)
    assert (reference[..., :3] < 128).any()          # something was drawn


def test_text_sizes_equal_plain_agg():
    # The measures matplotlib lays text out with (width, height, descent in pixels).
    fig = _text_figure()
    plain = FigureCanvasAgg(fig).get_renderer()
    cached = charts_raster.TextCachingAgg(*plain.get_canvas_width_height(), fig.dpi)
    for text in fig.texts:
        s, prop = text.get_text(), text.get_fontproperties()
        ismath = "$" in s
        for _ in range(2):
            assert cached.get_text_width_height_descent(s, prop, ismath) == \
                plain.get_text_width_height_descent(s, prop, ismath)


def test_charts_equal_plain_agg(monkeypatch):
    # Whole charts: every PNG of the note goes through charts._png; drawn there with
    # plain Agg instead, and legends laid out by matplotlib as often as it likes, the
    # bytes must not change.
    f = np.logspace(0, 6, 301)
    h = 1.0 / (1.0 + 1j * f / 1591.5)          # first-order low-pass (textbook formula)
    g, p = 20.0 * np.log10(np.abs(h)), np.degrees(np.angle(h))
    rng = np.random.default_rng(11)

    def draw():
        return [charts_freq.bode("r-bode", f, g, p, corner_hz=1591.5, marks=[(1591.5, -3.0, -45.0)],
                                 fmt="png"),
                charts_time.histogram("r-hist", 1e3 + rng.standard_normal(500), nominal=1e3, lo=998.0,
                                      label="R", unit="ohm", fmt="png"),
                # A legend with a title (phasors): laid out once per drawing.
                charts_freq.phasor("r-ph", [{"label": "V_R", "value": 0.5 + 0.5j, "kind": "R"},
                                            {"label": "V_C", "value": 0.5 - 0.5j, "kind": "C",
                                             "tail": 0.5 + 0.5j}],
                                   reference_label="I", freq_hz=1591.5, fmt="png")]

    def plain_rgba(fig, dpi):
        fig.set_dpi(dpi)
        canvas = _plain_canvas(fig)
        canvas.draw()
        return canvas.get_width_height(physical=True), canvas.buffer_rgba()

    monkeypatch.setattr(charts_reuse, "ENABLED", False)
    rng = np.random.default_rng(11)
    cached = draw()
    monkeypatch.setattr(charts.charts_raster, "rgba", plain_rgba)
    monkeypatch.setattr(charts.charts_raster, "layout_once", lambda box: None)
    rng = np.random.default_rng(11)
    assert draw() == cached


def test_glyph_runs_blended_as_one_bitmap_equal_plain_agg():
    # The glyphs of a string are blended as one bitmap when no pixel is covered by two of
    # them. A combining long solidus (U+0338) drawn over "o" covers pixels of its base:
    # that string is blended glyph by glyph. Both ways must give plain Agg's pixels.
    charts_raster._SHAPES.clear()
    fig = Figure(figsize=(3.0, 1.5))
    fig.text(0.05, 0.65, "Gain [dB] at 10\N{THIN SPACE}kHz", fontsize=9)
    fig.text(0.05, 0.25, "o\u0338 x", fontsize=14)
    reference = _plain(fig, 150.0)
    assert np.array_equal(_cached(fig, 150.0), reference)
    assert np.array_equal(_cached(fig, 150.0), reference)      # runs served from the cache
    bitmaps = [len(run) for _, runs in charts_raster._SHAPES.values() for run in runs.values()]
    assert sorted(bitmaps) == [1, 3]      # one string merged, the overlaid one not (3 glyphs)


def test_kept_text_layouts_equal_matplotlibs():
    # Text._get_layout under TextCachingAgg answers from a cache keyed by the string and
    # the properties it depends on; matplotlib's own answer for the same text (aligned,
    # rotated, several lines, after a change of alignment) must be the same numbers.
    fig = _text_figure()
    fig.text(0.5, 0.5, "two\nlines [V]", ha="center", va="top", rotation=90.0, fontsize=7)
    fig.text(0.3, 0.3, "anchor", rotation=45.0, rotation_mode="anchor", ha="right")
    last = fig.text(0.2, 0.8, "moved 1.5 k", va="baseline")
    renderer = charts_raster.TextCachingAgg(400, 300, 150.0)
    fig.set_dpi(150.0)

    def numbers(layout):
        bbox, lines, (corner, size) = layout
        return (tuple(bbox.bounds), [(s, tuple(w), tuple(xy)) for s, w, xy in lines],
                tuple(corner), tuple(size))

    for _ in range(2):
        for text in fig.texts:
            if "$" in text.get_text():
                continue
            want = numbers(charts_raster._PLAIN_LAYOUT(text, renderer))
            assert numbers(charts_raster._text_layout(text, renderer)) == want
        last.set_horizontalalignment("right")    # a changed property is a new layout
        last.set_verticalalignment("top")


def test_measures_from_shapes_equal_set_text():
    # TextCachingAgg measures a string from its shape and each glyph's advance and box
    # instead of FT2Font.set_text: the same (width, height, descent) as plain Agg's
    # get_text_width_height_descent for strings with kerning pairs, spaces only, the empty
    # string, the note's symbols, a combining mark, a zero-width space, glyphs only a
    # fallback font has (measured by set_text), at several sizes and resolutions.
    import random
    import warnings

    from matplotlib.font_manager import FontProperties

    rng = random.Random(3)
    alphabet = "AVToTyLTfiflkHzdB[]()0123456789.,:%µΩ−°–—  \u2009_-+=/xyzqpgjWMQ@#&*<>"
    strings = ["", " ", "AV", "To kHz", "ffi", "corner 2.74\u2009kHz", "Gain [dB]",
               "\u22120.347 LSB", "o\u0338 x", "x\u200by", "\u65e5\u672c 1"]
    strings += ["".join(rng.choice(alphabet) for _ in range(rng.randint(1, 30))) for _ in range(150)]
    with charts._styled("measure"), warnings.catch_warnings():
        warnings.simplefilter("ignore")              # glyphs missing from DejaVu Sans
        for size, dpi in ((8.0, 150.0), (9.0, 150.0), (6.0, 100.0), (13.0, 203.0)):
            prop = FontProperties(family="DejaVu Sans", size=size)
            mine = charts_raster.TextCachingAgg(10, 10, dpi)
            plain = RendererAgg(10, 10, dpi)
            for s in strings:
                for _ in range(2):                   # measured, then from the caches
                    assert mine.get_text_width_height_descent(s, prop, False) == \
                        plain.get_text_width_height_descent(s, prop, False), (s, size, dpi)


def _decoded(png: bytes) -> np.ndarray:
    import io

    from PIL import Image
    with Image.open(io.BytesIO(png)) as im:
        assert im.mode == "P"
        return np.asarray(im.convert("RGB")).astype(int)


def test_indexed_png_keeps_white_and_stays_near_every_colour():
    # A chart's PNG: opaque white as a colour of its own, the other pixels quantised by
    # Pillow's octree. Against the drawing's own RGB values (decoded by Pillow): white
    # stays exactly white, no other pixel moves further than the octree's buckets (16
    # levels per channel: Pillow's FASTOCTREE, 4 bits of each), and on average less than
    # quantising the whole image with that octree did (the method it replaces).
    import io

    from PIL import Image
    f = np.logspace(0, 6, 301)
    h = 1.0 / (1.0 + 1j * f / 1591.5)          # first-order low-pass (textbook formula)
    band = {f"{k}_{s}": (20 * np.log10(np.abs(h)) if k == "gain" else np.degrees(np.angle(h))) + d
            for k in ("gain", "phase") for s, d in (("min", -3), ("max", 3), ("lo", -1), ("hi", 1))}
    fig_bytes = {}

    def keep(fig, dpi):
        size, buffer = _plain_rgba(fig, dpi)
        fig_bytes["rgba"] = (size, bytes(buffer))
        return size, buffer

    original = charts_raster.rgba
    charts_raster.rgba = keep
    try:
        png = charts_freq.bode("q-bode", f, 20 * np.log10(np.abs(h)), np.degrees(np.angle(h)),
                               band=band, corner_hz=1591.5, fmt="png")
    finally:
        charts_raster.rgba = original
    (w, hgt), buffer = fig_bytes["rgba"]
    source = np.frombuffer(buffer, np.uint8).reshape(hgt, w, 4)[..., :3].astype(int)
    got = _decoded(png)
    white = (source == 255).all(axis=2)
    assert white.mean() > 0.5 and not white.all()
    assert (got[white] == 255).all()
    error = np.abs(got - source)
    assert error.max() < 16
    whole = Image.frombuffer("RGBA", (w, hgt), buffer, "raw", "RGBA", 0, 1).convert("RGB").quantize(
        colors=256, method=Image.Quantize.FASTOCTREE, dither=Image.Dither.NONE)
    assert error.mean() < np.abs(np.asarray(whole.convert("RGB")).astype(int) - source).mean()
    # The same drawing, the same bytes; at most 256 colours.
    assert charts_raster.indexed_png((w, hgt), buffer, 150.0, 3) == png
    with Image.open(io.BytesIO(png)) as im:
        assert len(im.getpalette()) // 3 <= 256


def test_indexed_png_of_white_and_of_many_colours():
    # A blank drawing is one white colour; a drawing of thousands of colours and no white
    # still has at most 256 (the octree's 255 and white), each pixel within the octree's
    # coarse buckets (Pillow's FASTOCTREE: 2 bits of each channel, under 64 levels).
    blank = np.full((20, 30, 4), 255, np.uint8)
    assert (_decoded(charts_raster.indexed_png((30, 20), blank.tobytes(), 150.0, 3)) == 255).all()
    rng = np.random.default_rng(2)
    noisy = rng.integers(0, 255, (40, 50, 4), dtype=np.uint8)
    noisy[..., 3] = 255
    png = charts_raster.indexed_png((50, 40), noisy.tobytes(), 150.0, 3)
    got = _decoded(png)
    assert np.abs(got - noisy[..., :3].astype(int)).max() < 64
    assert len({tuple(c) for c in got.reshape(-1, 3)}) <= 256


def _plain_rgba(fig, dpi):
    fig.set_dpi(dpi)
    canvas = _plain_canvas(fig)
    canvas.draw()
    return canvas.get_width_height(physical=True), canvas.buffer_rgba()
