"""The metric registry: one table that checks, tables, the JSON summary and
the charts all read (name, unit, label, what a check on it needs).

The computations themselves live in ``rcdoc.evaluate``; this module is data.
"""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class Metric:
    name: str
    unit: str            # quantity unit code (rcdoc.quantities) used to parse limits and format values
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
])
