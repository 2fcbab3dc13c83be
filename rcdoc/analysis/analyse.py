"""One stage from validated input to results: network, batch, metrics, verdicts.

This is the spine of ``rcdoc build``: the kind builds the Network, spread
builds the batch of part values, the Evaluator computes every metric for every
row in chunks, and checks turn them into verdicts. The result (a frozen
rcdoc.analysis.results.StageResult) carries the arrays the figures need
(response band, step band, PWM waveform, phasors) but nothing here draws.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace

import numpy as np

from rcdoc.analysis import bode as bodemod
from rcdoc.analysis import checks as checkmod
from rcdoc.analysis.alternatives import stage_alternatives
from rcdoc.analysis import engine
from rcdoc.input import parts as partmodels
from rcdoc.analysis import spread
from rcdoc.analysis import worstcase
from rcdoc.analysis import poles as polemod
from rcdoc.analysis.evaluate import Evaluator, sweep_for
from rcdoc.analysis.surroundings import fixed_values
from rcdoc.analysis.metrics import METRICS
from rcdoc.input.model import Analysis, Stage
from rcdoc.analysis.network import GROUND, Network
from rcdoc.analysis.phasor_choice import phasor_frequency
from rcdoc.analysis.results import (MetricResult, PartRow, PartStress, Phasors,
                                    StageResult, Waveform, param_of)

WAVE_POINTS = 400            # time-response points kept for the figures
_STRESS = {"R": "resistor_power", "C": "capacitor_voltage"}


def passband_of(stage: Stage, kind) -> str:
    """Where the passband gain is read: the kind's PASSBAND, or its function of the stage."""
    fn = kind.PASSBAND if callable(kind.PASSBAND) else getattr(kind, "passband", None)
    return fn(stage) if callable(fn) else kind.PASSBAND


Request = tuple  # (metric name, at_hz or None, Check or None)


def request_key(request: Request) -> tuple:
    """(name, at_hz, band text): two requests with the same key are the same metric."""
    name, at, chk = request
    param = param_of(name, chk)
    return (name, at, param.text if param is not None else "")


def _metric_requests(stage: Stage, offered: tuple[str, ...], kind) -> list[Request]:
    """The metrics the note reports for a stage: the kind's headline, marks, and every check's."""
    req: list[Request] = []
    for name in kind.HEADLINE:
        if name in offered:
            req.append((name, None, None))
    for f in stage.marks_hz:
        req += [("gain", f, None), ("phase", f, None)]
    if "noise" in offered:
        req.append(("noise", None, None))
    if stage.drive is not None:
        if passband_of(stage, kind) == "low":   # a rise time means little for a high-pass
            req.append(("rise_time", None, None))
        req.append(("settling", None, None))
        if stage.drive.kind == "pwm":
            req.append(("ripple", None, None))
        req.append(("capacitor_voltage", None, None))
    for c in stage.checks:
        req.append((c.metric, c.at_hz, c))
    # De-duplicate on (name, at, settling band), keeping the first.
    seen, out = set(), []
    for q in req:
        if request_key(q) not in seen:
            seen.add(request_key(q))
            out.append(q)
    return out


def analyse_stage(stage: Stage, analysis: Analysis, kind, bode: bool = True) -> StageResult:
    """Analyse one stage with its kind's own analysis or the standard network analysis.

    ``kind`` is the stage's kind module (rcdoc.kinds.KINDS; passed in: the
    analysis does not know the kinds). Stages analysed as networks also get their preferred-value
    alternatives, judged with a reduced Monte Carlo (rcdoc.analysis.alternatives).
    ``bode`` False leaves the Bode band out (``complete`` adds it: rcdoc.analysis.bode).
    """
    custom = getattr(kind, "analyse", None)
    if custom is not None:           # kinds with their own analysis (snubbers)
        return custom(stage, analysis, bode=bode)
    result = analyse_network(stage, analysis, kind=kind, bode=bode)
    return replace(result, alternatives=stage_alternatives(result, analysis, kind))


def complete(result: StageResult, analysis: Analysis, kind) -> StageResult:
    """``result`` with the Bode band its analysis left out (``bode_pending``): the same
    set-up, chunks and rows as that analysis, the band alone gathered from them, so
    the same numbers as an analysis that gathered it. Other results as they are."""
    if not result.bode_pending:
        return result
    s = _setup(result.stage, analysis, kind, getattr(kind, "EVALUATOR", Evaluator))
    band = bodemod.Gathering()
    h_nominal = None
    for start, rows, _, _, ev in _chunks(s, _wc_context(s).line_batch()):
        unstable = ev.unstable       # first, as the metrics ask for it (poles solved once)
        if start == 0:
            h_nominal = ev.h_row(0)
        sel = _stable_mc(rows, s.batch, unstable)
        if sel is not None:
            band.add(ev, sel, h_nominal)
    return replace(result, band=band.band(h_nominal), bode_pending=False)


@dataclass
class _Setup:
    """What every chunk of a stage's batch is evaluated with."""

    stage: Stage
    analysis: Analysis
    network: Network
    passband: str
    batch: spread.Batch
    char_hz: float
    freqs: np.ndarray
    t_hot_k: float
    requests: list
    time_s: np.ndarray | None
    evaluator: type
    noise_columns: tuple[int, ...] = ()

    def evaluate(self, vals, stresses: bool = True) -> Evaluator:
        return self.evaluator(self.stage, self.network, vals, self.freqs, self.passband,
                              self.char_hz, temperature_k=self.t_hot_k, time_s=self.time_s,
                              noise_columns=self.noise_columns, stresses=stresses)


def _setup(stage: Stage, analysis: Analysis, kind, evaluator) -> _Setup:
    network = kind.build(stage)
    passband = passband_of(stage, kind)
    batch = spread.build_batch(stage, analysis)
    char_hz = kind.characteristic_hz(stage)
    nominal_vals = batch.take(slice(0, 1))
    poles_hz = None
    if char_hz is None:
        char_hz, poles_hz = _char_from_poles(stage, network, nominal_vals, passband)
    freqs = sweep_for(char_hz, analysis, poles_hz)
    requests = _metric_requests(stage, kind.metrics(stage.options, stage.drive), kind)
    # Time grid shared by all rows, from the nominal alone (a row's numbers must
    # not depend on the other rows or on --samples).
    probe = evaluator(stage, network, nominal_vals, freqs, passband, char_hz)
    time_s = probe.time_s if stage.drive is not None else None
    return _Setup(stage, analysis, network, passband, batch, char_hz, freqs,
                  analysis.temperature_c[1] + 273.15, requests, time_s, evaluator,
                  probe.noise_columns)


@dataclass
class _Gathered:
    """Per-chunk results collected over the whole batch."""

    values: list = field(default_factory=list)        # per request: list of chunk arrays
    bode: "bodemod.Gathering | None" = None              # None: the Bode band is left out
    wave_env: dict = None
    cap_peaks: dict = field(default_factory=dict)
    res_powers: dict = field(default_factory=dict)
    res_pulses: dict = field(default_factory=dict)     # role -> [(surge, energy) per chunk]
    unstable: list = field(default_factory=list)
    line: dict = field(default_factory=dict)          # request key -> the walks' values
    h_nominal: np.ndarray = None
    nominal: "_Nominal" = None

    def __post_init__(self):
        self.wave_env = {"step": bodemod.Envelope(), "pwm": bodemod.Envelope()}


@dataclass(frozen=True)
class _Nominal:
    """The nominal row's poles and time responses, copied out of the first chunk's
    Evaluator so that its arrays (all rows of that chunk) are not kept to the end."""

    poles: np.ndarray
    step: np.ndarray | None
    pwm: np.ndarray | None
    pwm_time_s: np.ndarray | None

    @classmethod
    def of(cls, s: _Setup, ev: Evaluator) -> "_Nominal":
        d = s.stage.drive
        pwm = d is not None and d.kind == "pwm"
        return cls(poles=ev.poles[0].copy(), step=None if d is None else ev.step[0].copy(),
                   pwm=ev.pwm_probes[s.network.output][0].copy() if pwm else None,
                   pwm_time_s=ev.pwm_time_s if pwm else None)


def _wc_context(s: _Setup) -> worstcase.Context:
    return worstcase.Context(s.stage, s.analysis, s.network, s.batch, s.freqs, s.passband,
                             s.char_hz, s.t_hot_k, s.time_s, fixed_values(s.stage), s.evaluator)


def _chunks(s: _Setup, walks):
    """(first row, rows, n, tail, Evaluator) of each chunk of the batch; the worst
    case's walks through the nominal (worstcase.line_rows) ride along as extra rows
    of the last chunk (``tail``), after its ``n`` rows of the batch."""
    batch = s.batch
    step = spread.chunk_rows(len(s.freqs))
    for start in range(0, batch.rows, step):
        rows = slice(start, min(start + step, batch.rows))
        n, vals = rows.stop - rows.start, batch.take(rows)
        tail = walks is not None and rows.stop == batch.rows
        if tail:
            vals = {k: np.concatenate([v, walks[k]]) for k, v in vals.items()}
        yield start, rows, n, tail, s.evaluate(vals)


def _stable_mc(rows: slice, batch: spread.Batch, unstable: np.ndarray):
    """The chunk's stable Monte Carlo rows: a slice where they run on, else an index
    array; None where there is none."""
    mc_idx = _mc_rows(rows, batch)
    if mc_idx is not None:
        mc_idx = mc_idx[~unstable[mc_idx]]
    if mc_idx is None or not mc_idx.size:
        return None
    span = mc_idx[-1] + 1 - mc_idx[0] == mc_idx.size
    return slice(mc_idx[0], mc_idx[-1] + 1) if span else mc_idx


def _gather(s: _Setup, with_bode: bool = True) -> _Gathered:
    """Evaluate the batch chunk by chunk: metrics, response bands (without
    ``with_bode``, the Bode band is left out), waveforms, stresses. The walks' rows
    of the last chunk give their metrics only (``line``), no march of their own."""
    g = _Gathered(values=[[] for _ in s.requests],
                  bode=bodemod.Gathering() if with_bode else None)
    walks = _wc_context(s).line_batch()
    for start, rows, n, tail, ev in _chunks(s, walks):
        for k, (name, at, chk) in enumerate(s.requests):
            y = np.asarray(ev.metric(name, chk, at_hz=at), dtype=float)
            g.values[k].append(y[:n])
            if tail:
                g.line[request_key(s.requests[k])] = y[n:]
        g.unstable.append(ev.unstable[:n])
        if start == 0:
            # Row 0 of the first chunk is the nominal design (the bands refer to it).
            g.h_nominal = ev.h_row(0)
        # Spread bands of the response over the stable Monte Carlo rows only.
        sel = _stable_mc(rows, s.batch, ev.unstable)
        if sel is not None:
            if g.bode is not None:
                g.bode.add(ev, sel, g.h_nominal)
            _gather_waves(s, g, ev, sel)
        if s.stage.drive is not None:
            for role, pk in ev.capacitor_peaks().items():
                g.cap_peaks.setdefault(role, []).append(pk[:n])
            for role, pw in ev.resistor_powers().items():
                g.res_powers.setdefault(role, []).append(pw[:n])
            for role, (surge, energy) in ev.resistor_pulses().items():
                g.res_pulses.setdefault(role, []).append((surge[:n], energy[:n]))
        if start == 0:
            g.nominal = _Nominal.of(s, ev)
    if walks is None:
        g.line = {request_key(q): np.zeros(0) for q in s.requests}
    return g


def _gather_waves(s: _Setup, g: _Gathered, ev: Evaluator, sel) -> None:
    """Add a chunk's stable Monte Carlo rows ``sel`` to the waveform bands."""
    drive = s.stage.drive
    if drive is None:
        return
    mc_idx = np.arange(sel.start, sel.stop) if isinstance(sel, slice) else sel
    shown = {"step": (ev.step, 0.0)}
    if drive.kind == "pwm":
        # Ripple about each sample's own mean: the DC spread would hide it.
        y = ev.pwm_probes[s.network.output]
        shown["pwm"] = (y, y[mc_idx].mean(axis=1, keepdims=True))
    for wname, (y, offset) in shown.items():
        # Only the drawn points of the shown rows are copied, never all of y.
        idx = np.linspace(0, y.shape[1] - 1, WAVE_POINTS).astype(int)
        drawn = y[mc_idx[:, None], idx[None, :]] - offset
        g.wave_env[wname].add(drawn, None)


def _metric_results(s: _Setup, g: _Gathered) -> list[MetricResult]:
    """Every requested metric with its samples, worst case and sensitivities."""
    batch = s.batch
    full = {request_key(q): np.concatenate(parts_) for q, parts_ in zip(s.requests, g.values)}
    wc_ctx = _wc_context(s)
    line_y = g.line
    # Worst-case corners for many parts: each part at the extreme its sensitivity favours.
    jobs = []
    for q in s.requests:
        name, at, chk = q
        key = request_key(q)
        arr = full[key]
        wc_vals = arr[batch.vertex]
        if len(batch.roles) > spread.FULL_VERTEX_PARTS:
            signs = np.nan_to_num(spread.sensitivities(arr, batch)) > 0
            high = np.stack([signs, ~signs])
            vv = spread.vertex_values(s.stage, s.analysis, batch.roles, high)
            wc_vals = np.concatenate([wc_vals, s.evaluate(vv, stresses=False)
                                      .metric(name, chk, at_hz=at)])
        jobs.append((q, arr, wc_vals, line_y[key]))
    metrics = []
    for (q, arr, _, _), (wc, wc_method) in zip(jobs, wc_ctx.enclose_all(jobs)):
        name, at, chk = q
        sens = spread.sensitivities(arr, batch)
        if METRICS[name].unit in ("dB", "deg"):
            # Absolute change per percent of part change for logarithmic and angular metrics.
            sens = (arr[batch.sens] - arr[0]) / (spread.SENSITIVITY_STEP * 100)
        metrics.append(MetricResult(name=name, at_hz=at, param=param_of(name, chk),
                                    nominal=float(arr[0]), samples=arr[batch.mc],
                                    worst_case=wc, worst_case_method=wc_method,
                                    sensitivity={r: float(x) for r, x in zip(batch.roles, sens)}))
    return metrics


def verdicts_for(stage: Stage, metrics) -> list[checkmod.Verdict]:
    """Each check of the stage judged on its metric's samples."""
    by_key = {m.key: m for m in metrics}
    out = []
    for chk in stage.checks:
        m = by_key[request_key((chk.metric, chk.at_hz, chk))]
        out.append(checkmod.judge(chk.metric, m.samples, nominal=m.nominal, wc=m.worst_case,
                                  lo=chk.min, hi=chk.max,
                                  required_yield=chk.required_yield, at_hz=chk.at_hz,
                                  detail=m.detail))
    return out


def _waveforms(s: _Setup, g: _Gathered, nominal_unstable: bool):
    """The step and PWM waveforms (None where there is no drive or the nominal is unstable)."""
    # Time responses of an unstable nominal do not exist: no waveforms are drawn.
    timed = s.stage.drive is not None and not nominal_unstable
    if not timed:
        return None, None
    ev = g.nominal
    step = _wave(s.time_s, ev.step, g.wave_env["step"])
    pwm = None
    d = s.stage.drive
    if d.kind == "pwm":
        t = ev.pwm_time_s
        y0 = ev.pwm
        pwm = _wave(t, y0 - y0.mean(), g.wave_env["pwm"],
                    mean=float(y0.mean()),
                    input=np.where(t < d.duty / d.frequency_hz, d.amplitude_v, 0.0))
    return step, pwm


def analyse_network(stage: Stage, analysis: Analysis, kind,
                    evaluator=Evaluator, bode: bool = True) -> StageResult:
    """The standard analysis of a stage as a linear network; the spine.

    Steps: set-up (network, batch of rows: nominal, Monte Carlo, sensitivity
    probes, corners; sweep and time grid from the nominal alone), the batch in
    chunks (spread.chunk_rows: every requested metric, Bode and waveform bands,
    part stresses), then per metric the worst case (corners, walks, interior
    search: worstcase.Context) and sensitivities, the verdicts of the checks
    and ratings, the waveforms and phasors of the nominal. A kind with metrics
    of its own passes an Evaluator subclass as ``evaluator`` (and names it
    ``EVALUATOR``, for ``complete``). ``bode`` False leaves the Bode band out
    (``bode_pending``): nothing but the response chart reads it.
    """
    s = _setup(stage, analysis, kind, evaluator)
    g = _gather(s, with_bode=bode)
    metrics = _metric_results(s, g)
    batch = s.batch
    unstable_rows = np.concatenate(g.unstable)
    nominal_unstable = bool(unstable_rows[0])
    band = g.bode.band(g.h_nominal) if g.bode is not None else None
    step, pwm = _waveforms(s, g, nominal_unstable)
    corner = next((m.nominal for m in metrics if m.name in ("corner", "f0")
                   and math.isfinite(m.nominal)), s.char_hz)
    phasors = None if nominal_unstable else _phasors(s, batch.take(slice(0, 1)), corner)
    offending = tuple(complex(p) for p in polemod.offending(g.nominal.poles))
    return StageResult(stage=stage, network=s.network, passband=s.passband, char_hz=s.char_hz,
                       freqs_hz=s.freqs, h_nominal=g.h_nominal, band=band, metrics=metrics,
                       verdicts=verdicts_for(stage, metrics),
                       ratings=_ratings(stage, batch, g.cap_peaks, g.res_powers)
                       + _pulse_ratings(stage, batch, g.res_pulses),
                       phasors=phasors, step=step, pwm=pwm,
                       parts=part_rows(stage, analysis),
                       assumptions=assumptions_of(stage, analysis), samples=batch.samples,
                       stresses=part_stresses(stage, batch, g.cap_peaks, g.res_powers,
                                              g.res_pulses),
                       samples_unstable=int(unstable_rows[batch.mc].sum()),
                       unstable_poles=offending, bode_pending=g.bode is None)


def _mc_rows(rows: slice, batch: spread.Batch):
    lo, hi = max(rows.start, batch.mc.start), min(rows.stop, batch.mc.stop)
    if lo >= hi:
        return None
    return np.arange(lo - rows.start, hi - rows.start)


def _wave(t, nominal, env: bodemod.Envelope, mean=None, input=None) -> Waveform:
    idx = np.linspace(0, len(t) - 1, WAVE_POINTS).astype(int)
    if env.lo is None:               # every Monte Carlo sample unstable: the nominal alone
        env.add(nominal[idx][None], None)
    return Waveform(t_s=t[idx], nominal=nominal[idx], min=env.lo, max=env.hi,
                    mean=mean, input=input)


def _char_from_poles(stage, network, values, passband
                     ) -> tuple[float, tuple[float, float] | None]:
    """The nominal network's frequency (the geometric mean of its lowest and highest
    pole frequency) and those two frequencies, in Hz (None without a pole)."""
    ev = Evaluator(stage, network, values, np.array([1.0]), passband, 1.0)
    # Shift for the pole search taken from the network's RC products (any positive value works).
    p = ev.poles[0]
    p = p[np.isfinite(p)]
    mags = np.abs(p)
    mags = mags[mags > 0]
    if mags.size == 0:
        return 1e3, None
    lo, hi = mags.min() / (2 * np.pi), mags.max() / (2 * np.pi)
    return float(np.sqrt(lo * hi)), (float(lo), float(hi))


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


def _pulses(chunks: list) -> tuple[np.ndarray, np.ndarray]:
    """A resistor's (surge power, energy per edge) over every row, from its chunks."""
    return (np.concatenate([c[0] for c in chunks]), np.concatenate([c[1] for c in chunks]))


def _pulse_ratings(stage, batch, res_pulses) -> list[checkmod.Verdict]:
    """A resistor's pulse rating: energy per pulse judges the energy per edge, a peak
    power the surge at the edge."""
    out = []
    for role, part in stage.parts.items():
        if part.kind != "R" or role not in res_pulses:
            continue
        surge, energy = _pulses(res_pulses[role])
        for metric, arr, rating in (("resistor_surge", surge, part.pulse_power_w),
                                    ("resistor_edge_energy", energy, part.pulse_energy_j)):
            if rating is not None:
                out.append(checkmod.judge(
                    metric, arr[batch.mc], nominal=float(arr[0]),
                    wc=(float(arr[batch.vertex].min()), float(arr[batch.vertex].max())),
                    lo=None, hi=rating, part=part.ref or role, detail="rating"))
    return out


def part_rows(stage: Stage, analysis: Analysis) -> tuple[PartRow, ...]:
    """The parts table of a stage: values, extremes and preferred series."""
    from rcdoc.input.preferred import preferred_series, series_for_tolerance
    rows = []
    for role, p in stage.parts.items():
        lo, hi = partmodels.extremes(p, analysis)
        tol = max(p.tol_plus, p.tol_minus)
        rows.append(PartRow(role=role, part=p, in_circuit=partmodels.nominal_value(p, analysis),
                            low=lo, high=hi, preferred=preferred_series(p.value, tol),
                            series=series_for_tolerance(tol)))
    return tuple(rows)


def assumptions_of(stage: Stage, analysis: Analysis) -> list[str]:
    """What the part models assume, part by part (sorted by role)."""
    out = []
    for role in sorted(stage.parts):
        out += partmodels.assumptions(stage.parts[role], analysis)
    return out


_part_rows = part_rows                   # names the kinds with their own analysis import
_assumptions = assumptions_of


def part_stresses(stage, batch, cap_peaks: dict, res_powers: dict,
                  res_pulses: dict | None = None) -> dict[str, PartStress]:
    """Per part role: the stress metric, its nominal and its worst (highest) Monte
    Carlo value; from the arrays the analysis gathered per chunk of rows. A
    resistor's surge power and energy per edge ride along as its ``pulse``."""
    out = {}
    res_pulses = res_pulses or {}
    for role, part in stage.parts.items():
        if part.kind == "C" and role in cap_peaks:
            arr = np.concatenate(cap_peaks[role])
        elif part.kind == "C" and part.bias_v:
            arr = np.full(batch.rows, part.bias_v)
        elif part.kind == "R" and role in res_powers:
            arr = np.concatenate(res_powers[role])
        else:
            continue
        pulse = ()
        if part.kind == "R" and role in res_pulses:
            pulse = tuple(PartStress(metric=m, nominal=float(x[0]), worst=_highest(x[batch.mc]))
                          for m, x in zip(("resistor_surge", "resistor_edge_energy"),
                                          _pulses(res_pulses[role])))
        out[role] = PartStress(metric=_STRESS[part.kind], nominal=float(arr[0]),
                               worst=_highest(arr[batch.mc]), pulse=pulse)
    return out


def _highest(samples: np.ndarray) -> float:
    # As rcdoc.analysis.checks.worst_value with an upper limit: NaN if any sample has no value.
    if samples.size == 0 or not np.all(np.isfinite(samples)):
        return math.nan
    return float(samples.max())


def _phasors(s: _Setup, nominal: dict, corner: float) -> Phasors | None:
    """The nominal's phasors at the swept frequency where they differ most in phase
    (rcdoc.analysis.phasor_choice); at the corner when the stage has no sweep."""
    choice = phasor_frequency(s.network, nominal, s.freqs)
    if choice is None:
        return phasor_data(s.network, nominal, corner)
    ph = phasor_data(s.network, nominal, choice.freq_hz)
    return None if ph is None else replace(ph, spread_deg=choice.spread_deg)


def phasor_data(network: Network, values: dict[str, np.ndarray], freq_hz: float) -> Phasors | None:
    """Part voltages along the network's path, head to tail, for a 1 V rms source.

    When the path ends at ground the series current is the reference direction
    (it is common to every part on the path); otherwise the source voltage is.
    """
    if not network.path:
        return None
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
    return Phasors(freq_hz=freq_hz, reference=reference,
                   vectors=tuple((n, k, v * rot) for n, k, v in vectors),
                   closing=(closing[0], closing[1] * rot) if closing else None,
                   current=i_ref * rot, source=rot * 1.0, output=out_v)
