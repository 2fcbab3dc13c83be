"""The safety caution box of a stage's page, worded by the kind of hazard.

Three hazards, each with its own heading and items: mains AC (a stage on an
AC supply above the board's ``hazardous_voltage``: safety-rated capacitor
classes, mains creepage), high DC (above the threshold without AC: no word of
mains classes) and stored energy (a capacitor whose ½·C·V² at its highest
voltage exceeds ``STORED_ENERGY_J``, whatever the voltage). Every box ends by
deferring to the local codes and licensed practice.

What it must not do: analyse; it reads a StageResult and writes sentences.
"""

from __future__ import annotations

import math

from rcdoc.analysis.results import StageResult
from rcdoc.note.context import fq, stage_voltage

# Energy above which a charged capacitor is called out on its own: enough for a
# spark that burns skin or pits a probe tip (common practice, not a standard's limit).
STORED_ENERGY_J = 1.0

_DISCHARGE = ("Capacitors can hold a dangerous charge after the power is removed. Disconnect "
              "the supply, discharge them through a suitable resistor and confirm with a "
              "meter before touching the circuit.")
_DEFER = ("These calculations support a design review; they do not replace the local "
          "electrical codes, the product safety standards that apply, or the judgement of a "
          "licensed professional.")


def is_ac(r: StageResult) -> bool:
    """A stage on an AC supply (an inductive-load snubber with ``ac = true``)."""
    return bool(r.stage.options.get("ac", False))


def stored_energies(r: StageResult) -> list[tuple[str, float, float]]:
    """(designator, ½·C·V² in J, V) of each capacitor at its highest computed voltage."""
    out = []
    for row in r.parts:
        p = row.part
        if p.kind != "C":
            continue
        st = r.stresses.get(row.role)
        v = st.worst if st is not None else None
        if v is None and r.stage.kind == "snubber":
            m = r.metric("capacitor_voltage")
            v = float(max(m.samples.max(), m.nominal)) if m is not None and m.samples.size else None
        if v is None:
            v = p.bias_v or stage_voltage(r)
        if v is not None and math.isfinite(v):
            out.append((p.ref or row.role, 0.5 * row.in_circuit * v * v, v))
    return out


def safety_box(r: StageResult, hazardous_v: float) -> dict | None:
    """The caution box of a stage (``head`` and ``items``), or None when no hazard applies."""
    v = stage_voltage(r)
    stored = [s for s in stored_energies(r) if s[1] > STORED_ENERGY_J]
    energy_items = [f"Stored energy: {ref} holds up to {fq(e, 'J')} (½·C·V² at {fq(vc, 'V')}); "
                    "a short across it can burn or weld. Discharge it through a suitable "
                    "resistor and confirm with a meter before touching."
                    for ref, e, vc in stored]
    if v > hazardous_v and is_ac(r):
        head = f"Mains voltage: up to {fq(v, 'V')} peak"
        items = [f"Mains voltage: this stage works on the AC mains at up to {fq(v, 'V')} peak, "
                 "which can injure or kill. Only people qualified for mains work should "
                 "build, probe or repair it, with isolated or differential probes.",
                 _DISCHARGE,
                 "Capacitors across the mains must be safety-rated classes for that use "
                 "(across the line, or line to protective earth), at the working voltage "
                 "and its transients.",
                 "Keep the creepage and clearance distances that the applicable standard "
                 "requires for the mains voltage, overvoltage category, pollution degree "
                 "and insulation class."]
    elif v > hazardous_v:
        head = f"High DC voltage: up to {fq(v, 'V')}"
        items = [f"High DC voltage: this stage works at up to {fq(v, 'V')}, which can injure "
                 "or kill. Only people qualified for such work should build, probe or "
                 "repair it.",
                 _DISCHARGE,
                 "Capacitors on this node must be rated for the working voltage and its "
                 "transients, with margin.",
                 "Keep the creepage and clearance distances that the applicable standard "
                 "requires for the working voltage and pollution degree."]
    elif stored:
        head = f"Stored energy: up to {fq(max(s[1] for s in stored), 'J')}"
        items = []
    else:
        return None
    return {"voltage": fq(v, "V"), "head": head, "items": items + energy_items + [_DEFER]}
