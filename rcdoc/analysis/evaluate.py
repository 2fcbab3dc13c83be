"""Metric computations over a batch of part values.

An Evaluator holds one stage's Network and a batch of values (one row per
Monte Carlo sample, worst-case vertex or sensitivity probe) and computes any
registered metric for every row at once, caching the sweeps it shares
(frequency response, step response, PWM steady state). No Python loop runs
per row; loops run over bisection steps, time steps or parts only.
"""

from __future__ import annotations

import math
from functools import cached_property

import numpy as np

from rcdoc.analysis import engine
from rcdoc.analysis import poles as polemod
from rcdoc.analysis import mark_phase, sweep_math
from rcdoc.analysis.sweep_math import db
from rcdoc.analysis.noise import integration_grid, resonant_columns
from rcdoc.analysis.response import Response
from rcdoc.analysis.stresses import PartStresses
from rcdoc.analysis.timesearch import cross_time, last_outside, block_extremes
from rcdoc.input.limits import SWEEP_MAX_DECADES
from rcdoc.input.model import Check, Stage
from rcdoc.analysis.network import Network

DB3 = 10 * math.log10(2.0)          # 3.0103 dB: half power
CORNER_ITERATIONS = 40               # bisection steps in log-frequency: far below 1 ppm
NOTCH_ITERATIONS = 60                # golden-section steps into a null (see Evaluator._notch)
PEAK_ITERATIONS = 30                 # golden-section steps: bracket shrinks by 0.618^30 ≈ 5e-7
TIME_POINTS = 4000                   # step-response grid
TIME_CONSTANTS = 24.0                # step window in slowest nominal time constants
PWM_POINTS = 1000                    # points over one PWM period
SWEEP_HALF_SPAN = 10 ** (SWEEP_MAX_DECADES / 2)   # the widest `sweep` a project may give


def sweep_for(stage_char_hz: float, analysis, poles_hz=None) -> np.ndarray:
    """Log sweep: the project's range, or 3 decades either side of the stage's
    frequency, widened to a decade beyond ``poles_hz`` (a network's lowest and
    highest pole frequency: far apart, they lie outside those 3 decades)."""
    if analysis.sweep_hz is not None:
        lo, hi = analysis.sweep_hz
    else:
        lo, hi = stage_char_hz / 1e3, stage_char_hz * 1e3
        if poles_hz is not None:
            lo = max(min(lo, poles_hz[0] / 10), stage_char_hz / SWEEP_HALF_SPAN)
            hi = min(max(hi, poles_hz[1] * 10), stage_char_hz * SWEEP_HALF_SPAN)
    n = max(int(round(math.log10(hi / lo) * analysis.points_per_decade)) + 1, 2)
    return np.logspace(math.log10(lo), math.log10(hi), n)


class Evaluator(PartStresses):
    """Computes metrics for every row of a batch of values."""

    def __init__(self, stage: Stage, network: Network, values: dict[str, np.ndarray],
                 freqs_hz: np.ndarray, passband: str, char_hz: float,
                 temperature_k: np.ndarray | float = 298.15,
                 time_s: np.ndarray | None = None,
                 noise_columns: tuple[int, ...] | None = None,
                 stresses: bool = True):
        """``time_s``: the step-response grid to use (chunks of one batch must share
        one grid); by default one is chosen from these rows' slowest pole.
        ``noise_columns``: the pole columns whose resonances the noise integral
        refines (chunks of one batch must share them); by default from the first row.
        ``stresses``: whether the drive's march also reduces the part voltages on
        the fly (the pipeline's chunks); without it (worst-case walks and searches,
        alternatives) the march forms the output alone, and a part stress asked
        for all the same gets a march of its own (the same numbers either way)."""
        self.stage = stage
        self.network = network
        self.values = values
        self.freqs_hz = freqs_hz
        self.passband = passband
        self.char_hz = char_hz
        self.temperature_k = temperature_k
        self.rows = len(next(iter(values.values())))
        self.stresses = stresses
        if time_s is not None:
            self.__dict__["time_s"] = time_s     # fills the cached property below
        if noise_columns is not None:
            self.__dict__["noise_columns"] = tuple(noise_columns)

    # ---- frequency domain -------------------------------------------------
    @cached_property
    def conditioned(self):
        """(system, T): the system in tree-branch coordinates, the output's voltage one
        of them (values decades apart keep their digits; see analysis/treecoords.py)."""
        return engine.conditioned(self.network, self.values)

    @cached_property
    def system(self):
        return self.conditioned[0]

    @cached_property
    def response(self) -> Response:
        """Zero-pole-gain form of every row's H (the sweep's): cheap searches off the grid.
        Its poles are the stability rule's where those are solved already (``metric``
        asks for them first, so the analysis solves them once); a sweep asked for
        alone solves its own, more cheaply than rcdoc.analysis.poles (no balancing,
        no tree-branch coordinates), and 3e-8 off scipy at Q 300 where those are 5e-13."""
        shared = self.__dict__.get("poles")
        return Response(self.system, self.system.node(self.network.output), self.freqs_hz,
                        shared)

    @cached_property
    def h(self) -> np.ndarray:
        return self.response.sweep(self.freqs_hz)

    def h_row(self, i: int) -> np.ndarray:
        """H over the sweep of row ``i`` alone, (F,): the complex sweep's numbers,
        without sweeping every row where their gain and phase need no complex sweep."""
        if "h" in self.__dict__:
            return self.h[i].copy()
        return self.response.sweep(self.freqs_hz, slice(i, i + 1))[0]

    @cached_property
    def phase_rad(self) -> np.ndarray:
        """Principal phase of the sweep (rows × frequencies), computed once: the
        phase at every mark and the phase band read it (np.angle's values, faster).
        First- and second-order responses take it in real arithmetic, without the
        complex sweep (Response.sweep_phase)."""
        if "h" not in self.__dict__:
            got = self.response.sweep_phase(self.freqs_hz)
            if got is not None:
                return got
        return sweep_math.angle(self.h)

    @cached_property
    def gain_db(self) -> np.ndarray:
        """20·log10|H| over the sweep; in real arithmetic where Response.sweep_db can."""
        if "h" not in self.__dict__:
            got = self.response.sweep_db(self.freqs_hz)
            if got is not None:
                return got
        return db(self.h)

    def phase_wraps(self, from_high: bool = False):
        """(phase, rows, K): the principal phase along the sweep (from its high end
        if ``from_high``) and np.unwrap's corrections (sweep_math.unwrap_corrections),
        computed once per chunk for the band and every mark."""
        key = "_wraps_high" if from_high else "_wraps_low"
        if key not in self.__dict__:
            p = self.phase_rad[:, ::-1] if from_high else self.phase_rad
            self.__dict__[key] = (p, *sweep_math.unwrap_corrections(p))
        return self.__dict__[key]

    @cached_property
    def phase_unwrapped(self) -> np.ndarray:
        """np.unwrap of the sweep's phase along frequency (radians), from the low end."""
        return sweep_math.unwrapped(*self.phase_wraps())

    def h_rows(self, f_hz: np.ndarray) -> np.ndarray:
        """H at one frequency per row (rows may differ): solve (G + sC) x = b row by row at once."""
        sysm = self.system
        s = 2j * np.pi * np.asarray(f_hz, dtype=float)
        a = sysm.G + s[:, None, None] * sysm.C
        b = np.broadcast_to(sysm.b.astype(complex), (a.shape[0], a.shape[1]))
        x = np.linalg.solve(a, b[..., None])[..., 0]
        return x[:, sysm.index[self.network.output]]

    def h_at(self, f_hz: float) -> np.ndarray:
        return self.response.at_rows(np.full(self.rows, float(f_hz)))

    @cached_property
    def passband_db(self) -> np.ndarray:
        if self.passband in ("low", "band-stop"):
            # A low-pass's passband is DC: reading it at the first swept frequency
            # would move the corner with the sweep's start (a sweep starting at fc/8
            # shifted a first-order corner by 1.6 %). Fall back to the sweep's first
            # point where the DC solution does not exist or is zero (blocking capacitor).
            try:
                dc = db(self.response.at_rows(np.zeros(self.rows)))
            except np.linalg.LinAlgError:
                return self.gain_db[:, 0]
            ok = np.isfinite(dc)      # then no sweep is needed (a worst-case probe's rows)
            return dc if ok.all() else np.where(ok, dc, self.gain_db[:, 0])
        if self.passband == "high":
            # A high-pass's passband is at high frequency: the gain keeps rising past
            # the sweep's end (by 4e-6 dB at 1000·fc, more if the sweep ends near the
            # corner), so take the larger of the sweep's end and far above it; a
            # roll-off above the sweep (a source inductance) leaves the sweep's end.
            far = db(self.h_rows(np.full(self.rows, self.freqs_hz[-1] * 1e6)))
            return np.fmax(self.gain_db[:, -1], far)
        return self.peak_db      # band-pass: the top of the response, refined off the grid

    def passband_gain(self) -> np.ndarray:
        return self.passband_db

    def _crossing(self, side: str) -> np.ndarray:
        """Frequency where the gain falls 3.01 dB below the passband, per row (NaN if outside)."""
        g, f = self.gain_db, self.freqs_hz
        thr = self.passband_db - DB3
        below = g < thr[:, None]
        rows = np.arange(self.rows)
        if side == "up":        # gain falls with frequency above the passband
            if self.passband != "low":      # only the fall after the peak counts
                peak = np.argmax(g, axis=1)
                below = below & (np.arange(len(f))[None, :] > peak[:, None])
            j = np.argmax(below, axis=1)
            ok = below[rows, j] & (j > 0)
            lo, hi = f[np.maximum(j - 1, 0)], f[j]
        else:                   # gain rises with frequency below the passband
            if self.passband == "band":
                peak = np.argmax(g, axis=1)
                below = below & (np.arange(len(f))[None, :] < peak[:, None])
            jr = np.argmax(below[:, ::-1], axis=1)
            j = len(f) - 1 - jr
            ok = below[rows, j] & (j < len(f) - 1)
            lo, hi = f[j], f[np.minimum(j + 1, len(f) - 1)]
        lo, hi = lo.astype(float), hi.astype(float)
        fc = sweep_math.confirmed_crossing(self.response, thr, lo, hi, side == "up")
        todo = np.flatnonzero(ok & np.isnan(fc))          # the rows it does not serve
        if todo.size:       # Newton's steps where they converge (confirmed as the closed form)
            fc[todo] = sweep_math.newton_crossing(self.response, todo, thr[todo], lo[todo],
                                                  hi[todo], side == "up")
            todo = todo[np.isnan(fc[todo])]
        lo, hi, t = lo[todo], hi[todo], thr[todo]
        probe = self.response.rows(todo)
        for _ in range(CORNER_ITERATIONS if todo.size else 0):
            mid = np.sqrt(lo * hi)
            under = probe.db(mid) < t
            if side == "up":
                hi, lo = np.where(under, mid, hi), np.where(under, lo, mid)
            else:
                lo, hi = np.where(under, mid, lo), np.where(under, hi, mid)
        fc[todo] = np.sqrt(lo * hi)
        return np.where(ok, fc, np.nan)

    def corner(self) -> np.ndarray:
        return self._crossing("down" if self.passband == "high" else "up")

    def corner_low(self) -> np.ndarray:
        return self._crossing("down")

    def corner_high(self) -> np.ndarray:
        return self._crossing("up")

    @cached_property
    def poles(self) -> np.ndarray:
        """Finite poles per row, sorted by magnitude (rows × n, NaN-padded), from a
        well-conditioned form of the network (rcdoc.analysis.poles)."""
        return polemod.poles(self.network, self.values)

    @cached_property
    def unstable(self) -> np.ndarray:
        """Rows with a pole in the right half-plane or on the imaginary axis."""
        return polemod.unstable(self.poles)

    def _two_poles(self):
        p = self.poles
        if p.shape[1] < 2:
            nan = np.full(self.rows, np.nan)
            return nan, nan
        if self.stage.kind == "network":
            return _dominant_pair(p)
        p1, p2 = p[:, 0], p[:, 1]
        w0 = np.sqrt(np.abs(p1 * p2))
        return w0, np.abs((p1 + p2).real)

    def f0(self) -> np.ndarray:
        w0, _ = self._two_poles()
        return w0 / (2 * np.pi)

    def q(self) -> np.ndarray:
        w0, s = self._two_poles()
        with np.errstate(divide="ignore", invalid="ignore"):
            return w0 / s

    def peaking(self) -> np.ndarray:
        peak = np.maximum(self.peak_db - self.passband_db, 0.0)
        if self.stage.kind == "network":      # only where a complex pair can peak
            peak = np.where(np.isfinite(self.f0()), peak, np.nan)
        return peak

    @cached_property
    def peak_db(self) -> np.ndarray:
        """Largest gain per row: the sweep's maximum refined between its neighbours.

        At 50 points per decade the sweep misses the top of a Q = 2 resonance by
        0.025 dB; a golden-section search in log-frequency over the two grid steps
        around the sweep's maximum finds it (unimodal there).
        """
        g = self.gain_db
        j = np.argmax(g, axis=1)
        f = self.freqs_hz
        # Newton's steps on the slope where they serve (sweep_math.newton_peak), the
        # golden section on the other rows.
        top = sweep_math.newton_peak(self.response, np.arange(self.rows),
                                     np.log(f[np.maximum(j - 1, 0)]),
                                     np.log(f[np.minimum(j + 1, len(f) - 1)]))
        rest = np.flatnonzero(np.isnan(top))
        if rest.size:
            _, _, gc, gd = self._golden(j[rest], PEAK_ITERATIONS, top=True, rows=rest)
            top[rest] = np.fmax(gc, gd)
        return np.fmax(g[np.arange(self.rows), j], top)

    def _golden(self, j: np.ndarray, iterations: int, top: bool, rows=None):
        """Golden-section search in log-frequency over the two sweep steps around
        column j of each row (of the rows ``rows`` if given, an index array), for the
        top (``top``) or the bottom of the gain; returns the last two probes (c, d in
        log-Hz) and their gains in dB."""
        f = self.freqs_hz
        a = np.log(f[np.maximum(j - 1, 0)])
        b = np.log(f[np.minimum(j + 1, len(f) - 1)])
        k = (math.sqrt(5.0) - 1) / 2
        c, d = b - k * (b - a), a + k * (b - a)
        probe = self.response.rows(rows)
        gc, gd = probe.db(np.exp(c)), probe.db(np.exp(d))
        for _ in range(iterations):
            left = gc >= gd if top else gc <= gd     # the extreme lies in [a, d]
            b, a = np.where(left, d, b), np.where(left, a, c)
            x = np.where(left, b - k * (b - a), a + k * (b - a))
            gx = probe.db(np.exp(x))
            c, d, gc, gd = (np.where(left, x, d), np.where(left, c, x),
                            np.where(left, gx, gd), np.where(left, gc, gx))
        return c, d, gc, gd

    @cached_property
    def _notch(self) -> tuple[np.ndarray, np.ndarray]:
        """(frequency, gain in dB) of the deepest gain per row (band-stop).

        The sweep's lowest point brackets the null between its neighbours; a
        golden-section search in log-frequency narrows it (|H| falls
        monotonically into the null from both sides). 60 steps shrink the
        bracket by 0.618^60 ≈ 3e-13: a balanced twin-T's null is a cusp, and
        its depth is set by how close the search gets to it.
        """
        g, f = self.gain_db, self.freqs_hz
        j = np.argmin(g, axis=1)
        c, d, gc, gd = self._golden(j, NOTCH_ITERATIONS, top=False)
        best = np.argmin(np.stack([g[np.arange(self.rows), j], gc, gd]), axis=0)
        freq = np.choose(best, [f[j], np.exp(c), np.exp(d)])
        return freq, np.fmin(g[np.arange(self.rows), j], np.fmin(gc, gd))

    def notch_frequency(self) -> np.ndarray:
        return self._notch[0]

    def notch_depth(self) -> np.ndarray:
        return self._notch[1] - self.passband_db

    def gain(self, at_hz: float) -> np.ndarray:
        return db(self.h_at(at_hz))

    def phase(self, at_hz: float) -> np.ndarray:
        """Phase unwrapped along the sweep from the passband, read at the mark."""
        return mark_phase.unwrapped_phase(self, float(at_hz))

    def group_delay(self, at_hz: float) -> np.ndarray:
        # τ = −dφ/dω by a central difference; the ratio avoids phase wrapping.
        d = 1e-4
        h1, h2 = self.h_at(at_hz * (1 - d)), self.h_at(at_hz * (1 + d))
        return -np.angle(h2 / h1) / (2 * np.pi * at_hz * 2 * d)

    def input_impedance(self, at_hz: float) -> np.ndarray:
        z = engine.input_impedance(self.network_unsourced, self.values, np.array([at_hz]))
        return np.abs(z[:, 0])

    @cached_property
    def network_unsourced(self) -> Network:
        """The network as seen at the stage's input, without the source impedance."""
        from rcdoc.analysis.surroundings import SOURCE_L, SOURCE_R, core_input
        els = tuple(e for e in self.network.elements if e.name not in (SOURCE_R, SOURCE_L))
        return Network(elements=els, drive=core_input(self.network), output=self.network.output,
                       opamps=self.network.opamps, path=self.network.path)

    def _on_stable(self, compute, names, points) -> dict[str, np.ndarray]:
        """compute(values, rows) -> {name: (rows, width)} over the stable rows only;
        unstable rows get NaN (their time responses and noise do not exist).
        ``points``: every name's width, or a dict of them."""
        widths = points if isinstance(points, dict) else {n: points for n in names}
        ok = ~self.unstable
        every = bool(ok.all())
        values = self.values if every else \
            {k: np.broadcast_to(v, (self.rows,))[ok] for k, v in self.values.items()}
        result = {} if ok.any() else {n: np.zeros((0, widths[n])) for n in names}
        # A stable row whose computation still overflows (a badly conditioned
        # step) gets no value rather than an infinite one, and no warning.
        with np.errstate(all="ignore"):
            if ok.any():
                result = compute(values, slice(None) if every else ok)
            for y in result.values():
                y[~sweep_math.finite_rows(y)] = np.nan
        if every:
            return result
        out = {n: np.full((self.rows, widths[n]), np.nan) for n in names}
        for n, y in result.items():
            out[n][ok] = y
        return out

    def _noise_psd_on(self, f: np.ndarray, shift) -> np.ndarray:
        def compute(values, rows):
            t = self.temperature_k
            t = np.broadcast_to(t, (self.rows,))[rows] if np.ndim(t) else t
            # Every row: this chunk's system and pencil (same values, same shift) serve.
            pencil = self.response.pencil if "response" in self.__dict__ else None
            reuse = (self.conditioned, pencil) if isinstance(rows, slice) else None
            return {"psd": engine.output_noise_psd(self.network, values, f if f.ndim == 1 else
                                                   f[rows], temperature_k=t, shift_from_hz=shift,
                                                   reuse=reuse)}
        return self._on_stable(compute, ["psd"], f.shape[-1])["psd"]

    @cached_property
    def noise_psd(self) -> np.ndarray:
        return self._noise_psd_on(self.freqs_hz, None)

    @cached_property
    def noise_columns(self) -> tuple[int, ...]:
        """Pole columns (of ``poles``) narrow enough to need points of their own in the
        noise integral, judged on the first row (the nominal, in the pipeline)."""
        return resonant_columns(self.poles[0])

    def noise(self) -> np.ndarray:
        """PSD integrated over the sweep (trapezoid rule in linear frequency). The sweep's
        50 points a decade miss a resonance narrower than their spacing (a Q of 30 came
        out 23 % high in power), so each row adds points around its own resonant poles."""
        if not self.noise_columns:
            return np.sqrt(sweep_math.trapezoid(self.noise_psd, self.freqs_hz))
        f = integration_grid(self.freqs_hz, self.poles, self.noise_columns)
        return np.sqrt(sweep_math.trapezoid(self._noise_psd_on(f, self.freqs_hz), f))

    # ---- time domain -------------------------------------------------------
    @cached_property
    def time_s(self) -> np.ndarray:
        """Step grid from the nominal row only (unstable nominal: none), so that no
        row's numbers depend on the others: long enough for the nominal to settle
        to about 34 bits, i.e. for rows up to twice as slow to settle to 16."""
        p = self.poles[:1][~self.unstable[:1]]
        decay = np.where(np.isnan(p.real), np.inf, np.abs(p.real))
        slowest = np.min(decay) if decay.size else np.inf
        if not np.isfinite(slowest) or slowest <= 0:
            slowest = 2 * np.pi * self.char_hz
        t_end = TIME_CONSTANTS / slowest
        return np.linspace(0.0, t_end, TIME_POINTS)

    @cached_property
    def step_probes(self) -> dict[str, np.ndarray]:
        """The output (rows × T) and, reduced on the fly, the part voltages the stresses
        need where the step is the drive they read (not under a PWM drive)."""
        d = self.stage.drive
        return self._step_march(self.stresses and (d is None or d.kind != "pwm"))

    def _step_march(self, with_parts: bool) -> dict[str, np.ndarray]:
        amp = self.stage.drive.amplitude_v if self.stage.drive else 1.0
        t = self.time_s
        reduce = self._part_reductions(t.size) if with_parts else {}
        probes = [self.network.output] + list(reduce)
        # The step is applied at t = 0 from rest: the input holds its amplitude
        # from the first instant on.
        u = np.full(t.shape, amp)
        return self._on_stable(lambda values, _: engine.transient(
            self.network, values, t, u, probes=probes, initial="rest", reduce=reduce),
            probes, self._widths(t.size, reduce))

    @cached_property
    def step(self) -> np.ndarray:
        return self.step_probes[self.network.output]

    @cached_property
    def step_extremes(self) -> tuple[np.ndarray, np.ndarray]:
        """The step's largest and smallest values per block of instants (block_extremes),
        shared by the rise-time and settling searches."""
        return block_extremes(self.step)

    @cached_property
    def final_value(self) -> np.ndarray:
        amp = self.stage.drive.amplitude_v if self.stage.drive else 1.0
        return np.real(self.h_rows(np.zeros(self.rows))) * amp \
            if self.passband in ("low", "band-stop") \
            else self.step[:, -1]

    def rise_time(self) -> np.ndarray:
        y, t, fin = self.step, self.time_s, self.final_value
        ext = self.step_extremes
        return cross_time(y, fin, t, 0.9, ext) - cross_time(y, fin, t, 0.1, ext)

    def settling(self, within: float | None = None, bits: int | None = None,
                 full_scale: float | None = None) -> np.ndarray:
        band = within if within is not None else 2.0 ** -(bits + 1)
        y, t, fin = self.step, self.time_s, self.final_value
        # The band is a share of the output's step in the passband: |final value| for
        # a low-pass; for a high-pass or band-pass, whose step response decays to 0,
        # the height of the step it passes (relative to a final value near 0 the
        # response never settled: a high-pass gave 18 RC instead of RC·ln 100).
        amp = self.stage.drive.amplitude_v if self.stage.drive else 1.0
        scale = np.abs(fin) if self.passband in ("low", "band-stop") else \
            abs(amp) * 10 ** (self.passband_db / 20)
        if full_scale is not None:      # half an LSB of the converter, not of the step
            scale = np.full(self.rows, float(full_scale))
        scale = np.broadcast_to(scale, (self.rows,))

        last, never = last_outside(y, fin, scale, band, self.step_extremes)
        rows, T = np.arange(self.rows), len(t)
        nxt = np.minimum(last + 1, T - 1)
        # |y − fin| / scale, as last_outside computes it
        e0 = np.abs(y[rows, last] - fin) / scale
        e1 = np.abs(y[rows, nxt] - fin) / scale
        # Interpolate log(error): exact for an exponential decay.
        with np.errstate(divide="ignore", invalid="ignore"):
            frac = np.log(e0 / band) / np.log(e0 / np.maximum(e1, 1e-300))
        frac = np.clip(np.nan_to_num(frac, nan=0.0), 0.0, 1.0)
        ts = t[last] + frac * (t[nxt] - t[last])
        ts = np.where(last >= T - 1, np.nan, ts)   # never settles inside the window
        return np.where(never, 0.0, ts)

    @cached_property
    def pwm_probes(self) -> dict[str, np.ndarray]:
        """The output over one period (rows × PWM_POINTS) and the part voltages, reduced
        (those only where the Evaluator reads ``stresses``)."""
        return self._pwm_march(self.stresses)

    def _pwm_march(self, with_parts: bool) -> dict[str, np.ndarray]:
        d = self.stage.drive
        t = self.pwm_time_s
        # Held between instants: the edges fall on the grid, not halfway between.
        u = np.where(t < d.duty / d.frequency_hz, d.amplitude_v, 0.0)
        reduce = self._part_reductions(t.size) if with_parts else {}
        probes = [self.network.output] + list(reduce)
        return self._on_stable(lambda values, _: engine.periodic_steady_state(
            self.network, values, t, u, probes=probes, input_mode="hold", reduce=reduce),
            probes, self._widths(t.size, reduce))

    @cached_property
    def pwm_time_s(self) -> np.ndarray:
        period = 1.0 / self.stage.drive.frequency_hz
        return np.arange(PWM_POINTS) * (period / PWM_POINTS)

    def ripple(self) -> np.ndarray:
        y = self.pwm_probes[self.network.output]
        return y.max(axis=1) - y.min(axis=1)

    @cached_property
    def drive_probes(self) -> dict[str, np.ndarray] | None:
        """The drive's probes with the part voltages' reductions (the stresses read them)."""
        d = self.stage.drive
        if d is None:
            return None
        if self.stresses:
            return self.pwm_probes if d.kind == "pwm" else self.step_probes
        return self._pwm_march(True) if d.kind == "pwm" else self._step_march(True)

    # ---- dispatch ----------------------------------------------------------
    def _metric(self, name: str, check: Check | None = None, at_hz: float | None = None):
        at = at_hz if at_hz is not None else (check.at_hz if check else None)
        if name in ("gain", "phase", "group_delay", "input_impedance"):
            return getattr(self, name)(at)
        if name == "settling":
            if check is not None:
                return self.settling(within=check.within, bits=check.bits,
                                     full_scale=check.full_scale)
            return self.settling(within=0.01)
        fn = getattr(self, name, None)
        if fn is None or not callable(fn):
            raise KeyError(name)
        return fn()

    def metric(self, name: str, check: Check | None = None, at_hz: float | None = None):
        """A metric per row; missing (NaN) for unstable rows, where it has no meaning.
        The stability rule goes first: the response then takes its poles (solved once)."""
        unstable = self.unstable
        value = np.asarray(self._metric(name, check, at_hz), dtype=float)
        return np.where(unstable, np.nan, value)


def _dominant_pair(p: np.ndarray):
    """ω0 and |p1 + p2| of the complex pair nearest the imaginary axis, per row (NaN if none)."""
    mag = np.abs(p)
    cplx = np.isfinite(p) & (p.imag > 1e-9 * np.where(mag > 0, mag, 1.0))
    key = np.where(cplx, np.abs(p.real), np.inf)
    j = np.argmin(key, axis=1)
    rows = np.arange(p.shape[0])
    has = cplx[rows, j]
    pj = p[rows, j]
    w0 = np.where(has, np.abs(pj), np.nan)      # p·p̄ = |p|²
    return w0, np.where(has, 2 * np.abs(pj.real), np.nan)
