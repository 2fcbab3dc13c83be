"""The design note's report context: StageResults -> what templates/note.html lays out.

Each stage's page (schematic, tables from rcdoc.note.context, the generic
figures drawn here, the kind's own block specs drawn by rcdoc.note.blocks)
and the whole note (front matter, summary, overview, appendix). Figures are
drawn from the results' arrays; nothing here computes physics, and nothing
here knows HTML.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np

from rcdoc import __version__
from rcdoc.analysis.analyse import StageResult
from rcdoc.analysis.blocks import BODY, LEAD
from rcdoc.analysis.metrics import METRICS
from rcdoc.input.model import Project
from rcdoc.input.project import paragraphs
from rcdoc.kinds import KINDS
from rcdoc.note.overview import overview_rows, overview_titles
from rcdoc.note.context import (bom_appendix, checks_table, fq,
                                kind_result, method_appendix, metric_label, metrics_table,
                                parts_table, ratings_table, sensitivity_table, summary_rows)
from rcdoc.note.safety import safety_box
from rcdoc.note.summary import board_status

# The drawing modules (matplotlib, schemdraw) are imported where a figure is drawn:
# the command's process of a one-value rebuild builds the note's context and renders
# the front matter, and leaves every drawing to the workers (rcdoc.commands.schedule),
# whose fork server has them loaded (rcdoc.commands.preload).


def bode_limits(r: StageResult) -> list[dict]:
    out = []
    for c in r.stage.checks:
        if c.metric in ("gain", "phase"):
            out.append({"panel": c.metric, "f_lo": c.at_hz, "f_hi": c.at_hz, "min": c.min,
                        "max": c.max, "label": metric_label(c.metric, c.at_hz)})
        elif c.metric in ("corner", "corner_low", "corner_high", "f0"):
            out.append({"panel": "corner", "f_lo": None, "f_hi": None, "min": c.min,
                        "max": c.max, "label": metric_label(c.metric)})
    return out


def bode_figure(r: StageResult) -> dict:
    gain = 20 * np.log10(np.abs(r.h_nominal))
    phase = np.degrees(np.unwrap(np.angle(r.h_nominal)))
    corner_m = next((m for m in r.metrics if m.name in ("corner", "f0")), None)
    corner = corner_m.nominal if corner_m and math.isfinite(corner_m.nominal) else None
    spread_ = None
    if corner_m is not None:
        s = corner_m.samples[np.isfinite(corner_m.samples)]
        if s.size:
            spread_ = (float(s.min()), float(s.max()))
    marks = []
    for m in r.metrics:
        if m.name == "gain" and m.at_hz is not None:
            ph = r.metric("phase", m.at_hz)
            marks.append((m.at_hz, m.nominal, ph.nominal if ph else math.nan))
    from rcdoc.note import charts_freq
    svg = charts_freq.bode(f"{r.stage.id}-bode", r.freqs_hz, gain, phase, band=r.band.as_mapping(),
                      corner_hz=corner, corner_spread=spread_, marks=marks,
                      limits=bode_limits(r), title="", fmt="png")
    return {"type": "figure", "title": "Frequency response", "image": svg, "width": "full",
            "caption": f"Gain and phase, nominal (line) with the spread of {r.samples} Monte "
                       f"Carlo samples: outer band min–max, inner band 5–95 %{_drawn(r)}. "
                       "Shaded regions are forbidden by the checks."}


def _drawn(r: StageResult) -> str:
    """What the Bode caption adds where the inner band is drawn from fewer samples
    than the stable ones (over 20 000 samples, or fewer over a long sweep:
    rcdoc.analysis.spread.band_samples)."""
    stable = r.samples - r.samples_unstable
    if 0 < r.band.drawn < stable:
        return f" (from the first {r.band.drawn} of them)"
    return ""


def phasor_figure(r: StageResult) -> dict | None:
    ph = r.phasors
    if ph is None:
        return None
    vectors, tail = [], 0j
    for name, kind, v in ph.vectors:
        ref = _ref_of(r, name)
        vectors.append({"label": f"across {ref}: {fq(abs(v), 'V')}", "value": v, "kind": kind,
                        "tail": tail})
        tail += v
    if ph.closing is not None:
        node, v = ph.closing
        vectors.append({"label": f"{node} to ground: {fq(abs(v), 'V')}", "value": v,
                        "kind": "C", "tail": tail})
    vectors.append({"label": "source: 1 V", "value": ph.source, "kind": "source", "tail": 0j})
    if ph.output is not None and ph.closing is not None:
        vectors.append({"label": f"output: {fq(abs(ph.output), 'V')}", "value": ph.output,
                        "kind": "sum", "tail": 0j})
    if _in_phase(ph, vectors):
        # Collinear phasors say nothing a drawing could add: one sentence instead.
        where = (f"At every frequency of the sweep ({fq(r.freqs_hz[0], 'Hz')} to "
                 f"{fq(r.freqs_hz[-1], 'Hz')})" if math.isfinite(ph.spread_deg) and len(r.freqs_hz)
                 else f"At {fq(ph.freq_hz, 'Hz')}")
        return {"type": "text", "title": "Phasors",
                "paragraphs": [f"{where} every part voltage is in phase or in antiphase "
                               "with the source (within 1°): the phasors lie on one line, so no "
                               "phasor diagram is drawn."]}
    if ph.reference == "current":
        ref_label = f"current {fq(abs(ph.current), 'A')}"
        angle = math.degrees(math.atan2(ph.source.imag, ph.source.real))
    else:
        ref_label = "source voltage"
        angle = (math.degrees(math.atan2(ph.output.imag, ph.output.real))
                 if ph.output is not None else None)
    from rcdoc.note import charts_freq
    svg = charts_freq.phasor(f"{r.stage.id}-phasor", vectors, reference_label=ref_label,
                        freq_hz=ph.freq_hz, angle_deg=angle, fmt="png")
    what = ("the series current, common to every part on the path, is the reference direction"
            if ph.reference == "current" else "the source voltage is the reference direction")
    why = (f"{fq(ph.freq_hz, 'Hz')} is the frequency of the sweep where the phasors drawn are "
           f"farthest from one line: the largest angle between two of them is "
           f"{fq(ph.spread_deg, 'deg')} (counting phasors within 20 dB of the largest; opposite "
           "ones count as on one line)" if math.isfinite(ph.spread_deg)
           else f"drawn at {fq(ph.freq_hz, 'Hz')}")
    return {"type": "figure", "title": f"Phasors at {fq(ph.freq_hz, 'Hz')}", "image": svg,
            "width": "full",
            "caption": f"Part voltages head to tail for a 1 V rms source; they add up to the "
                       f"source voltage; {what}. {why[0].upper() + why[1:]}."}


def _in_phase(ph, vectors) -> bool:
    """True when the analysis found the phasors in phase (within 1°) at every swept
    frequency; for a frequency given rather than chosen, when they lie on one line."""
    if math.isfinite(ph.spread_deg):
        return ph.spread_deg < 1.0
    values = [v["value"] for v in vectors]
    big = max((abs(v) for v in values), default=0.0)
    angles = [math.atan2(v.imag, v.real) for v in values if abs(v) > 1e-6 * big]
    return bool(angles) and all(abs(math.sin(a - angles[0])) < math.sin(math.radians(1.0))
                                for a in angles)


def _ref_of(r: StageResult, element: str) -> str:
    p = r.stage.parts.get(element)
    if p is not None:
        return p.ref or p.role
    return {"source.r": "Rs", "source.l": "Ls", "load.r": "RL", "load.c": "CL"}.get(element, element)


def time_figures(r: StageResult) -> list[dict]:
    from rcdoc.note import charts_time
    out = []
    if r.step is not None:
        s = r.step
        window = None
        # Show the settling band a check asks for, else the default one.
        checked = {v.detail for v in r.verdicts if v.metric == "settling"}
        settling = [m for m in r.metrics if m.name == "settling"]
        st = next((m for m in settling if m.detail in checked), settling[0] if settling else None)
        fin = s.nominal[-1]
        if st is not None and math.isfinite(st.nominal):
            band = st.param.fraction(fin)    # the typed settling band (analysis/results.py)
            window = {"t": st.nominal, "lo": fin * (1 - band), "hi": fin * (1 + band),
                      "label": f"settled {st.detail}: {fq(st.nominal, 's')}"}
        svg = charts_time.time_response(f"{r.stage.id}-step", s.t_s, s.nominal,
                                   band=(s.min, s.max), window=window,
                                   ylabel="Output [V]", fmt="png")
        out.append({"type": "figure", "title": "Step response", "image": svg, "width": "full",
                    "caption": f"Output for a {fq(r.stage.drive.amplitude_v, 'V')} step at t = 0, "
                               "nominal with the min–max band over the samples."})
    if r.pwm is not None:
        w = r.pwm
        svg = charts_time.time_response(f"{r.stage.id}-pwm", w.t_s, w.nominal,
                                   band=(w.min, w.max),
                                   ylabel="Output − its mean [V]", series=(), fmt="png")
        d = r.stage.drive
        out.append({"type": "figure", "title": "PWM ripple (steady state)", "image": svg,
                    "width": "full",
                    "caption": f"One period of the output in steady state for a "
                               f"{fq(d.amplitude_v, 'V')} PWM drive at {fq(d.frequency_hz, 'Hz')}, "
                               f"duty {d.duty * 100:g} %, shown about its mean "
                               f"({fq(w.mean, 'V')} nominal); min–max band over the samples."})
    return out


def histogram_figures(r: StageResult) -> list[dict]:
    from rcdoc.note import charts_time
    out = []
    for v in r.verdicts:
        m = next((m for m in r.metrics if (m.name, m.at_hz, m.detail) ==
                  (v.metric, v.at_hz, v.detail)), None)
        if m is None:
            continue
        s = m.samples[np.isfinite(m.samples)]
        if s.size < 2:
            continue
        unit = METRICS[m.name].unit
        label = metric_label(m.name, m.at_hz, m.detail, m.label)
        svg = charts_time.histogram(f"{r.stage.id}-hist-{len(out)}", s, nominal=m.nominal,
                                    lo=v.min, hi=v.max, label=label, unit=unit, fmt="png")
        out.append({"type": "figure", "title": f"Distribution: {label}",
                    "image": svg, "width": "half",
                    "caption": f"{s.size} samples; shaded: outside the limits."})
    return out


def stage_context(r: StageResult, project: Project) -> dict:
    if r.bode_pending:         # a caller's slip, not the user's: say which step was missed
        raise RuntimeError(f"stage {r.stage.id!r} is drawn from an analysis without its Bode "
                           "band: rcdoc.kinds.complete_bode adds it first")
    from rcdoc.note import schematic as sch
    from rcdoc.note.blocks import assumptions, draw_all
    st = r.stage
    kind = KINDS[st.kind]
    blocks: list[dict] = []
    recipe = kind.schematic(st)
    blocks.append({"type": "figure", "title": "Schematic", "image": sch.render_svg(recipe),
                   "width": "natural", "caption": _schematic_caption(r)})
    blocks.append(parts_table(r))
    from rcdoc.note.alternatives import alternatives_block
    alt = alternatives_block(r, fq, metric_label)
    if alt:
        blocks.append(alt)
    for t in (checks_table(r), ratings_table(r)):
        if t:
            blocks.append(t)
    kr = kind_result(r)
    kind_blocks = kr.blocks() if kr is not None else ()
    blocks += draw_all(kind_blocks, LEAD)
    blocks.append(metrics_table(r))
    # An unstable nominal has no steady-state response to draw.
    if (r.h_nominal is not None and r.freqs_hz is not None and len(r.freqs_hz)
            and not r.unstable_poles):
        blocks.append(bode_figure(r))
    pf = phasor_figure(r)
    if pf:
        blocks.append(pf)
    blocks += time_figures(r)
    blocks += draw_all(kind_blocks, BODY)
    blocks += histogram_figures(r)
    sens = sensitivity_table(r)
    if sens:
        blocks.append(sens)
    blocks += assumptions(list(_analysis_sentences(r, project)), list(r.assumptions))
    safety = safety_box(r, project.board.hazardous_voltage_v)
    return {**stage_head(r), "notes": list(paragraphs(st.notes)) if st.notes else [],
            "safety": safety, "caution": stability_caution(r), "blocks": blocks}


def stage_head(r: StageResult) -> dict:
    """What the front matter shows of a stage (rcdoc.note.assemble.front_context);
    the first fields of its stage_context."""
    return {"id": r.stage.id, "title": r.stage.title, "kind": KINDS[r.stage.kind].TITLE,
            "status": r.status}


def pole_text(p: complex) -> str:
    """A pole in Hz as a complex value: "120 Hz + j 3.4 kHz"."""
    re, im = p.real / (2 * math.pi), p.imag / (2 * math.pi)
    sign = "−" if im < 0 else "+"
    return f"{fq(re, 'Hz')} {sign} j {fq(abs(im), 'Hz')}"


def stability_caution(r: StageResult) -> dict | None:
    """The caution box of an unstable stage: the offending poles of the nominal design,
    or how many Monte Carlo samples are unstable."""
    items = []
    if r.unstable_poles:
        items.append("The nominal design is unstable: it has poles in the right half-plane or "
                     "on the imaginary axis (s/2π): "
                     + "; ".join(pole_text(p) for p in r.unstable_poles)
                     + ". Its metrics are missing, every check fails and no time response, "
                     "noise or steady state is computed.")
    if r.samples_unstable:
        items.append(f"{r.samples_unstable} of {r.samples} Monte Carlo samples are unstable; "
                     "their metrics are missing and they count as failing every check.")
    if not items:
        return None
    return {"title": "Unstable", "items": items}


def _schematic_caption(r: StageResult) -> str:
    st = r.stage
    bits = []
    if st.source_r or st.source_l:
        bits.append("the source impedance (Rs, Ls) is part of the analysis")
    if st.load_r is not None or st.load_c is not None:
        bits.append("the load (RL, CL) is part of the analysis")
    return ("Values as marked; " + "; ".join(bits) + ".") if bits else \
        "Values as marked; ideal source, output unloaded."


def _analysis_sentences(r: StageResult, project: Project):
    a = project.analysis
    t0, t1 = a.temperature_c
    temp = f"{t0:g} °C" if t0 == t1 else f"{t0:g} °C to {t1:g} °C"
    yield (f"{r.samples} Monte Carlo samples, seed {a.seed}, {a.distribution} tolerance "
           f"distribution" + (" (tolerance = 3σ)" if a.distribution == "normal" else "") +
           f"; ambient {temp}, one temperature per sample shared by all parts.")
    if len(r.freqs_hz):      # kinds with their own analysis (snubbers) have no sweep
        yield (f"Sweep {fq(r.freqs_hz[0], 'Hz')} to {fq(r.freqs_hz[-1], 'Hz')}, "
               f"{a.points_per_decade} points per decade; noise integrated over the sweep at "
               f"{t1:g} °C.")


def overview_images(results: list[StageResult]) -> list[dict]:
    """The summary chart, in charts that fit a page each (at most
    rcdoc.note.overview.OVERVIEW_ROWS stages), as the templates get them
    (``overview_images``: {"image": PNG bytes, "title"}): each stage's corners
    (both of a band-pass), notch or ring frequency, nominal and Monte Carlo
    min-max. Empty where no stage has one of them."""
    return overview_charts(overview_rows(results))


def overview_charts(rows: list[dict], drawn: dict | None = None,
                    keys: Sequence[str] = ()) -> list[dict]:
    """overview_images drawn from the rows rcdoc.note.overview.overview_rows gives.
    ``drawn`` (key -> image) holds charts drawn before, under the keys
    rcdoc.note.overview.chart_keys gave them; the charts whose key (``keys``, one a
    chart) is there are taken from it, not drawn again."""
    if not rows:
        return []
    have = [(drawn or {}).get(k) for k in keys]
    have = [im if isinstance(im, bytes) else None for im in have]
    from rcdoc.note import charts_time
    images = charts_time.corner_overview_pages(
        "board-overview", rows, fmt="png", skip={k for k, im in enumerate(have) if im is not None})
    images = [old if old is not None else new
              for old, new in zip(have + [None] * (len(images) - len(have)), images)]
    titles = overview_titles([row["label"] for row in rows])
    return [{"image": im, "title": t} for im, t in zip(images, titles)]


def _overview_keys(charts: list[dict]) -> dict:
    """The context's summary charts: ``overview_images`` (all of them, with their
    headings) and ``overview_image`` (the first, for templates written before a
    summary chart could take more than one page)."""
    return {"overview_images": list(charts),
            "overview_image": charts[0]["image"] if charts else None}


def note_context(project: Project, results: list[StageResult], *, extra_appendix=(),
                 stage_contexts: list[dict] | None = None, changes: dict | None = None,
                 overview: tuple | None = None) -> dict:
    """The whole note's context. ``stage_contexts`` (one stage_context per result,
    made in worker processes or taken from the build cache) saves drawing them here;
    ``changes`` (rcdoc.commands.since.changes_section) goes right after the summary;
    ``overview`` (one item: overview_images of these results, drawn already) saves
    drawing the summary charts again."""
    b = project.board
    a = project.analysis
    t0, t1 = a.temperature_c
    return {
        "title": f"Design note: {b.name} rev {b.revision}",
        "generator": f"rcdoc {__version__}",
        "board": {"name": b.name, "revision": b.revision, "date": b.date,
                  "authors": list(b.authors), "notes": list(paragraphs(b.notes)) if b.notes else []},
        "status": board_status(results),
        "analysis": [["Stages", str(len(results))],
                     ["Monte Carlo samples per stage", str(a.samples)],
                     ["Seed", str(a.seed)], ["Tolerance distribution", a.distribution],
                     ["Ambient temperature", f"{t0:g} °C" if t0 == t1 else f"{t0:g} °C to {t1:g} °C"],
                     ["Hazardous voltage threshold", fq(b.hazardous_voltage_v, "V")]],
        "summary": {"columns": ["Stage", "Kind", "Key result (spread)", "Checks passed",
                                "Verdict"], "rows": summary_rows(results)},
        **_overview_keys(overview[0] if overview is not None else overview_images(results)),
        "stages": (list(stage_contexts) if stage_contexts is not None
                   else [stage_context(r, project) for r in results]),
        "appendix": list(extra_appendix) + bom_appendix(project) + method_appendix(),
        "changes": changes,
    }
