"""One stage from validated input to results: network, batch, metrics, verdicts.

This is the spine of ``rcdoc build``: the kind builds the Network, spread
builds the batch of part values, the Evaluator computes every metric for every
row in chunks, and checks turn them into verdicts. The result carries the
arrays the figures need (response band, step band, PWM waveform, phasors) but
nothing here draws.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from rcdoc.analysis import checks as checkmod
from rcdoc.analysis import engine
from rcdoc.input import parts as partmodels
from rcdoc.analysis import spread
from rcdoc.analysis import worstcase
from rcdoc.analysis import poles as polemod
from rcdoc.analysis.evaluate import Evaluator, db, sweep_for
from rcdoc.analysis.surroundings import fixed_values
from rcdoc.analysis.metrics import METRICS
from rcdoc.input.model import Analysis, Check, Stage
from rcdoc.analysis.network import GROUND, Network
from rcdoc.analysis.stresses import part_stresses

CHUNK_ROWS = 4000            # rows of the batch solved at once: bounds memory
BAND_SAMPLES = 20000         # percentile bands use at most this many samples
WAVE_SAMPLES = 5000          # time-response bands use at most this many samples
WAVE_POINTS = 400            # time-response points kept for the figures
BAND_PERCENTILES = (5.0, 95.0)


@dataclass
class MetricResult:
    name: str
    at_hz: float | None
    detail: str
    nominal: float
    samples: np.ndarray                  # (S,)
    wc: tuple[float, float]              # extreme-value analysis: lowest, highest
    sensitivity: dict[str, float]        # part role -> sensitivity
    wc_method: str = worstcase.VERTICES  # how the worst-case range was found

    @property
    def unit(self) -> str:
        return METRICS[self.name].unit

    @property
    def key(self) -> tuple:
        return (self.name, self.at_hz, self.detail)


@dataclass
class StageResult:
    stage: Stage
    network: Network
    passband: str
    char_hz: float
    freqs_hz: np.ndarray
    h_nominal: np.ndarray                # (F,) complex
    band: dict[str, np.ndarray]
    metrics: list[MetricResult]
    verdicts: list[checkmod.Verdict]
    ratings: list[checkmod.Verdict]
    phasor: dict
    step: dict | None
    pwm: dict | None
    part_rows: list[dict]
    assumptions: list[str]
    samples: int
    extra: dict = field(default_factory=dict)   # kind-specific results (snubbers)
    samples_unstable: int = 0            # Monte Carlo samples with a pole at Re s >= 0
    unstable_poles: tuple = ()           # the nominal's offending poles (rad/s), empty if stable

    @property
    def reason(self) -> str | None:
        """Why the stage fails beyond its checks: "unstable" when the nominal design is."""
        return "unstable" if self.unstable_poles else None

    @property
    def status(self) -> str:
        bad = [v for v in self.verdicts + self.ratings if v.status != "pass"]
        return "fail" if bad or self.reason else "pass"

    def metric(self, name: str, at_hz: float | None = None) -> MetricResult | None:
        for m in self.metrics:
            if m.name == name and (at_hz is None or m.at_hz == at_hz):
                return m
        return None


def passband_of(stage: Stage, kind) -> str:
    """Where the passband gain is read: the kind's PASSBAND, or its function of the stage."""
    fn = kind.PASSBAND if callable(kind.PASSBAND) else getattr(kind, "passband", None)
    return fn(stage) if callable(fn) else kind.PASSBAND


def _metric_requests(stage: Stage, offered: tuple[str, ...],
                     kind) -> list[tuple[str, float | None, Check | None]]:
    """The metrics the note reports for a stage: the kind's headline, marks, and every check's."""
    req: list[tuple[str, float | None, Check | None]] = []
    for name in kind.HEADLINE:
        if name in offered:
            req.append((name, None, None))
    for f in stage.marks_hz:
        req += [("gain", f, None), ("phase", f, None)]
    if "noise" in offered:
        req.append(("noise", None, None))
    if stage.drive is not None:
        if passband_of(stage, kind) == "low":      # a rise time means little for a high-pass
            req.append(("rise_time", None, None))
        req.append(("settling", None, None))
        if stage.drive.kind == "pwm":
            req.append(("ripple", None, None))
        req.append(("capacitor_voltage", None, None))
    for c in stage.checks:
        req.append((c.metric, c.at_hz, c))
    # De-duplicate on (name, at, settling band), keeping the first.
    seen, out = set(), []
    for name, at, chk in req:
        key = (name, at, _detail(chk) or _default_detail(name))
        if key not in seen:
            seen.add(key)
            out.append((name, at, chk))
    return out


def _detail(chk: Check | None) -> str:
    if chk is None or chk.metric != "settling":
        return ""
    if chk.bits is not None and chk.full_scale is not None:
        from rcdoc.input.quantities import format_quantity
        return f"{chk.bits} bits of {format_quantity(chk.full_scale, 'V', 6)}"
    if chk.bits is not None:
        return f"{chk.bits} bits"
    return f"within {chk.within * 100:g} %"


def _default_detail(name: str) -> str:
    return "within 1 %" if name == "settling" else ""


def analyse_stage(stage: Stage, analysis: Analysis, kind) -> StageResult:
    """One stage, analysed by ``kind`` (its module from rcdoc.kinds.KINDS, passed in:
    the analysis does not know the kinds): the kind's own analysis if it has one."""
    custom = getattr(kind, "analyse", None)
    if custom is not None:           # kinds with their own analysis (snubbers)
        return custom(stage, analysis)
    return analyse_network(stage, analysis, kind)


def analyse_network(stage: Stage, analysis: Analysis, kind, evaluator=Evaluator) -> StageResult:
    """The standard analysis; a kind with metrics of its own passes an Evaluator subclass."""
    network = kind.build(stage)
    passband = passband_of(stage, kind)
    batch = spread.build_batch(stage, analysis)
    char_hz = kind.characteristic_hz(stage)
    nominal_vals = batch.take(slice(0, 1))
    if char_hz is None:
        char_hz = _char_from_poles(stage, network, nominal_vals, passband)
    freqs = sweep_for(char_hz, analysis)
    t_hot_k = analysis.temperature_c[1] + 273.15
    offered = kind.metrics(stage.options, stage.drive)
    requests = _metric_requests(stage, offered, kind)

    # Time grid shared by all rows, from the nominal alone (a row's numbers must
    # not depend on the other rows or on --samples).
    probe = evaluator(stage, network, nominal_vals, freqs, passband, char_hz)
    time_s = probe.time_s if stage.drive is not None else None

    values_per_req: list[list[np.ndarray]] = [[] for _ in requests]
    gains, phases = [], []
    band_acc = _Envelope()
    waves: dict[str, list] = {"step": [], "pwm": []}
    wave_env = {"step": _Envelope(), "pwm": _Envelope()}
    cap_peaks: dict[str, list] = {}
    res_powers: dict[str, list] = {}
    unstable: list[np.ndarray] = []
    for start in range(0, batch.rows, CHUNK_ROWS):
        rows = slice(start, min(start + CHUNK_ROWS, batch.rows))
        vals = batch.take(rows)
        ev = evaluator(stage, network, vals, freqs, passband, char_hz, temperature_k=t_hot_k,
                       time_s=time_s)
        for k, (name, at, chk) in enumerate(requests):
            values_per_req[k].append(np.asarray(ev.metric(name, chk, at_hz=at), dtype=float))
        unstable.append(ev.unstable)
        # Spread bands of the response over the stable Monte Carlo rows only.
        mc_idx = _mc_rows(rows, batch)
        if mc_idx is not None:
            mc_idx = mc_idx[~ev.unstable[mc_idx]]
        if mc_idx is not None and mc_idx.size:
            g = ev.gain_db[mc_idx]
            ph = np.degrees(np.unwrap(np.angle(ev.h[mc_idx]), axis=1))
            band_acc.add(g, ph)
            if sum(len(x) for x in gains) < BAND_SAMPLES:
                gains.append(g.astype(np.float32))
                phases.append(ph.astype(np.float32))
            shown = {} if stage.drive is None else {"step": ev.step}
            if stage.drive is not None and stage.drive.kind == "pwm":
                # Ripple about each sample's own mean: the DC spread would hide it.
                y = ev.pwm_probes[network.output]
                shown["pwm"] = y - y.mean(axis=1, keepdims=True)
            for wname, y in shown.items():
                idx = np.linspace(0, y.shape[1] - 1, WAVE_POINTS).astype(int)
                wave_env[wname].add(y[mc_idx][:, idx], None)
                if sum(len(x) for x in waves[wname]) < WAVE_SAMPLES:
                    waves[wname].append(y[mc_idx][:, idx].astype(np.float32))
        if stage.drive is not None:
            for role, pk in ev.capacitor_peaks().items():
                cap_peaks.setdefault(role, []).append(pk)
            for role, pw in ev.resistor_powers().items():
                res_powers.setdefault(role, []).append(pw)
        if start == 0:
            h_nominal = ev.h[0].copy()
            nominal_ev = ev
    metrics: list[MetricResult] = []
    full = {}
    for (name, at, chk), parts_ in zip(requests, values_per_req):
        full[(name, at, _detail(chk) or _default_detail(name))] = np.concatenate(parts_)

    wc_ctx = _WorstCaseContext(stage, analysis, network, batch, freqs, passband, char_hz,
                               t_hot_k, time_s, evaluator)
    line_y = wc_ctx.line_values(requests)
    # Worst-case corners for many parts: each part at the extreme its sensitivity favours.
    for (name, at, chk) in requests:
        key = (name, at, _detail(chk) or _default_detail(name))
        arr = full[key]
        sens = spread.sensitivities(arr, batch)
        wc_vals = arr[batch.vertex]
        if len(batch.roles) > spread.FULL_VERTEX_PARTS:
            signs = np.nan_to_num(sens) > 0
            high = np.stack([signs, ~signs])
            vv = spread.vertex_values(stage, analysis, batch.roles, high)
            ev2 = evaluator(stage, network, vv, freqs, passband, char_hz, temperature_k=t_hot_k,
                            time_s=time_s)
            extra = ev2.metric(name, chk, at_hz=at)
            wc_vals = np.concatenate([wc_vals, extra])
        wc, wc_method = wc_ctx.enclose((name, at, chk), arr, wc_vals, line_y[key])
        unit = METRICS[name].unit
        if unit in ("dB", "deg"):
            # Absolute change per percent of part change for logarithmic and angular metrics.
            sens = (arr[batch.sens] - arr[0]) / (spread.SENSITIVITY_STEP * 100)
        metrics.append(MetricResult(name=name, at_hz=at, detail=key[2], nominal=float(arr[0]),
                                    samples=arr[batch.mc], wc=wc, wc_method=wc_method,
                                    sensitivity={r: float(s) for r, s in zip(batch.roles, sens)}))

    verdicts = []
    for chk in stage.checks:
        m = next(m for m in metrics if m.key == (chk.metric, chk.at_hz,
                                                   _detail(chk) or _default_detail(chk.metric)))
        verdicts.append(checkmod.judge(chk.metric, m.samples, nominal=m.nominal, wc=m.wc,
                                       lo=chk.min, hi=chk.max,
                                       required_yield=chk.required_yield, at_hz=chk.at_hz,
                                       detail=m.detail))
    ratings = _ratings(stage, batch, cap_peaks, res_powers)
    unstable_rows = np.concatenate(unstable)
    nominal_unstable = bool(unstable_rows[0])
    if not gains:                    # no stable sample: the band shrinks to the nominal curve
        g0 = db(h_nominal)[None].astype(np.float32)
        p0 = np.degrees(np.unwrap(np.angle(h_nominal)))[None].astype(np.float32)
        gains, phases = [g0], [p0]
        band_acc.add(g0, p0)
    band = _band(gains, phases, band_acc)
    # Time responses of an unstable nominal do not exist: no waveforms are drawn.
    timed = stage.drive is not None and not nominal_unstable
    step = _wave(time_s, nominal_ev.step[0], waves["step"], wave_env["step"]) if timed else None
    pwm = None
    if timed and stage.drive.kind == "pwm":
        t = nominal_ev.pwm_time_s
        y0 = nominal_ev.pwm_probes[network.output][0]
        pwm = _wave(t, y0 - y0.mean(), waves["pwm"], wave_env["pwm"])
        pwm["mean"] = float(y0.mean())
        d = stage.drive
        pwm["input"] = np.where(t < d.duty / d.frequency_hz, d.amplitude_v, 0.0)
    corner = next((m.nominal for m in metrics if m.name in ("corner", "f0")
                   and math.isfinite(m.nominal)), char_hz)
    phasor = {} if nominal_unstable else phasor_data(network, nominal_vals, corner)
    offending = tuple(complex(p) for p in polemod.offending(nominal_ev.poles[0]))
    return StageResult(stage=stage, network=network, passband=passband, char_hz=char_hz,
                       freqs_hz=freqs, h_nominal=h_nominal, band=band, metrics=metrics,
                       verdicts=verdicts, ratings=ratings, phasor=phasor, step=step, pwm=pwm,
                       part_rows=_part_rows(stage, analysis), assumptions=_assumptions(stage, analysis),
                       samples=batch.samples,
                       extra={"stresses": part_stresses(stage, batch, cap_peaks, res_powers)},
                       samples_unstable=int(unstable_rows[batch.mc].sum()),
                       unstable_poles=offending)


@dataclass
class _WorstCaseContext:
    """What the worst-case search needs to evaluate a metric on any part values."""

    stage: Stage
    analysis: Analysis
    network: Network
    batch: spread.Batch
    freqs: np.ndarray
    passband: str
    char_hz: float
    t_hot_k: float
    time_s: np.ndarray | None
    evaluator_cls: type = Evaluator      # a kind's own Evaluator (sampled-input) where it has one

    def __post_init__(self):
        ext = [partmodels.extremes(self.stage.parts[r], self.analysis) for r in self.batch.roles]
        self.lows = np.array([e[0] for e in ext], dtype=float).reshape(-1)
        self.highs = np.array([e[1] for e in ext], dtype=float).reshape(-1)

    def part_values(self, rows) -> np.ndarray:
        """(N, P) part values of some rows of the batch."""
        cols = [self.batch.values[r][rows] for r in self.batch.roles]
        return np.stack(cols, axis=1) if cols else np.zeros((0, 0))

    def evaluator(self, x: np.ndarray) -> Evaluator:
        vals = {r: x[:, k] for k, r in enumerate(self.batch.roles)}
        for name, v in fixed_values(self.stage).items():
            vals[name] = np.full(len(x), v)
        return self.evaluator_cls(self.stage, self.network, vals, self.freqs, self.passband,
                                  self.char_hz, temperature_k=self.t_hot_k, time_s=self.time_s)

    def line_values(self, requests) -> dict:
        """Every requested metric along each part's walk through the nominal design."""
        p = len(self.batch.roles)
        if p == 0:
            return {(n, a, _detail(c) or _default_detail(n)): np.zeros(0) for n, a, c in requests}
        x = worstcase.line_rows(self.part_values(slice(0, 1))[0], self.lows, self.highs)
        ev = self.evaluator(x)
        return {(n, a, _detail(c) or _default_detail(n)):
                np.asarray(ev.metric(n, c, at_hz=a), dtype=float) for n, a, c in requests}

    def enclose(self, request, arr: np.ndarray, corner_y: np.ndarray, line_y: np.ndarray):
        """(low, high) holding corners, nominal and samples; searched inside where needed."""
        name, at, chk = request
        b, p = self.batch, len(self.batch.roles)
        method = (worstcase.VERTICES if p <= spread.FULL_VERTEX_PARTS
                  else worstcase.SENSITIVITY_VERTICES)
        samples = arr[b.mc]
        found = [corner_y, arr[:1], samples, line_y]
        if p and worstcase.needs_search(corner_y, float(arr[0]), samples,
                                        line_y, p):
            def evaluate(x):
                return np.asarray(self.evaluator(x).metric(name, chk, at_hz=at), dtype=float)
            starts, up = worstcase.start_points(
                self.part_values(b.mc), samples, self.part_values(slice(0, 1))[0],
                self.part_values(b.vertex), arr[b.vertex])
            found.append(worstcase.search(evaluate, starts, up, self.lows, self.highs))
            method += worstcase.SEARCHED
        return worstcase.enclosing_range(np.concatenate(found)), method


def _mc_rows(rows: slice, batch: spread.Batch):
    lo, hi = max(rows.start, batch.mc.start), min(rows.stop, batch.mc.stop)
    if lo >= hi:
        return None
    return np.arange(lo - rows.start, hi - rows.start)


class _Envelope:
    """Running minimum and maximum over chunks (for bands over every sample)."""

    def __init__(self):
        self.lo = self.hi = self.plo = self.phi = None

    def add(self, a, b):
        amin, amax = a.min(axis=0), a.max(axis=0)
        self.lo = amin if self.lo is None else np.minimum(self.lo, amin)
        self.hi = amax if self.hi is None else np.maximum(self.hi, amax)
        if b is not None:
            bmin, bmax = b.min(axis=0), b.max(axis=0)
            self.plo = bmin if self.plo is None else np.minimum(self.plo, bmin)
            self.phi = bmax if self.phi is None else np.maximum(self.phi, bmax)


def _band(gains, phases, env: _Envelope) -> dict[str, np.ndarray]:
    g = np.concatenate(gains).astype(float)
    p = np.concatenate(phases).astype(float)
    lo, hi = BAND_PERCENTILES
    return {"gain_min": env.lo, "gain_max": env.hi,
            "gain_lo": np.percentile(g, lo, axis=0), "gain_hi": np.percentile(g, hi, axis=0),
            "phase_min": env.plo, "phase_max": env.phi,
            "phase_lo": np.percentile(p, lo, axis=0), "phase_hi": np.percentile(p, hi, axis=0)}


def _wave(t, nominal, waves, env: _Envelope) -> dict:
    idx = np.linspace(0, len(t) - 1, WAVE_POINTS).astype(int)
    if not waves:                    # every Monte Carlo sample unstable: the nominal alone
        waves = [nominal[idx][None]]
        env.add(waves[0], None)
    y = np.concatenate(waves).astype(float)
    return {"t": t[idx], "nominal": nominal[idx], "min": env.lo, "max": env.hi,
            "lo": np.percentile(y, BAND_PERCENTILES[0], axis=0),
            "hi": np.percentile(y, BAND_PERCENTILES[1], axis=0)}


def _char_from_poles(stage, network, values, passband) -> float:
    ev = Evaluator(stage, network, values, np.array([1.0]), passband, 1.0)
    # Shift for the pole search taken from the network's RC products (any positive value works).
    p = ev.poles[0]
    p = p[np.isfinite(p)]
    mags = np.abs(p)
    mags = mags[mags > 0]
    if mags.size == 0:
        return 1e3
    return float(np.sqrt(mags.min() * mags.max()) / (2 * np.pi))


def _ratings(stage, batch, cap_peaks, res_powers) -> list[checkmod.Verdict]:
    out = []
    for role, part in stage.parts.items():
        stressed = role in cap_peaks or part.bias_v
        if part.kind == "C" and part.voltage_rating_v is not None and stressed:
            pk = (np.concatenate(cap_peaks[role]) if role in cap_peaks
                  else np.full(batch.rows, part.bias_v))
            out.append(checkmod.judge("capacitor_voltage", pk[batch.mc], nominal=float(pk[0]),
                                      wc=(float(pk[batch.vertex].min()), float(pk[batch.vertex].max())),
                                      lo=None, hi=part.voltage_rating_v,
                                      part=part.ref or role, detail="rating"))
        if part.kind == "R" and part.power_rating_w is not None and role in res_powers:
            pw = np.concatenate(res_powers[role])
            out.append(checkmod.judge("resistor_power", pw[batch.mc], nominal=float(pw[0]),
                                      wc=(float(pw[batch.vertex].min()), float(pw[batch.vertex].max())),
                                      lo=None, hi=part.power_rating_w,
                                      part=part.ref or role, detail="rating"))
    return out


def _part_rows(stage: Stage, analysis: Analysis) -> list[dict]:
    from rcdoc.input.preferred import preferred_series, series_for_tolerance
    rows = []
    for role, p in stage.parts.items():
        lo, hi = partmodels.extremes(p, analysis)
        tol = max(p.tol_plus, p.tol_minus)
        rows.append({"role": role, "part": p, "in_circuit": partmodels.nominal_value(p, analysis),
                     "low": lo, "high": hi, "preferred": preferred_series(p.value, tol),
                     "series": series_for_tolerance(tol)})
    return rows


def _assumptions(stage: Stage, analysis: Analysis) -> list[str]:
    out = []
    for role in sorted(stage.parts):
        out += partmodels.assumptions(stage.parts[role], analysis)
    return out


def phasor_data(network: Network, values: dict[str, np.ndarray], freq_hz: float) -> dict:
    """Part voltages along the network's path, head to tail, for a 1 V rms source.

    When the path ends at ground the series current is the reference direction
    (it is common to every part on the path); otherwise the source voltage is.
    """
    if not network.path:
        return {}
    ev = engine.element_voltages(network, values, freq_hz)
    cur = engine.element_currents(network, values, freq_hz)
    node = network.drive
    vectors = []
    for name in network.path:
        e = network.element(name)
        v = complex(ev[name][0])
        if e.b == node:          # walk the element from the side we arrived on
            v = -v
            node = e.a
        else:
            node = e.b
        vectors.append((name, e.kind, v))
    closing = None
    if node != GROUND:
        sol = engine.solve_ac(network, values, np.array([freq_hz]))
        system = engine.assemble(network, values)
        closing = (node, complex(engine.node_voltage(sol, system, node)[0, 0]))
    first = network.path[0]
    i_ref = complex(cur[first][0])
    if network.element(first).b == network.drive:
        i_ref = -i_ref
    if closing is None and abs(i_ref) > 0:
        rot = abs(i_ref) / i_ref
        reference = "current"
    else:
        rot = 1.0 + 0j
        reference = "source"
    out_v = complex(engine.ac(network, values, np.array([freq_hz]))[0, 0]) * rot
    return {"freq_hz": freq_hz, "reference": reference,
            "vectors": [(n, k, v * rot) for n, k, v in vectors],
            "closing": (closing[0], closing[1] * rot) if closing else None,
            "current": i_ref * rot, "source": rot * 1.0, "output": out_v}
