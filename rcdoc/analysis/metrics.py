"""The metric registry: one table that checks, tables, the JSON summary, the
terminal, the charts and the documentation's metric table all read.

Each entry says what a metric is (name, unit, labels, one-line definition),
what a check on it takes (``params``), which kinds offer it (``kinds``: kind
names or the categories below, as data) and how its numbers are shown
(``resolution``, ``digits``). The computations live in
``rcdoc.analysis.evaluate``; this module is data. A new metric is one
``_m(...)`` line here plus its computation (DEVELOPERS.md, "Adding a metric").
"""

from __future__ import annotations

from dataclasses import dataclass

# Kind categories a metric may name in ``kinds`` instead of kind names.
ALL_FILTERS = "all filters"                 # every kind with a frequency response
DRIVEN = "time-domain with a drive"         # filters whose stage has a `drive`
PWM = "time-domain with a pwm drive"
SECOND_ORDER = "second-order filters"       # sallen-key, mfb, ladder, network
BAND_PASS = "band-pass filters"             # rc-bandpass, network with passband = "band"
CATEGORIES = (ALL_FILTERS, DRIVEN, PWM, SECOND_ORDER, BAND_PASS)


@dataclass(frozen=True)
class Metric:
    name: str
    unit: str            # quantity unit code (rcdoc.input.quantities): parses limits, formats values
    json_unit: str       # unit written in the JSON summary (SI base units, dB, deg)
    label: str           # human name in the note's tables and charts
    short: str           # terminal label, at most 18 characters
    definition: str      # one line: the note's appendix and the docs' metric table
    params: tuple[str, ...] = ()   # what a check takes besides min/max/yield: "at", "drive", ...
    kinds: tuple[str, ...] = (ALL_FILTERS,)
    resolution: float = 0.0        # |value| below it is shown as 0 ("< res" for a stress)
    digits: int = 3                # significant figures shown at least
    stress: bool = False           # a part stress: tiny values read "< resolution"

    @property
    def needs_at(self) -> bool:
        return "at" in self.params

    @property
    def needs_drive(self) -> bool:
        return "drive" in self.params or "pwm drive" in self.params

    @property
    def description(self) -> str:       # older name of ``definition``
        return self.definition


def _m(name, unit, json_unit, label, short, definition, **kw):
    assert len(short) <= 18, short
    return name, Metric(name, unit, json_unit, label, short, definition, **kw)


_SNUB = ("snubber",)
_DEB = ("debounce",)
_ADC = ("sampled-input",)
_NOTCH = ("rc-notch",)

METRICS: dict[str, Metric] = dict([
    _m("corner", "Hz", "Hz", "Corner frequency (−3 dB)", "Corner",
       "frequency where the gain is 3.01 dB below the passband gain"),
    _m("corner_low", "Hz", "Hz", "Lower corner (−3 dB)", "Lower corner",
       "band-pass: −3 dB below the peak, on the low side", kinds=(BAND_PASS,)),
    _m("corner_high", "Hz", "Hz", "Upper corner (−3 dB)", "Upper corner",
       "band-pass: −3 dB below the peak, on the high side", kinds=(BAND_PASS,)),
    _m("passband_gain", "dB", "dB", "Passband gain", "Passband gain",
       "gain at DC (low-pass), at high frequency (high-pass) or at the peak (band-pass)",
       resolution=1e-4),
    _m("f0", "Hz", "Hz", "Natural frequency f0", "f0",
       "from the two dominant poles: f0 = √(p1·p2)/2π", kinds=(SECOND_ORDER,)),
    _m("q", "1", "1", "Quality factor Q", "Q",
       "from the two dominant poles: Q = √(p1·p2)/|p1 + p2|", kinds=(SECOND_ORDER,)),
    _m("peaking", "dB", "dB", "Peaking", "Peaking",
       "largest gain above the passband gain (0 dB if none)", kinds=(SECOND_ORDER,),
       resolution=1e-4),
    _m("gain", "dB", "dB", "Gain", "Gain",
       "20·log10 |V(out)/V(source)| at the frequency", params=("at",), resolution=1e-4),
    _m("phase", "deg", "deg", "Phase", "Phase",
       "phase of V(out)/V(source) at the frequency, unwrapped along the sweep from the "
       "passband", params=("at",), resolution=1e-4),
    _m("group_delay", "s", "s", "Group delay", "Group delay",
       "−dφ/dω at the frequency", params=("at",), resolution=1e-15),
    _m("input_impedance", "ohm", "ohm", "Input impedance |Z|", "Input |Z|",
       "magnitude of the impedance the stage presents to its source, source impedance "
       "excluded", params=("at",)),
    _m("rise_time", "s", "s", "Rise time (10–90 %)", "Rise time",
       "time from 10 % to 90 % of the final value of the step response",
       params=("drive",), kinds=(DRIVEN,)),
    _m("settling", "s", "s", "Settling time", "Settling",
       "last time the step response is outside the band around its final value",
       params=("drive", "settling band"), kinds=(DRIVEN,)),
    _m("ripple", "V", "V", "Ripple (peak-to-peak)", "Ripple p-p",
       "steady-state peak-to-peak output for the pwm drive", params=("pwm drive",),
       kinds=(PWM,), resolution=1e-12),
    _m("noise", "V", "V", "Output noise (rms)", "Noise rms",
       "resistor thermal noise integrated over the sweep; includes kT/C", resolution=1e-12),
    _m("capacitor_voltage", "V", "V", "Peak capacitor voltage", "Capacitor peak V",
       "largest peak voltage across any capacitor of the stage", kinds=(DRIVEN, "snubber"),
       resolution=1e-6, stress=True),
    _m("damping", "1", "1", "Damping ratio ζ", "Damping ratio",
       "snubbers: damping ratio of the least damped pole pair with the snubber fitted",
       kinds=_SNUB),
    _m("overshoot", "V", "V", "Overshoot", "Overshoot",
       "snubbers: peak of the node or contact voltage above the switched voltage",
       kinds=_SNUB, resolution=1e-6),
    _m("resistor_power", "W", "W", "Resistor power", "Resistor power",
       "snubbers: average dissipation in the snubber resistor at the switching frequency",
       kinds=_SNUB, resolution=1e-12, stress=True),
    _m("resistor_surge", "W", "W", "Resistor surge power", "Resistor surge",
       "largest instantaneous power in any resistor, at the drive's edge: V²·R/(R + Rs)² "
       "for a resistor in series with the source", params=("drive",), kinds=(DRIVEN, "snubber"),
       resolution=1e-12, stress=True),
    _m("resistor_edge_energy", "J", "J", "Resistor energy per edge", "Resistor energy",
       "largest energy any resistor dissipates per drive edge (after a step, per PWM "
       "phase) or per switch opening; a full charge of C through R takes ½·C·V²",
       params=("drive",), kinds=(DRIVEN, "snubber"), resolution=1e-15, stress=True),
    _m("parasitic_c", "F", "F", "Parasitic capacitance", "Parasitic C",
       "snubbers: capacitance of the ringing node, given or from the two ringing "
       "measurements; across an inductive load the stray capacitance across the contact", kinds=_SNUB),
    _m("parasitic_l", "H", "H", "Loop inductance", "Loop L",
       "snubbers: inductance of the ringing loop, from f = 1/(2π√(LC)); across an "
       "inductive load the coil inductance", kinds=_SNUB),
    _m("characteristic_impedance", "ohm", "ohm", "Characteristic impedance Z0", "Z0",
       "snubbers: √(L/C) of the ringing loop", kinds=_SNUB),
    _m("ring_frequency", "Hz", "Hz", "Ringing frequency", "Ring frequency",
       "snubbers: ringing frequency without the snubber; across an inductive load the "
       "ring after the contact opens", kinds=_SNUB),
    _m("press_delay", "s", "s", "Press delay", "Press delay",
       "debounce: from the contact closing until the input crosses its threshold",
       kinds=_DEB),
    _m("release_delay", "s", "s", "Release delay", "Release delay",
       "debounce: from the contact opening until the input crosses the other threshold",
       kinds=_DEB),
    _m("high_level", "V", "V", "High level", "High level",
       "debounce: settled input voltage in the high state, leakage drawn out of the input",
       kinds=_DEB),
    _m("low_level", "V", "V", "Low level", "Low level",
       "debounce: settled input voltage in the low state, leakage into the input",
       kinds=_DEB, resolution=1e-9),
    _m("edge_rate", "V/s", "V/s", "Edge rate at threshold", "Edge rate",
       "debounce: magnitude of the slope where the slower edge crosses its threshold",
       kinds=_DEB),
    _m("sample_error", "LSB", "LSB", "Sample error", "Sample error",
       "converter input: sampled value at the end of the acquisition minus the level, in "
       "the periodic steady state, in LSB of the full scale", kinds=_ADC, resolution=1e-4),
    _m("kickback", "V", "V", "Kickback", "Kickback",
       "converter input: largest drop of the pin below its value when the switch closes, "
       "during the acquisition", kinds=_ADC, resolution=1e-9),
    _m("acquisition_settling", "s", "s", "Acquisition settling", "Acq. settling",
       "converter input: time from the switch closing until the sample stays within "
       "½ LSB of the level; missing if never", kinds=_ADC),
    _m("max_sample_rate", "Hz", "Hz", "Highest sample rate", "Max sample rate",
       "converter input: highest rate with the same acquisition time at which "
       "|sample error| ≤ ½ LSB", kinds=_ADC),
    _m("input_current", "A", "A", "Input current", "Input current",
       "converter input: average current drawn from the source in the steady state",
       kinds=_ADC, resolution=1e-15),
    _m("notch_frequency", "Hz", "Hz", "Notch frequency", "Notch frequency",
       "band-stop: frequency of the deepest gain in the sweep", kinds=_NOTCH),
    _m("notch_depth", "dB", "dB", "Notch depth", "Notch depth",
       "band-stop: gain at the notch frequency relative to the passband gain",
       kinds=_NOTCH, resolution=1e-4),
])


def metric(name: str) -> Metric:
    """The registry entry of ``name`` (KeyError names the unknown metric)."""
    return METRICS[name]
