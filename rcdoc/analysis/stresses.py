"""Part stresses of a driven stage from its time responses, per row.

The Evaluator's time responses record the output at every instant but keep of
each part's voltage only what these stresses read (rcdoc.analysis.transient.
Reduce): a capacitor's largest |v| (its peak voltage), a resistor's last value
(power after a step), the mean of v² over a PWM period, and per edge of the
drive v at the first samples with the sum and largest of v² (surge power and
energy per edge). Memory so grows with neither the grid nor the part count.
This mixin is part of rcdoc.analysis.evaluate.Evaluator, whose time grids,
poles and probes it reads.
"""

from __future__ import annotations

import numpy as np

from rcdoc.analysis.transient import Reduce


class PartStresses:
    """Capacitor voltages and resistor powers, surges and edge energies of the drive."""

    def _drive_time_s(self) -> np.ndarray:
        return self.pwm_time_s if self.stage.drive.kind == "pwm" else self.time_s

    def _widths(self, points: int, reduce: dict) -> dict[str, int]:
        return {self.network.output: points, **{n: r.width for n, r in reduce.items()}}

    def _phases(self, points: int) -> list[tuple[int, int, tuple[int, ...]]]:
        """The samples after each edge of the drive whose v²/R the pulse stresses read:
        indices range(lo, hi) then ``extra``; only runs of three or more. Sample n
        shows the state at t_n with the input held over the interval before it: after
        a step, samples 1..T−1; in a PWM period, the high phase 1..k and the low
        phase k+1..T−1 then 0 (= T)."""
        d = self.stage.drive
        if d is None:
            return []
        if d.kind != "pwm":
            runs = [(1, points, ())]
        else:
            k = int(np.sum(self.pwm_time_s < d.duty / d.frequency_hz))
            runs = [(1, k + 1, ()), (k + 1, points, (0,))]
        return [r for r in runs if max(r[1] - r[0], 0) + len(r[2]) >= 3]

    def _part_reductions(self, points: int) -> dict[str, "Reduce"]:
        """Per capacitor or resistor of the stage, what its stresses need of its voltage
        (rcdoc.analysis.transient.Reduce): a capacitor its largest |v|; a resistor its
        last value, the mean of v² over a PWM period and, per edge, v at the first
        samples and the sum and largest of v² (capacitor_peaks, resistor_powers,
        resistor_pulses)."""
        elements = {e.name for e in self.network.elements}
        pwm = self.stage.drive is not None and self.stage.drive.kind == "pwm"
        out = {}
        for role, part in self.stage.parts.items():
            if role not in elements or part.kind not in ("R", "C"):
                continue
            if part.kind == "C":
                out[f"v:{role}"] = Reduce()
                continue
            windows, at = [(0, points)] if pwm else [], [points - 1]
            for lo, hi, extra in self._phases(points):
                windows.append((lo, hi))
                at += _first_three(lo, hi, extra) + list(extra) + [_last_of(lo, hi, extra)]
            out[f"v:{role}"] = Reduce(tuple(dict.fromkeys(windows)), tuple(dict.fromkeys(at)))
        return out

    def _reduced(self, role: str) -> tuple["Reduce", np.ndarray]:
        """A part's reductions (see _part_reductions) and their columns for the drive."""
        points = len(self._drive_time_s())
        name = f"v:{role}"
        return self._part_reductions(points)[name], self.drive_probes[name]

    def capacitor_peaks(self) -> dict[str, np.ndarray]:
        """Peak voltage per capacitor of the stage: stated DC bias plus the drive's peak."""
        out = {}
        probes = self.drive_probes
        for role, part in self.stage.parts.items():
            if part.kind != "C":
                continue
            if probes:
                red, a = self._reduced(role)
                peak = red.absmax(a)
            else:
                peak = np.zeros(self.rows)
            out[role] = peak + (part.bias_v or 0.0)
        return out

    def resistor_powers(self) -> dict[str, np.ndarray]:
        """Average power per resistor: over a PWM period in steady state, or after a step settles."""
        out = {}
        if self.drive_probes is None:
            return out
        for role, part in self.stage.parts.items():
            if part.kind != "R":
                continue
            red, a = self._reduced(role)
            r = self.values[role]
            if self.stage.drive.kind == "pwm":
                n = len(self.pwm_time_s)
                out[role] = red.sumsq(a, (0, n)) / n / r
            else:
                out[role] = red.value(a, len(self.time_s) - 1) ** 2 / r
        return out

    def resistor_pulses(self) -> dict[str, tuple[np.ndarray, np.ndarray]]:
        """Per resistor (surge power, energy per edge). The surge is the largest
        instantaneous v²/R just after an edge: V²·R/(R + Rs)² for a resistor in
        series with the source. The energy is ∫v²/R dt after a step (to the end of
        the settling window), or over the longer of the two PWM phases in steady
        state; a full charge of C through R alone takes ½·C·V² (textbook). A row
        whose fastest pole the time grid does not resolve (|p|·Δt > 0.5) has no
        value (NaN): its edge happens between two instants."""
        out = {}
        if self.drive_probes is None:
            return out
        d = self.stage.drive
        t = self.pwm_time_s if d.kind == "pwm" else self.time_s
        dt = t[1] - t[0]
        fastest = np.nanmax(np.abs(self.poles.real), axis=1, initial=0.0)
        unresolved = fastest * dt > 0.5
        for role, part in self.stage.parts.items():
            if part.kind != "R":
                continue
            red, a = self._reduced(role)
            r = self.values[role]
            surge, energy = np.zeros(self.rows), np.zeros(self.rows)
            for lo, hi, extra in self._phases(t.size):
                # An edge's first instant is never a sample (see _phases): it is
                # extrapolated from the three samples that follow (quadratic, error
                # of order (|p|·Δt)³); the run with it is integrated by the trapezoid rule.
                v0, v1, v2 = (red.value(a, i) for i in _first_three(lo, hi, extra))
                edge = (3 * v0 - 3 * v1 + v2) ** 2
                points = [red.value(a, i) ** 2 for i in extra]
                top = np.maximum.reduce([edge, red.maxsq(a, (lo, hi)), *points])
                total = edge + red.sumsq(a, (lo, hi)) + sum(points)
                last = red.value(a, _last_of(lo, hi, extra)) ** 2
                surge = np.maximum(surge, top / r)
                energy = np.maximum(energy, dt * (total - (edge + last) / 2) / r)
            out[role] = (np.where(unresolved, np.nan, surge), np.where(unresolved, np.nan, energy))
        return out

    def resistor_surge(self) -> np.ndarray:
        pulses = self.resistor_pulses()
        if not pulses:
            return np.zeros(self.rows)
        return np.max(np.stack([s for s, _ in pulses.values()]), axis=0)

    def resistor_edge_energy(self) -> np.ndarray:
        pulses = self.resistor_pulses()
        if not pulses:
            return np.zeros(self.rows)
        return np.max(np.stack([e for _, e in pulses.values()]), axis=0)

    def capacitor_voltage(self) -> np.ndarray:
        peaks = self.capacitor_peaks()
        if not peaks:
            return np.zeros(self.rows)
        return np.max(np.stack(list(peaks.values())), axis=0)


def _first_three(lo: int, hi: int, extra: tuple[int, ...]) -> list[int]:
    """The first three indices of range(lo, hi) followed by ``extra``."""
    return (list(range(lo, min(hi, lo + 3))) + list(extra))[:3]


def _last_of(lo: int, hi: int, extra: tuple[int, ...]) -> int:
    return extra[-1] if extra else hi - 1
