"""sampled-input: an RC in front of a converter's switched sampling capacitor.

Reads ``level`` and the ``converter`` table, builds the RC (with the pin
capacitance) for the usual frequency metrics, and adds the converter metrics
(sample_error in LSB, kickback, acquisition_settling, max_sample_rate,
input_current) as Evaluator methods, so yields, worst case and sensitivities
come from the standard machinery. The physics is rcdoc.analysis.sampled; this module
reads keys, hands over values and describes the note page as block specs
(rcdoc.analysis.blocks) in a SampledInputResult; the note draws them.

The AC network is the RC with the pin capacitance and the source resistance;
the sampling capacitor is left out of it: it is connected only during the
acquisition, and its average effect (a load of f_s·C_s) is what
``input_current`` reports.
"""

from __future__ import annotations

import dataclasses
import sys
import math
from dataclasses import dataclass
from functools import cached_property

import numpy as np

from rcdoc.analysis import sampled as phys
from rcdoc.errors import ProjectError
from rcdoc.analysis.evaluate import Evaluator
from rcdoc.analysis.blocks import (Curve, LevelBand, Marker, SettleWindow, SweepChart,
                                   WaveformChart)
from rcdoc.kinds import recipes as sch
from rcdoc.kinds.recipes import Label
from rcdoc.analysis.network import GROUND, Element
from rcdoc.input.quantities import format_quantity, parse_positive, parse_quantity
from rcdoc.kinds import _first_order as first
from rcdoc.kinds import base

WAVE_PERIODS = phys.WAVE_PERIODS

NAME = "sampled-input"
OPTIONS = ("level", "converter")
PASSBAND = "low"
TITLE = "Converter input"
ROLES = ("r", "c")
PIN_C = "converter.pin_c"
CONVERTER_KEYS = ("sampling_c", "switch_r", "pin_c", "acquisition", "sample_rate",
                  "full_scale", "bits", "start", "leakage")
REQUIRED = ("sampling_c", "switch_r", "acquisition", "sample_rate", "full_scale", "bits")
METRIC_NAMES = ("sample_error", "kickback", "acquisition_settling", "max_sample_rate",
                "input_current")
HEADLINE = ("corner", "passband_gain") + METRIC_NAMES
characteristic_hz = first.characteristic_hz

# The switched analysis (exact intervals by scaling and squaring, then one solve for
# the periodic state) loses about eps·‖A·h‖ to the squarings (Higham, "The scaling
# and squaring method for the matrix exponential revisited", SIAM J. Matrix Anal.
# Appl. 26, 2005) and multiplies it by the condition of I − M, about τ_filter/T.
# Where that leaves the sample error uncertain by more than this share of an LSB,
# the file is refused rather than a number printed (1 GΩ, 10 mF against 1 mΩ, 1 fF
# gave a sampled value of 61 V from a 3.3 V level).
_RESOLVABLE_LSB = 0.05


def _lsb_text(x: float) -> str:
    return "over a thousand LSB" if x >= 1000 else f"about {x:.2g} LSB"


def check_roles(parts, options, path: str) -> None:
    first.check_roles(parts, options, path)
    conv = options["converter"]
    r, c = parts["r"].value, parts["c"].value         # the BOM is merged in by now
    c_f = c + conv["pin_c"]
    tau_switch = conv["switch_r"] * conv["sampling_c"] * c_f / (conv["sampling_c"] + c_f)
    tau_filter = r * c_f
    growth = (conv["acquisition"] / tau_switch) * max(1.0, tau_filter * conv["sample_rate"])
    uncertain_lsb = float(np.finfo(float).eps) * growth * 2.0 ** conv["bits"]
    if uncertain_lsb > _RESOLVABLE_LSB:
        stage = path.rsplit(".", 1)[0]
        raise ProjectError(
            f"the switch's time constant ({format_quantity(tau_switch, 's')}) and the "
            f"filter's ({format_quantity(tau_filter, 's')}) are too far apart to judge "
            f"{conv['bits']} bits: in double precision the sample error would be uncertain "
            f"by {_lsb_text(uncertain_lsb)}; check switch_r, sampling_c and acquisition "
            "against parts.r and parts.c", path=f"{stage}.converter")


def parse_options(t: dict, path: str) -> dict:
    from rcdoc.input.project import check_keys, need_int, need_table
    if "converter" not in t:
        raise ProjectError("a sampled-input stage needs converter = { sampling_c = ..., "
                           "switch_r = ..., acquisition = ..., sample_rate = ..., "
                           "full_scale = ..., bits = ... }", path=f"{path}.converter")
    cp = f"{path}.converter"
    raw = need_table(t["converter"], cp)
    check_keys(raw, CONVERTER_KEYS, cp)
    for key in REQUIRED:
        if key not in raw:
            raise ProjectError(f"'{key}' is missing", path=f"{cp}.{key}")
    conv = {"sampling_c": parse_positive(raw["sampling_c"], "F", f"{cp}.sampling_c"),
            "switch_r": parse_positive(raw["switch_r"], "ohm", f"{cp}.switch_r"),
            "acquisition": parse_positive(raw["acquisition"], "s", f"{cp}.acquisition"),
            "sample_rate": parse_positive(raw["sample_rate"], "Hz", f"{cp}.sample_rate"),
            "full_scale": parse_positive(raw["full_scale"], "V", f"{cp}.full_scale"),
            "bits": need_int(raw["bits"], f"{cp}.bits", 1, 32),
            "pin_c": parse_quantity(raw.get("pin_c", 0.0), "F", f"{cp}.pin_c"),
            "leakage": parse_quantity(raw.get("leakage", 0.0), "A", f"{cp}.leakage")}
    if conv["pin_c"] < 0:
        raise ProjectError("the pin capacitance cannot be negative", path=f"{cp}.pin_c")
    if conv["acquisition"] >= 1.0 / conv["sample_rate"]:
        raise ProjectError(f"the acquisition ({format_quantity(conv['acquisition'], 's')}) "
                           "must be shorter than the period 1/sample_rate "
                           f"({format_quantity(1.0 / conv['sample_rate'], 's')})",
                           path=f"{cp}.acquisition")
    start = raw.get("start", 0.0)
    conv["start"] = None if start == "previous" else parse_quantity(start, "V", f"{cp}.start")
    level = (parse_quantity(t["level"], "V", f"{path}.level") if "level" in t
             else conv["full_scale"])
    fixed = {PIN_C: conv["pin_c"]} if conv["pin_c"] > 0 else {}
    return {"converter": conv, "level_v": level, "fixed_elements": fixed}


def metrics(options, drive):
    return base.standard_metrics(drive, METRIC_NAMES)


def build(stage):
    els = [Element("r", "R", "in", "out"), Element("c", "C", "out", GROUND)]
    if stage.options["fixed_elements"]:
        els.append(Element(PIN_C, "C", "out", GROUND))
    return base.wrap(stage, els, path=("r", "c"))


def schematic(stage):
    conv, p = stage.options["converter"], stage.parts
    pin = Label("Cpin", format_quantity(conv["pin_c"], "F")) if conv["pin_c"] > 0 else None
    return sch.sampled_input(r=base.label(p["r"]), c=base.label(p["c"]), pin_c=pin,
                             switch_r=Label("Rsw", format_quantity(conv["switch_r"], "ohm")),
                             sampling_c=Label("Cs", format_quantity(conv["sampling_c"], "F")),
                             source=base.source_labels(stage))


def params_for(stage, values: dict) -> phys.Params:
    o = stage.options
    return phys.params(values["r"], values["c"], stage.source_r, o["converter"], o["level_v"])


class SampledEvaluator(Evaluator):
    """The standard metrics plus the converter's, one value per row."""

    @cached_property
    def sampled(self) -> phys.Params:
        return params_for(self.stage, self.values)

    @cached_property
    def sampled_state(self) -> dict:
        return phys.steady(self.sampled)

    def sample_error(self):
        return phys.sample_error(self.sampled, self.sampled_state)

    def kickback(self):
        return phys.kickback(self.sampled, self.sampled_state)

    def acquisition_settling(self):
        return phys.acquisition_settling(self.sampled, self.sampled_state)

    def max_sample_rate(self):
        return phys.max_sample_rate(self.sampled)

    def input_current(self):
        return phys.input_current(self.sampled, self.sampled_state)


# The Evaluator of this kind's network analysis (rcdoc.analysis.analyse.complete reads it).
EVALUATOR = SampledEvaluator


def analyse(stage, analysis, bode: bool = True):
    from rcdoc.analysis.analyse import analyse_network
    from rcdoc.analysis.spread import build_batch
    result = analyse_network(stage, analysis, sys.modules[__name__], evaluator=EVALUATOR,
                             bode=bode)
    nominal = build_batch(stage, analysis, samples=0).take(slice(0, 1))
    conv = stage.options["converter"]
    curves = phys.curves(params_for(stage, nominal), float(nominal["c"][0]), conv["pin_c"])
    kind_result = SampledInputResult(figures=note_blocks(result, curves))
    return dataclasses.replace(result, kind_result=kind_result,
                               assumptions=tuple(assumptions(stage)) + tuple(result.assumptions))


@dataclass(frozen=True)
class SampledInputResult:
    """The converter input's own results (the KindResult of rcdoc.analysis.results):
    its figures; its numbers are metrics of the generic analysis."""
    figures: tuple            # block specs of the page (rcdoc.analysis.blocks)
    summary: str = "—"        # the summary table shows the corner frequency instead
    # Voltages of this stage are those of the generic analysis (drive, capacitor
    # voltage); the converter adds none.
    peak_voltage_v: float = 0.0

    def blocks(self) -> tuple:
        return self.figures

    def json(self) -> dict:
        return {}           # the converter metrics are in the stage's metrics already



def assumptions(stage) -> list[str]:
    conv = stage.options["converter"]
    start = ("its own previous sample" if conv["start"] is None
             else f"{format_quantity(conv['start'], 'V')} (the previous channel)")
    return [
        f"Converter input: the switch closes for {format_quantity(conv['acquisition'], 's')} at "
        f"the start of each period of {format_quantity(1 / conv['sample_rate'], 's')} and "
        "the sampling capacitor holds for the rest; the sample is its voltage when the switch "
        f"opens. At each closing the sampling capacitor is at {start}.",
        "The switch is a fixed resistance; charge injection, the converter's own "
        "input buffer and the reference are not modelled. The source is ideal at the "
        f"stage's level ({format_quantity(stage.options['level_v'], 'V')}) behind the "
        "source resistance.",
        "The periodic steady state is solved directly (the state that repeats after one "
        "period), exactly within each interval; leakage is a constant current out of the pin.",
        "The frequency response is that of the RC with the pin capacitance; the sampling "
        "capacitor is not part of it (it is connected only during the acquisition; its "
        "average load is the input current).",
    ]


def _fq(v, unit):
    return format_quantity(float(v), unit) if math.isfinite(v) else "—"


def note_blocks(r, cv: dict) -> tuple:
    """The converter figures (block specs) from the arrays the analysis computed."""
    st = r.stage
    conv = st.options["converter"]
    level = st.options["level_v"]
    lsb = conv["full_scale"] / 2.0 ** conv["bits"]
    sid = st.id
    blocks = []
    settle = r.metric("acquisition_settling")
    # Shown as the deviation from the level in LSB, clipped to a window that keeps
    # the ½-LSB band readable (the reset to the start voltage runs off the scale).
    dev_p, dev_s = (cv["pin"] - level) / lsb, (cv["sampled"] - level) / lsb
    during = cv["t"] % cv["period"] <= conv["acquisition"]
    reach = max(4.0, 1.5 * float(np.max(np.abs(dev_p[during]))), 1.5 * abs(float(dev_s[-1])))
    half = np.full(len(cv["t"]), 0.5)
    settled = settle is not None and math.isfinite(settle.nominal)
    blocks.append(WaveformChart(
        f"{sid}-sampled", "Pin and sampled voltage (steady state)",
        f"{WAVE_PERIODS} periods at {_fq(conv['sample_rate'], 'Hz')}, as the deviation from the "
        f"level ({_fq(level, 'V')}) in LSB of {_fq(lsb, 'V')}, clipped to ±{reach:.3g} LSB: the "
        "sampling capacitor follows the pin while the switch is closed "
        f"({_fq(conv['acquisition'], 's')} from each period's start), then holds. "
        + ("The dashed line marks the acquisition settling." if settled else
           "The sample never settles within ½ LSB of the level."),
        cv["t"], np.clip(dev_s, -reach, reach), "Voltage − level [LSB]", "sampled (nominal)",
        window=SettleWindow(settle.nominal, -0.5, 0.5, "level ± ½ LSB") if settled else None,
        curves=(Curve("pin", np.clip(dev_p, -reach, reach), "without", cv["t"]),)
        + (() if settled else (Curve("± ½ LSB", half, "input", cv["t"]),
                               Curve("", -half, "input", cv["t"])))))
    msr = r.metric("max_sample_rate")
    msr_x = msr.nominal if msr is not None else math.nan
    blocks.append(SweepChart(
        f"{sid}-rate", "Sample error against sample rate",
        "Same acquisition time, nominal parts; chosen rate marked. Highest rate within "
        f"½ LSB (nominal): {_fq(msr_x, 'Hz')}"
        + ("" if math.isfinite(msr_x) else " (none: the acquisition alone leaves more than "
           "½ LSB)") + ".",
        cv["rates"], "Sample rate", "Hz", (Curve("sample error", cv["error_rate"], unit="LSB"),),
        marker_x=conv["sample_rate"], allowed=LevelBand(-0.5, 0.5, "± ½ LSB"),
        markers=(Marker(msr_x, f"highest rate {_fq(msr_x, 'Hz')}"),)))
    blocks.append(SweepChart(
        f"{sid}-cap", "Sample error against the filter capacitance",
        "R held at its value. Too little C: the sampling capacitor's charge pulls the pin "
        "down (kickback) and R cannot refill it within the acquisition; too much C with the "
        "same R: the pin recovers too slowly between samples.",
        cv["c"], "Filter capacitance", "F",
        (Curve("sample error", cv["error_c"], unit="LSB", axis="left"),
         Curve("kickback", cv["kickback_c"], unit="V", axis="right")),
        marker_x=float(st.parts["c"].value), allowed=LevelBand(-0.5, 0.5, "± ½ LSB")))
    return tuple(blocks)
