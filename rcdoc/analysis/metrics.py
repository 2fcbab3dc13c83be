"""The metric registry: one table that checks, tables, the JSON summary and
the charts all read (name, unit, label, what a check on it needs).

The computations themselves live in ``rcdoc.analysis.evaluate``; this module is data.
"""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class Metric:
    name: str
    unit: str            # quantity unit code (rcdoc.input.quantities) used to parse limits and format values
    json_unit: str       # unit written in the JSON summary (SI base units, dB, deg)
    label: str           # human name in tables and charts
    needs_at: bool = False
    needs_drive: bool = False
    description: str = ""


def _m(name, unit, json_unit, label, **kw):
    return name, Metric(name, unit, json_unit, label, **kw)


METRICS: dict[str, Metric] = dict([
    _m("corner", "Hz", "Hz", "Corner frequency (−3 dB)",
       description="frequency where the gain is 3.01 dB below the passband gain"),
    _m("corner_low", "Hz", "Hz", "Lower corner (−3 dB)",
       description="band-pass: −3 dB below the peak, on the low side"),
    _m("corner_high", "Hz", "Hz", "Upper corner (−3 dB)",
       description="band-pass: −3 dB below the peak, on the high side"),
    _m("passband_gain", "dB", "dB", "Passband gain",
       description="gain at DC (low-pass), at high frequency (high-pass) "
                   "or at the peak (band-pass)"),
    _m("f0", "Hz", "Hz", "Natural frequency f0",
       description="from the two dominant poles: f0 = √(p1·p2)/2π"),
    _m("q", "1", "1", "Quality factor Q",
       description="from the two dominant poles: Q = √(p1·p2)/|p1 + p2|"),
    _m("peaking", "dB", "dB", "Peaking",
       description="largest gain above the passband gain (0 dB if none)"),
    _m("gain", "dB", "dB", "Gain", needs_at=True,
       description="20·log10 |V(out)/V(source)| at the frequency"),
    _m("phase", "deg", "deg", "Phase", needs_at=True,
       description="phase of V(out)/V(source) at the frequency, unwrapped along the "
                   "sweep from the passband"),
    _m("group_delay", "s", "s", "Group delay", needs_at=True,
       description="−dφ/dω at the frequency"),
    _m("input_impedance", "ohm", "ohm", "Input impedance |Z|", needs_at=True,
       description="magnitude of the impedance the stage presents to its source, "
                   "source impedance excluded"),
    _m("rise_time", "s", "s", "Rise time (10–90 %)", needs_drive=True,
       description="time from 10 % to 90 % of the final value of the step response"),
    _m("settling", "s", "s", "Settling time", needs_drive=True,
       description="last time the step response is outside the band around its final value"),
    _m("ripple", "V", "V", "Ripple (peak-to-peak)", needs_drive=True,
       description="steady-state peak-to-peak output for the pwm drive"),
    _m("noise", "V", "V", "Output noise (rms)",
       description="resistor thermal noise integrated over the sweep; includes kT/C"),
    _m("capacitor_voltage", "V", "V", "Peak capacitor voltage",
       description="largest peak voltage across any capacitor of the stage"),
    _m("notch_frequency", "Hz", "Hz", "Notch frequency",
       description="band-stop: frequency of the deepest gain, refined between the sweep's "
                   "points"),
    _m("notch_depth", "dB", "dB", "Notch depth",
       description="band-stop: gain at the notch frequency relative to the passband gain "
                   "(read at DC); negative"),
    _m("damping", "1", "1", "Damping ratio ζ",
       description="snubbers: damping ratio of the least damped pole pair with the snubber fitted"),
    _m("overshoot", "V", "V", "Overshoot",
       description="snubbers: peak of the node or contact voltage above the switched voltage"),
    _m("resistor_power", "W", "W", "Resistor power",
       description="snubbers: average dissipation in the snubber resistor at the switching frequency"),
    _m("parasitic_c", "F", "F", "Parasitic capacitance",
       description="snubbers: capacitance of the ringing node, given or from the two ringing measurements"),
    _m("parasitic_l", "H", "H", "Loop inductance",
       description="snubbers: inductance of the ringing loop, from f = 1/(2π√(LC))"),
    _m("characteristic_impedance", "ohm", "ohm", "Characteristic impedance Z0",
       description="snubbers: √(L/C) of the ringing loop"),
    _m("ring_frequency", "Hz", "Hz", "Ringing frequency",
       description="snubbers: ringing frequency without the snubber"),
    _m("press_delay", "s", "s", "Press delay",
       description="debounce: from the contact closing until the input crosses its threshold"),
    _m("release_delay", "s", "s", "Release delay",
       description="debounce: from the contact opening until the input crosses the other "
                   "threshold"),
    _m("high_level", "V", "V", "High level",
       description="debounce: settled input voltage in the high state, leakage drawn out of "
                   "the input"),
    _m("low_level", "V", "V", "Low level",
       description="debounce: settled input voltage in the low state, leakage into the input"),
    _m("edge_rate", "V/s", "V/s", "Edge rate at threshold",
       description="debounce: magnitude of the slope where the slower edge crosses its "
                   "threshold"),
    _m("sample_error", "LSB", "LSB", "Sample error",
       description="converter input: sampled value at the end of the acquisition minus the "
                   "level, in the periodic steady state, in LSB of the full scale"),
    _m("kickback", "V", "V", "Kickback",
       description="converter input: largest drop of the pin below its value when the "
                   "switch closes, during the acquisition"),
    _m("acquisition_settling", "s", "s", "Acquisition settling",
       description="converter input: time from the switch closing until the sample stays "
                   "within ½ LSB of the level; missing if never"),
    _m("max_sample_rate", "Hz", "Hz", "Highest sample rate",
       description="converter input: highest rate with the same acquisition time at which "
                   "|sample error| ≤ ½ LSB"),
    _m("input_current", "A", "A", "Input current",
       description="converter input: average current drawn from the source in the steady state"),
])
