"""Tests of rcdoc.note.charts (and charts_freq, charts_time): well-formed, deterministic,
collision-free SVG.

Inputs are small synthetic arrays (a first-order RC low-pass written out from
the textbook formula H = 1 / (1 + j f/fc)); the charts compute nothing from
them, so the tests check the SVG, not the curves.
"""

from __future__ import annotations

import re
import subprocess
import sys
import xml.etree.ElementTree as ET

import matplotlib
import numpy as np
import pytest

from boards import overview_rows
from rcdoc.note import charts, charts_freq, charts_time

from rcdoc.note import palette

SVG_NS = "{http://www.w3.org/2000/svg}"

CORNER_HZ = 1591.55  # 1 / (2 pi 10 kOhm 10 nF), textbook RC corner
F_HZ = np.logspace(1.0, 5.0, 81)
H = 1.0 / (1.0 + 1j * F_HZ / CORNER_HZ)
GAIN_DB = 20.0 * np.log10(np.abs(H))
PHASE_DEG = np.degrees(np.angle(H))


def _band() -> dict:
    out = {}
    for name, nominal in (("gain", GAIN_DB), ("phase", PHASE_DEG)):
        out[f"{name}_min"] = nominal - 2.0
        out[f"{name}_max"] = nominal + 2.0
        out[f"{name}_lo"] = nominal - 1.0
        out[f"{name}_hi"] = nominal + 1.0
    return out


def make_bode(fig_id: str, **kw) -> str:
    return charts_freq.bode(fig_id, F_HZ, GAIN_DB, PHASE_DEG, **kw)


def make_bode_full(fig_id: str) -> str:
    return make_bode(
        fig_id, band=_band(), corner_hz=CORNER_HZ, corner_spread=(1.3e3, 1.9e3),
        marks=[(5e3, -10.4, -72.3)],
        limits=[{"panel": "gain", "f_lo": 5e4, "f_hi": 5e4, "min": None, "max": -30.0, "label": "≤ −30 dB"},
                {"panel": "phase", "f_lo": None, "f_hi": 100.0, "min": -10.0, "max": None, "label": "phase"},
                {"panel": "corner", "f_lo": None, "f_hi": None, "min": 1.4e3, "max": 1.8e3, "label": "corner"}],
        title="RC low-pass")


def make_phasor(fig_id: str) -> str:
    # At the corner of an RC low-pass |V_R| = |V_C| = V/sqrt(2) and the source
    # voltage lags the current by 45 degrees (textbook phasor triangle).
    vr, vc = 0.7071 + 0j, -0.7071j
    return charts_freq.phasor(fig_id, [
        {"label": "V_R = 0.707 V", "value": vr, "kind": "R", "tail": 0j},
        {"label": "V_C = 0.707 V", "value": vc, "kind": "C", "tail": vr},
        {"label": "V_in = 1.00 V", "value": vr + vc, "kind": "source", "tail": 0j},
    ], reference_label="I", freq_hz=CORNER_HZ, angle_deg=-45.0)


def make_time(fig_id: str) -> str:
    t = np.linspace(0.0, 1e-3, 120)
    tau = 1e-4
    y = 1.0 - np.exp(-t / tau)
    return charts_time.time_response(
        fig_id, t, y, band=(1.0 - np.exp(-t / 1.2e-4), 1.0 - np.exp(-t / 0.8e-4)),
        window={"t": 4.6e-4, "lo": 0.99, "hi": 1.01, "label": "±1 %"},
        series=[{"t": t, "y": np.ones_like(t), "label": "drive", "role": "input"}])


def make_histogram(fig_id: str, **kw) -> str:
    samples = np.random.default_rng(1).normal(CORNER_HZ, 80.0, 500)
    kw = {"lo": 1.45e3, "hi": 1.75e3, **kw}
    return charts_time.histogram(fig_id, samples, nominal=CORNER_HZ, label="Corner frequency", unit="Hz", **kw)


def make_overview(fig_id: str) -> str:
    return charts_time.corner_overview(fig_id, [
        {"label": "ain0", "nominal": CORNER_HZ, "min": 1.3e3, "max": 1.9e3, "status": "pass"},
        {"label": "ain1", "nominal": 16e3, "min": 13e3, "max": 19e3, "status": "fail"},
    ])


def make_sweep(fig_id: str) -> str:
    c = np.logspace(-11, -8, 40)
    return charts_time.sweep(fig_id, c, [
        {"y": 1.0 - np.exp(-c / 3e-10), "label": "damping ratio", "unit": "", "axis": "left"},
        {"y": c * 48.0**2 * 250e3, "label": "resistor power", "unit": "W", "axis": "right"},
    ], xlabel="Snubber capacitance", x_unit="F", marker_x=6.8e-10)


MAKERS = {
    "bode": make_bode_full,
    "phasor": make_phasor,
    "time_response": make_time,
    "histogram": make_histogram,
    "corner_overview": make_overview,
    "sweep": make_sweep,
}


@pytest.fixture(scope="module")
def rendered() -> dict:
    """Every chart twice under one fig_id, and once under another."""
    out = {}
    for name, make in MAKERS.items():
        stem = name.replace("_", "-")
        out[name] = (make(f"{stem}-a"), make(f"{stem}-a"), make(f"{stem}-b"))
    return out


def _ids(svg: str) -> set[str]:
    return set(re.findall(r'\sid="([^"]+)"', svg))


def _refs(svg: str) -> set[str]:
    return set(re.findall(r'href="#([^"]+)"', svg)) | set(re.findall(r"url\(#([^)]+)\)", svg))


@pytest.mark.slow
@pytest.mark.parametrize("name", sorted(MAKERS))
def test_chart_is_well_formed_svg_of_text_width(rendered, name):
    svg = rendered[name][0]
    root = ET.fromstring(svg)
    assert root.tag == SVG_NS + "svg"
    # Figures are 16 cm wide = 16 / 2.54 * 72 pt (definition of the inch and the point);
    # a histogram is drawn at the width it is shown at, 49 % of that (two share a row).
    share = 0.49 if name == "histogram" else 1.0
    assert float(root.get("width").removesuffix("pt")) == pytest.approx(share * 16 / 2.54 * 72, abs=0.5)
    assert svg.startswith("<svg"), "the XML prolog is dropped so the SVG can be inlined in HTML"


@pytest.mark.slow
@pytest.mark.parametrize("name", sorted(MAKERS))
def test_same_input_gives_same_bytes(rendered, name):
    first, second, _ = rendered[name]
    assert first.encode() == second.encode()


@pytest.mark.slow
@pytest.mark.parametrize("name", sorted(MAKERS))
def test_different_fig_ids_share_no_element_id(rendered, name):
    a, _, b = rendered[name]
    ids_a, ids_b = _ids(a), _ids(b)
    assert ids_a and ids_b
    assert not ids_a & ids_b
    assert all(i.startswith(f"{name.replace('_', '-')}-a__") for i in ids_a)
    # Every reference still points at an element of the same document.
    assert _refs(a) and _refs(a) <= ids_a
    assert _refs(b) <= ids_b


def test_fig_ids_that_sanitise_alike_still_differ():
    a = make_histogram("Stage 1")
    b = make_histogram("stage-1")
    c = make_histogram("stage_1")
    assert not _ids(a) & _ids(b)
    assert not _ids(a) & _ids(c)
    assert not _ids(b) & _ids(c)
    assert all(re.match(r"[A-Za-z_]", i) for i in _ids(a)), "XML ids must start with a letter"


def test_output_ignores_global_rcparams():
    reference = make_histogram("rc-check")
    with matplotlib.rc_context({"lines.linewidth": 5.0, "font.size": 20.0, "axes.grid": False,
                                "svg.hashsalt": "other", "axes.prop_cycle": matplotlib.cycler(color=["red"])}):
        changed = make_histogram("rc-check")
    assert changed == reference


@pytest.mark.slow
def test_bode_draws_bands_in_palette_colours(rendered):
    svg = rendered["bode"][0]
    plain = make_bode("bode-plain")
    for colour in (palette.BAND_OUTER, palette.BAND_INNER):
        assert colour in svg
        assert colour not in plain


@pytest.mark.slow
def test_bode_limits_are_shaded_in_limit_colour(rendered):
    assert palette.LIMIT in rendered["bode"][0]
    assert palette.LIMIT_EDGE in rendered["bode"][0]
    assert palette.LIMIT not in make_bode("bode-nolimit", band=_band())


@pytest.mark.slow
def test_each_limit_panel_draws_its_own_region():
    for lim in ({"panel": "gain", "f_lo": None, "f_hi": None, "min": -50.0, "max": None, "label": "x"},
                {"panel": "phase", "f_lo": 10.0, "f_hi": 100.0, "min": None, "max": 0.0, "label": "y"},
                {"panel": "corner", "min": 1.4e3, "max": 1.8e3, "label": "z"}):
        assert palette.LIMIT in make_bode("bode-one", limits=[lim]), lim["panel"]


@pytest.mark.slow
def test_histogram_limits_shaded_only_when_given(rendered):
    assert palette.LIMIT in rendered["histogram"][0]
    assert palette.LIMIT not in make_histogram("hist-free", lo=None, hi=None)


@pytest.mark.slow
def test_phasor_uses_part_colours(rendered):
    svg = rendered["phasor"][0]
    for colour in (palette.RESISTOR, palette.CAPACITOR, palette.SOURCE):
        assert colour in svg
    assert palette.INDUCTOR not in svg


@pytest.mark.slow
def test_overview_colours_rows_by_status(rendered):
    svg = rendered["corner_overview"][0]
    assert palette.PASS in svg and palette.FAIL in svg


@pytest.mark.parametrize("value, unit, text", [
    # SI prefixes (BIPM SI brochure, 9th ed., table 7); 3 significant digits with
    # trailing zeros dropped, the one rule of rcdoc.input.quantities: common practice.
    (1591.549, "Hz", "1.59 kHz"),
    (999.7, "Hz", "1 kHz"),
    (0.0472, "V", "47.2 mV"),
    (2.2e-9, "F", "2.2 nF"),
    (-3.3e-6, "s", "\N{MINUS SIGN}3.3 µs"),
    (0.0, "W", "0 W"),
])
def test_engineering_format(value, unit, text):
    assert charts._eng(value, unit) == text


def test_bad_inputs_raise_value_error():
    with pytest.raises(ValueError, match="gain_db"):
        charts_freq.bode("x", F_HZ, GAIN_DB[:-1], PHASE_DEG)
    with pytest.raises(ValueError, match="panel"):
        make_bode("x", limits=[{"panel": "noise", "max": 1.0}])
    with pytest.raises(ValueError, match="kind"):
        charts_freq.phasor("x", [{"label": "a", "value": 1j, "kind": "Z"}], reference_label="I", freq_hz=1.0)
    with pytest.raises(ValueError, match="role"):
        charts_time.time_response("x", [0, 1], [0, 1], series=[{"t": [0, 1], "y": [0, 1], "label": "s", "role": "?"}])
    with pytest.raises(ValueError, match="status"):
        charts_time.corner_overview("x", [{"label": "a", "nominal": 1.0, "min": 1.0, "max": 1.0, "status": "ok"}])
    with pytest.raises(ValueError, match="fig_id"):
        charts_time.histogram("", [1.0, 2.0], nominal=1.0, label="x", unit="V")


def test_palette_is_complete_and_valid():
    names = ("RESISTOR", "CAPACITOR", "INDUCTOR", "SOURCE", "SUM", "CURRENT", "NOMINAL", "BAND_OUTER",
             "BAND_INNER", "LIMIT", "PASS", "FAIL", "GRID", "WITHOUT", "WITH")
    values = [getattr(palette, n) for n in names]
    assert all(re.fullmatch(r"#[0-9a-f]{6}", v) for v in values)
    assert len(set(values)) == len(values), "each meaning has its own colour"
    assert palette.COLOR_FOR_KIND == {"R": palette.RESISTOR, "C": palette.CAPACITOR, "L": palette.INDUCTOR}
    assert palette.CSS_VARS["--rc-pass"] == palette.PASS
    assert palette.CSS_VARS["--rc-fail"] == palette.FAIL


# ---------------------------------------------------------------------------
# Label placement, histogram range, clipped sweep axis (issue 16, charts as read)


def test_overlapping_labels_are_moved_apart():
    from rcdoc.note.charts import _keep_labels_apart, _new_figure, _styled
    with _styled("labels"):
        fig = _new_figure(3.0)
        ax = fig.add_subplot()
        ax.set_xlim(0, 10)
        ax.set_ylim(0, 10)
        # Two labels placed at the same point, as a corner label and a mark label can be.
        texts = [ax.annotate(t, xy=(5, 5), xytext=(4, -3), textcoords="offset points")
                 for t in ("corner 226 Hz", "−13.1 dB at 1 kHz")]
        fig.draw_without_rendering()
        renderer = fig._get_renderer()
        assert texts[0].get_window_extent(renderer).overlaps(texts[1].get_window_extent(renderer))
        _keep_labels_apart(fig)
        boxes = [t.get_window_extent(renderer) for t in texts]
        assert not boxes[0].overlaps(boxes[1])
        assert texts[0].xyann == (4, -3), "the label placed first keeps its place"


def test_histogram_range_keeps_far_limits_off_scale():
    from rcdoc.note.charts_time import _hist_range
    # Samples 220...232 (span 12): a limit at 180 is more than a span away, so the axis
    # stays on the data; a limit at 240 is near and drawn to scale.
    left, right = _hist_range(220.0, 232.0, 180.0, 240.0)
    assert 180.0 < left < 220.0
    assert right > 240.0


def test_sweep_axis_clipped_around_allowed_band():
    from rcdoc.note.charts import _new_figure, _styled
    from rcdoc.note.charts_time import _clip_to_band
    with _styled("clip"):
        ax = _new_figure(3.0).add_subplot()
        y = np.linspace(0.0, -400.0, 50)
        ax.plot(np.arange(50), y)
        _clip_to_band(ax, [y], -0.5, 0.5)
        # ±½ LSB band: the axis shows ±4 LSB, the band 1/8 of its height.
        assert ax.get_ylim() == pytest.approx((-4.0, 4.0))
        ax2 = _new_figure(3.0).add_subplot()
        ax2.plot([0, 1], [0.1, -0.2])
        before = ax2.get_ylim()
        _clip_to_band(ax2, [np.array([0.1, -0.2])], -0.5, 0.5)
        assert ax2.get_ylim() == before, "curves inside the clipped range keep the automatic axis"


# ---------------------------------------------------------------------------
# Labels a reviewer reads: units, ticks, legends, the summary chart by kind (issue 16)


@pytest.mark.parametrize("value, unit, text", [
    # An LSB, a decibel, a percent and a degree take no SI prefix (BIPM SI brochure, 9th ed.,
    # 3.1: prefixes attach to SI units; the LSB is a count of code steps): common practice.
    (-0.347, "LSB", "\N{MINUS SIGN}0.347 LSB"),
    (0.012, "LSB", "0.012 LSB"),
    (0.5, "LSB", "0.5 LSB"),
    (-39.6, "dB", "\N{MINUS SIGN}39.6 dB"),
    (0.001, "dB", "0.001 dB"),
    (-3.2, "deg", "\N{MINUS SIGN}3.2°"),
    (0.707, "1", "0.707"),
    (4.7e3, "ohm", "4.7 kΩ"),
])
def test_unprefixed_units_read_as_plain_numbers(value, unit, text):
    assert charts._eng(value, unit) == text


def _tick_labels(ax) -> list[str]:
    fig = ax.figure
    fig.draw_without_rendering()
    return [t.get_text() for t in ax.get_xticklabels() if t.get_text()]


def test_tiny_spread_histogram_ticks_are_few_and_short():
    # 55.9966 nA with a spread of about 0.2 pA: full values need six digits per tick.
    from rcdoc.note.charts import HALF_WIDTH_IN, _new_figure, _styled
    from rcdoc.note.charts_time import _hist_xaxis
    nominal = 55.99663e-9
    with _styled("tiny"):
        ax = _new_figure(2.5, HALF_WIDTH_IN).add_subplot()
        ax.set_xlim(nominal - 0.15e-12, nominal + 0.12e-12)
        _hist_xaxis(ax, "Input current", "A", nominal, single=False)
        labels = _tick_labels(ax)
        assert 2 <= len(labels) <= 5
        assert all(len(t) <= 7 for t in labels), labels
        assert "0" in labels, "offsets from the nominal: the nominal reads 0"
        assert "nominal" in ax.get_xlabel()
        # An ordinary spread keeps full values.
        ax2 = _new_figure(2.5, HALF_WIDTH_IN).add_subplot()
        ax2.set_xlim(150e-6, 175e-6)
        _hist_xaxis(ax2, "Kickback", "V", 164e-6, single=False)
        assert "nominal" not in ax2.get_xlabel()
        assert all("µ" in t for t in _tick_labels(ax2) if t != "0")


def test_overview_puts_ring_frequencies_on_their_own_axis_and_both_corners():
    from rcdoc.note.charts import _styled
    from rcdoc.note.charts_time import _overview_figure, _overview_rows
    rows = _overview_rows([
        {"label": "lp", "kind": "corner", "nominal": 226.0, "min": 214.0, "max": 240.0,
         "status": "pass"},
        {"label": "bp", "kind": "corner", "status": "fail",
         "frequencies": [{"nominal": 5e3, "min": 4e3, "max": 6e3},
                         {"nominal": 100.0, "min": 90.0, "max": 110.0}]},
        {"label": "notch", "kind": "notch", "nominal": 50.0, "status": "pass"},
        {"label": "snub", "kind": "ring", "nominal": 12.6e3, "min": 11e3, "max": 14e3,
         "status": "pass"},
    ])
    with _styled("overview-kinds"):
        fig = _overview_figure(rows)
        ax_f, ax_r = fig.axes
        assert "Corner" in ax_f.get_xlabel() and "notch" in ax_f.get_xlabel()
        assert ax_r.get_xlabel() == "Snubber ring frequency [Hz]"
        assert [t.get_text() for t in ax_f.get_yticklabels()] == ["lp", "bp", "notch"]
        assert [t.get_text() for t in ax_r.get_yticklabels()] == ["snub"]
        # Both band-pass corners drawn as nominal markers on the band-pass row (y = 1); the
        # markers of a status are one line, a point per frequency.
        marks = [ln for ln in ax_f.lines if ln.get_marker() not in (None, "None", "")]
        bp = sorted(float(x) for ln in marks for x, y in zip(ln.get_xdata(), ln.get_ydata())
                    if y == 1)
        assert bp == [100.0, 5e3]
        # Pass and fail differ in shape, not only in colour.
        shapes = {ln.get_color(): ln.get_marker() for ln in marks}
        assert shapes[palette.PASS] != shapes[palette.FAIL]
        texts = [t.get_text() for t in ax_f.texts]
        assert "notch 50 Hz" in texts
        assert not any("ring" in t for t in texts)


@pytest.mark.parametrize("n, sizes", [(1, [1]), (25, [25]), (26, [13, 13]), (40, [20, 20]),
                                      (51, [17, 17, 17]), (60, [20, 20, 20])])
def test_overview_takes_as_many_charts_as_fit_a_page(n, sizes):
    # At most OVERVIEW_ROWS rows a chart, dealt out in order and as evenly as can be;
    # each chart no taller than the 10 in that fit under a heading on an A4 page at the
    # note's 88 % width (16 cm wide at 0.96 of its size: 244 mm of the 259 mm body).
    from rcdoc.note.charts import PNG_DPI
    from rcdoc.note.charts_time import corner_overview_pages
    from PIL import Image
    import io
    rows = overview_rows(n)
    charts = corner_overview_pages("many", rows)
    assert len(charts) == len(sizes)
    heights = [Image.open(io.BytesIO(c)).size[1] / PNG_DPI for c in charts]
    assert max(heights) <= 10.0, heights
    # The rows of each chart are its own: their labels, in order, and no other.
    from rcdoc.note.charts import _styled
    from rcdoc.note.charts_time import _overview_figure, _overview_rows
    parsed = _overview_rows(rows)
    start = 0
    for size in sizes:
        with _styled("many-rows"):
            fig = _overview_figure(parsed[start:start + size])
            labels = [t.get_text() for ax in fig.axes for t in ax.get_yticklabels()]
        piece = parsed[start:start + size]
        assert sorted(labels) == sorted(p[0] for p in piece)
        start += size
    assert start == n


def test_overview_headings_name_the_stages_of_each_chart():
    from rcdoc.note.charts_time import corner_overview_pages
    from rcdoc.note.page import overview_titles
    labels = [r["label"] for r in overview_rows(51)]
    assert overview_titles(labels[:7]) == ["Corner, notch and ring frequencies of all stages"]
    assert len(corner_overview_pages("titles", overview_rows(51))) == 3
    assert overview_titles(labels) == [
        f"Corner, notch and ring frequencies, stages s{a} to s{b}"
        for a, b in ((0, 16), (17, 33), (34, 50))]


def test_overview_row_labels_keep_both_ends_of_a_long_stage_id():
    # A 62-character stage id as a row label left the summary chart's plot a sliver
    # (the left margin follows the longest label): at most 24 characters, the start
    # and the end kept, unless two labels would then read the same.
    from rcdoc.note.charts_time import _row_labels
    long_id = "an-extremely-long-stage-identifier-for-layout-testing-purpose-x"
    assert _row_labels(["lp-1", long_id]) == ["lp-1", "an-extremel…ng-purpose-x"]
    assert all(len(s) <= 24 for s in _row_labels([long_id, "x" * 24, "y" * 25]))
    twins = ["sensor-input-filter-channel-" + c + "-a-long-tail-end" for c in "ab"]
    assert _row_labels(twins) == twins


def test_overview_charts_of_one_board_share_their_axes():
    # A chart whose rows span one decade still spans every row's frequencies: the charts
    # of a board read as one.
    from rcdoc.note.charts import _styled
    from rcdoc.note.charts_time import _overview_figure, _overview_limits, _overview_rows
    parsed = _overview_rows(overview_rows(40))
    filters = [p for p in parsed if p[2] == "filter"]
    whole = _overview_limits(filters)
    # 9 Hz ... 1.1 MHz: half a decade beyond each end, rounded out to whole decades.
    assert whole == (1.0, 1e7)
    narrow = [p for p in filters if p[3][0][1] == 100.0]
    assert _overview_limits(narrow) == (10.0, 1e3)     # 90 Hz ... 110 Hz
    with _styled("shared"):
        fig = _overview_figure(narrow, {"filter": whole})
        assert fig.axes[0].get_xlim() == pytest.approx(whole)


def test_overview_rejects_an_unknown_kind():
    with pytest.raises(ValueError, match="kind"):
        charts_time.corner_overview("x", [{"label": "a", "kind": "pole", "nominal": 1.0,
                                           "status": "pass"}])


def test_phasor_parts_of_one_kind_get_distinct_colours_and_one_reference():
    # A two-section RC ladder at one frequency (values only need to be distinct arrows).
    svg = charts_freq.phasor("ladder", [
        {"label": "across R1", "value": 0.5 + 0.2j, "kind": "R"},
        {"label": "across C1", "value": -0.3j, "kind": "C", "tail": 0.5 + 0.2j},
        {"label": "across R2", "value": 0.2 - 0.1j, "kind": "R", "tail": 0.5 - 0.1j},
        {"label": "across C2", "value": 0.3 - 0.5j, "kind": "C", "tail": 0.7 - 0.2j},
        {"label": "source", "value": 1.0 + 0j, "kind": "source"},
    ], reference_label="source voltage", freq_hz=1e3)
    for colour in (palette.RESISTOR, palette.RESISTOR_2, palette.CAPACITOR, palette.CAPACITOR_2):
        assert colour in svg


def test_part_colours_differ_from_every_other_palette_colour():
    named = [v for k, v in vars(palette).items() if k.isupper() and isinstance(v, str)]
    extra = [c for shades in palette.PART_COLORS.values() for c in shades]
    assert len(set(extra)) == len(extra)
    assert all(named.count(c) == 1 for c in extra), "each part colour is used for nothing else"


def test_invisible_time_band_has_no_legend_entry():
    # A band of a millionth of the step's height cannot be seen: drawn, but not in the legend.
    t = np.linspace(0.0, 1e-3, 120)
    y = 1.0 - np.exp(-t / 1e-4)          # first-order step response (textbook)
    thin = charts_time.time_response("thin", t, y, band=(y - 1e-6, y + 1e-6))
    wide = charts_time.time_response("wide", t, y, band=(y - 0.05, y + 0.05))
    assert thin.count(palette.BAND_OUTER) == 1, "the thin band's fill only, no legend patch"
    assert wide.count(palette.BAND_OUTER) > 1, "the visible band has its legend patch"


def test_the_default_style_is_matplotlibs_own_without_its_style_module():
    # charts._default_style sets what matplotlib.style.use("default") sets (its list of
    # parameters a style leaves alone included), and drawing a chart does not load
    # matplotlib.style (it reads every shipped style sheet as it loads).
    code = ("import sys, matplotlib\n"
            "from rcdoc.note import charts\n"
            "with charts._styled('probe'):\n"
            "    pass\n"
            "print('matplotlib.style' in sys.modules)\n"
            "import matplotlib.style\n"
            "assert charts.STYLE_BLACKLIST == frozenset(matplotlib.style._STYLE_BLACKLIST)\n"
            "with matplotlib.rc_context():\n"
            "    charts._default_style()\n"
            "    mine = {k: matplotlib.rcParams._get(k) for k in matplotlib.rcParams}\n"
            "with matplotlib.style.context('default'):\n"
            "    theirs = {k: matplotlib.rcParams._get(k) for k in matplotlib.rcParams}\n"
            "assert mine.keys() == theirs.keys() and len(mine) > 300\n"
            "print(sorted(k for k in mine if repr(mine[k]) != repr(theirs[k])))\n")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         check=True).stdout.split("\n")
    assert out[:2] == ["False", "[]"]
