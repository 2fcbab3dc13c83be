"""Snubber physics: the ringing networks, their poles and their time responses.

What it is for: the two circuits a snubber stage describes, as Networks the
engine solves, and the quantities derived from them over a batch of snubber
values (one row per Monte Carlo sample, worst-case corner or probe):

* a switching node (``switch_*``): the supply V feeds the node through the
  loop inductance Lp and the loop resistance Rp; the node carries its
  parasitic capacitance Cp and the snubber R–C to ground. The switch turning
  off is a step of the drive from 0 to V applied from rest.
* a contact or switch opening an inductive load (``load_*``): the coil (L in
  series with its resistance) carries the current I when the contact opens.
  By the compensation theorem the contact voltage is the response of the
  network with the supply set to zero and the contact removed to the current
  the closed contact carried, injected at the contact's terminals. That
  current source, in parallel with the branch across the contact (snubber
  R–C, or the stray capacitance without a snubber), is turned into its
  Thevenin equivalent (Norton–Thevenin equivalence, exact for linear
  networks): a voltage source i·R + ∫i dt / C in series with that branch. So
  the engine, whose only source is a voltage, solves the kick exactly.

Time responses come from rcdoc.analysis.engine (Radau IIA steps), vectorised over the
rows and split into chunks to bound memory; closed forms appear only in the
tests. ``switch_run`` and ``load_run`` do a whole stage's bookkeeping over its
batch (metric arrays, the displayed waveforms and their band), and
``*_tradeoff`` the sweeps against C; rcdoc.kinds.snubber lays them out.
What it must not do: parse the project, know tolerances, format
numbers or draw.
"""

from __future__ import annotations

import math
from typing import Iterator, Mapping

import numpy as np

from rcdoc.analysis import engine
from rcdoc.analysis import poles as polemod
from rcdoc.analysis.network import GROUND, Element, Network

DEFAULT_LOOP_Q = 30.0        # Q of an unsnubbed switch node when no loop resistance is given
DEFAULT_STRAY_F = 50e-12     # contact, wiring and winding capacitance across an opening contact
CHUNK_ROWS = 400             # rows per engine call: bounds the recorded waveforms' memory
MIN_POINTS, MAX_POINTS = 1500, 6000
STEPS_PER_RADIAN = 5.0       # time steps per radian of the fastest pole (≈ 31 per ring period)
SETTLE_TIME_CONSTANTS = 10.0  # window: 10 time constants of the slowest decay (e^-10 ≈ 5e-5)

# Element names of the fixed (non-part) elements.
LOOP_R, LOOP_L, NODE_C = "loop.r", "loop.l", "node.c"
COIL_L, COIL_R, STRAY_C = "coil.l", "coil.r", "stray.c"


# --------------------------------------------------------------------------
# parasitics


def parasitics_from_ringing(f1_hz: float, c_added_f: float, f2_hz: float) -> tuple[float, float]:
    """(C_par, L_par) from the ringing frequency before (f1) and after (f2) adding C_add.

    f = 1/(2π√(LC)) with the same L gives (f1/f2)² = (C_par + C_add)/C_par, so
    C_par = C_add / ((f1/f2)² − 1) and L = 1/((2π f1)² C_par) (common practice).
    """
    ratio = (f1_hz / f2_hz) ** 2
    c_par = c_added_f / (ratio - 1.0)
    return c_par, 1.0 / ((2 * math.pi * f1_hz) ** 2 * c_par)


def characteristic_impedance(l_h, c_f):
    """Z0 = √(L/C) of an LC loop."""
    return np.sqrt(np.asarray(l_h) / np.asarray(c_f))


def resonance_hz(l_h, c_f):
    """f = 1/(2π√(LC)) (Thomson's formula)."""
    return 1.0 / (2 * np.pi * np.sqrt(np.asarray(l_h) * np.asarray(c_f)))


# --------------------------------------------------------------------------
# networks


def switch_network(snubbed: bool) -> Network:
    """Supply (drive "in") -> Rp -> Lp -> node "sw"; Cp and the snubber r–c to ground."""
    els = [Element(LOOP_R, "R", "in", "a"), Element(LOOP_L, "L", "a", "sw"),
           Element(NODE_C, "C", "sw", GROUND)]
    if snubbed:
        els += [Element("r", "R", "sw", "m"), Element("c", "C", "m", GROUND)]
    return Network(elements=tuple(els), drive="in", output="sw")


def load_network(snubbed: bool) -> Network:
    """The opened contact's node "sw": coil to ground (supply shorted), and the
    branch across the contact in series with the Thevenin source (drive "in").

    With the snubber: "in" -> c -> "m" -> r -> "sw"; the stray capacitance,
    far smaller than the snubber's, is left out (it only slows the first jump
    of the contact voltage by about r·C_stray). Without: "in" -> C_stray -> "sw".
    """
    els = [Element(COIL_L, "L", "sw", "k"), Element(COIL_R, "R", "k", GROUND)]
    if snubbed:
        els += [Element("c", "C", "in", "m"), Element("r", "R", "m", "sw")]
    else:
        els += [Element(STRAY_C, "C", "in", "sw")]
    return Network(elements=tuple(els), drive="in", output="sw")


def leak_network() -> Network:
    """AC supply (drive) -> coil -> contact node; snubber r–c and stray C across the open contact."""
    els = [Element(COIL_L, "L", "in", "k"), Element(COIL_R, "R", "k", "sw"),
           Element("r", "R", "sw", "m"), Element("c", "C", "m", GROUND),
           Element(STRAY_C, "C", "sw", GROUND)]
    return Network(elements=tuple(els), drive="in", output="sw")


# --------------------------------------------------------------------------
# poles and damping


def poles(network: Network, values: Mapping[str, np.ndarray], scale_rad_s: float) -> np.ndarray:
    """Finite poles per row (S, n), NaN-padded: where G + sC is singular.

    The shared conditioned computation (rcdoc.analysis.poles), frequency scaled by
    ``scale_rad_s`` (the loop's resonance).
    """
    return polemod.poles(network, values, scale_rad_s)


def damping_ratio(p: np.ndarray) -> np.ndarray:
    """Damping ratio of the least damped pole pair, per row.

    A pair (p1, p2), complex conjugate or both real, is the factor
    s² − (p1 + p2)s + p1·p2 = s² + 2ζω0·s + ω0², so ζ = −(p1 + p2)/(2√(p1·p2))
    (for a conjugate pair ζ = −Re p/|p|). The formula is continuous where two
    real poles meet and become complex. The loop runs over pole pairs, not rows.
    """
    n = p.shape[1]
    mag = np.abs(p)
    real = np.abs(p.imag) <= 1e-9 * np.where(mag > 0, mag, 1.0)
    best = np.full(p.shape[0], np.inf)
    for i in range(n):
        for j in range(i + 1, n):
            a, b = p[:, i], p[:, j]
            conj = ~real[:, i] & ~real[:, j] & np.isclose(a, np.conj(b), rtol=1e-9, atol=0.0)
            ok = (conj | (real[:, i] & real[:, j])) & np.isfinite(a) & np.isfinite(b)
            with np.errstate(invalid="ignore", divide="ignore"):
                z = -(a.real + b.real) / (2 * np.sqrt(mag[:, i] * mag[:, j]))
            best = np.where(ok, np.minimum(best, z), best)
    return np.where(np.isfinite(best), best, np.nan)


def time_grid(p: np.ndarray, *, t_min: float = 0.0, t_max: float = math.inf) -> np.ndarray:
    """Uniform grid from 0 over SETTLE_TIME_CONSTANTS of the slowest decay of any row given
    (for a Monte Carlo batch, pass the nominal row alone: no row may depend on the others)."""
    re = np.abs(p.real[np.isfinite(p.real)])
    re = re[re > 0]
    mags = np.abs(p[np.isfinite(p)])
    slowest = float(re.min()) if re.size else 1.0
    fastest = float(mags.max()) if mags.size else 1.0
    t_end = min(max(SETTLE_TIME_CONSTANTS / slowest, t_min), t_max)
    n = int(np.clip(math.ceil(t_end * fastest * STEPS_PER_RADIAN), MIN_POINTS, MAX_POINTS))
    return np.linspace(0.0, t_end, n)


def _chunks(rows: int) -> Iterator[slice]:
    for s0 in range(0, rows, CHUNK_ROWS):
        yield slice(s0, min(s0 + CHUNK_ROWS, rows))


def _rows_of(values: Mapping[str, np.ndarray]) -> int:
    return max(np.size(v) for v in values.values())


def _take(values: Mapping[str, np.ndarray], rows: slice) -> dict[str, np.ndarray]:
    return {k: (v[rows] if np.size(v) > 1 else v) for k, v in values.items()}


class Envelope:
    """Nominal row, min and max over chosen rows of waveforms at display indices."""

    def __init__(self, idx: np.ndarray):
        self.idx = idx
        self.lo = self.hi = None

    def add(self, y: np.ndarray) -> None:
        if y.shape[0] == 0:
            return
        y = y[:, self.idx]
        lo, hi = y.min(axis=0), y.max(axis=0)
        self.lo = lo if self.lo is None else np.minimum(self.lo, lo)
        self.hi = hi if self.hi is None else np.maximum(self.hi, hi)


# --------------------------------------------------------------------------
# switching node


def switch_values(lp_h: float, cp_f: float, rp_ohm: float, rows: int,
                  r_ohm=None, c_f=None) -> dict[str, np.ndarray]:
    vals = {LOOP_R: np.full(rows, rp_ohm), LOOP_L: np.full(rows, lp_h),
            NODE_C: np.full(rows, cp_f)}
    if r_ohm is not None:
        vals["r"] = np.asarray(r_ohm, dtype=float)
        vals["c"] = np.asarray(c_f, dtype=float)
    return vals


def switch_edge(values: Mapping[str, np.ndarray], voltage_v: float, switching_hz: float,
                t: np.ndarray, *, envelope: Envelope | None = None,
                band_rows: np.ndarray | None = None) -> dict[str, np.ndarray]:
    """The snubbed node's turn-off edge per row: a step 0 -> V from rest.

    Returns (S,) arrays: node peak, overshoot above V, resistor energy of the
    turn-off edge (∫ v_R²/R dt over the window), of the turn-on edge (the
    switch discharges the snubber capacitor, charged to V, through R:
    ½·C·V², the textbook RC charge/discharge result), the average resistor
    power (both edges × f_sw), and the peak snubber-capacitor voltage.
    ``envelope`` collects the node waveform of ``band_rows`` (global row indices).
    """
    net = switch_network(True)
    rows = _rows_of(values)
    u = np.full(t.size, float(voltage_v))
    out = {k: np.empty(rows) for k in ("peak", "e_off", "cap_peak")}
    for rs in _chunks(rows):
        vals = _take(values, rs)
        res = engine.transient(net, vals, t, u, ["sw", "v:r", "v:c"], initial="rest")
        out["peak"][rs] = res["sw"].max(axis=1)
        out["e_off"][rs] = np.trapezoid(res["v:r"] ** 2, t, axis=1) / vals["r"]
        out["cap_peak"][rs] = np.abs(res["v:c"]).max(axis=1)
        if envelope is not None and band_rows is not None:
            sel = band_rows[(band_rows >= rs.start) & (band_rows < rs.stop)] - rs.start
            envelope.add(res["sw"][sel])
    c = np.asarray(values["c"], dtype=float)
    out["overshoot"] = out["peak"] - voltage_v
    out["e_on"] = 0.5 * c * voltage_v ** 2
    out["power"] = (out["e_off"] + out["e_on"]) * switching_hz
    return out


def switch_wave(values: Mapping[str, np.ndarray], voltage_v: float, t: np.ndarray,
                snubbed: bool) -> np.ndarray:
    """Node voltage (S, T) for the step 0 -> V from rest."""
    u = np.full(t.size, float(voltage_v))
    return engine.transient(switch_network(snubbed), values, t, u, ["sw"], initial="rest")["sw"]


# --------------------------------------------------------------------------
# inductive load


def coil_current(voltage_v: float, coil_l_h: float, coil_r_ohm: float, ac: bool,
                 line_hz: float) -> float:
    """Current the contact interrupts: V/R for DC; for AC the peak √2·V/|R + jωL|
    (worst case: the contact opens at the current's peak)."""
    if not ac:
        return voltage_v / coil_r_ohm
    z = abs(complex(coil_r_ohm, 2 * math.pi * line_hz * coil_l_h))
    return math.sqrt(2.0) * voltage_v / z


def interrupted_current(t: np.ndarray, i_a: float, ac: bool, line_hz: float):
    """The closed contact's current from the opening on, and its integral over time."""
    if not ac:
        return np.full(t.size, i_a), i_a * t
    w = 2 * math.pi * line_hz
    return i_a * np.cos(w * t), i_a * np.sin(w * t) / w


def load_values(coil_l_h: float, coil_r_ohm: float, rows: int, *, stray_f=None,
                r_ohm=None, c_f=None) -> dict[str, np.ndarray]:
    vals = {COIL_L: np.full(rows, coil_l_h), COIL_R: np.full(rows, coil_r_ohm)}
    if stray_f is not None:
        vals[STRAY_C] = np.full(rows, stray_f)
    if r_ohm is not None:
        vals["r"] = np.asarray(r_ohm, dtype=float)
        vals["c"] = np.asarray(c_f, dtype=float)
    return vals


def load_kick(values: Mapping[str, np.ndarray], i_a: float, ac: bool, line_hz: float,
              t: np.ndarray, *, want: tuple[str, ...] = (), envelope: Envelope | None = None,
              band_rows: np.ndarray | None = None) -> dict[str, np.ndarray]:
    """Contact opening with the snubber fitted, per row (S,) over the window ``t``.

    Physical snubber current = injected current − current of the Thevenin
    branch (KCL at the contact node, see the module docstring). Returns the
    contact peak, the resistor energy of the opening, the peak capacitor
    voltage in the window and the values at the window's end; ``want`` names
    waveforms (S, T) to return as well: "contact", "v_c", "i_coil";
    ``envelope`` collects the contact voltage of ``band_rows`` (global row indices).
    """
    net = load_network(True)
    rows = _rows_of(values)
    i_t, q_t = interrupted_current(t, i_a, ac, line_hz)
    out = {k: np.empty(rows) for k in ("peak", "e_open", "cap_peak", "e_coil_r",
                                       "v_c_end", "i_coil_end", "v_end")}
    waves = {k: np.empty((rows, t.size)) for k in want}
    for rs in _chunks(rows):
        vals = _take(values, rs)
        r = np.broadcast_to(vals["r"], (rs.stop - rs.start,))[:, None]
        c = np.broadcast_to(vals["c"], (rs.stop - rs.start,))[:, None]
        u = r * i_t[None, :] + q_t[None, :] / c
        res = engine.transient(net, vals, t, u, ["sw", "i:r", f"i:{COIL_L}"], initial="rest")
        i_snub = i_t[None, :] - res["i:r"]
        v_c = res["sw"] - r * i_snub
        i_coil = i_t[None, :] - res[f"i:{COIL_L}"]
        out["peak"][rs] = np.abs(res["sw"]).max(axis=1)
        out["e_open"][rs] = np.trapezoid(i_snub ** 2, t, axis=1) * r[:, 0]
        out["cap_peak"][rs] = np.abs(v_c).max(axis=1)
        rc = np.broadcast_to(vals[COIL_R], (rs.stop - rs.start,))
        out["e_coil_r"][rs] = np.trapezoid(i_coil ** 2, t, axis=1) * rc
        out["v_c_end"][rs] = v_c[:, -1]
        out["i_coil_end"][rs] = i_coil[:, -1]
        out["v_end"][rs] = res["sw"][:, -1]
        if envelope is not None and band_rows is not None:
            sel = band_rows[(band_rows >= rs.start) & (band_rows < rs.stop)] - rs.start
            envelope.add(res["sw"][sel])
        for k, y in (("contact", res["sw"]), ("v_c", v_c), ("i_coil", i_coil)):
            if k in waves:
                waves[k][rs] = y
    out.update(waves)
    return out


def load_kick_unsnubbed(values: Mapping[str, np.ndarray], i_a: float, ac: bool, line_hz: float,
                        t: np.ndarray) -> np.ndarray:
    """Contact voltage (S, T) without a snubber: the coil rings with the stray capacitance."""
    _, q_t = interrupted_current(t, i_a, ac, line_hz)
    u = q_t[None, :] / np.asarray(values[STRAY_C], dtype=float)[:, None]
    return engine.transient(load_network(False), values, t, u, ["sw"], initial="rest")["sw"]


def load_leak(values: Mapping[str, np.ndarray], voltage_rms_v: float,
              line_hz: float) -> dict[str, np.ndarray]:
    """AC steady state with the contact open: rms current and power in the snubber
    resistor, and the peak voltage on the snubber capacitor (phasors by the engine)."""
    net = leak_network()
    cur = engine.element_currents(net, values, line_hz)
    vol = engine.element_voltages(net, values, line_hz)
    i_rms = np.abs(cur["r"]) * voltage_rms_v
    return {"i_rms": i_rms, "power": i_rms ** 2 * np.asarray(values["r"], dtype=float),
            "cap_peak": np.abs(vol["c"]) * voltage_rms_v * math.sqrt(2.0)}


# --------------------------------------------------------------------------
# the kind's runs over a batch (rcdoc.kinds.snubber lays out their results)

DISPLAY_POINTS = 400
SWEEP_POINTS = 25
SETTLED_BAND = 0.02             # display window: until the node stays within 2 % of V


def display_rows(t: np.ndarray, t_show: float) -> np.ndarray:
    k = int(np.searchsorted(t, t_show, side="right")) - 1
    return np.unique(np.linspace(0, max(k, 1), DISPLAY_POINTS).astype(int))


def settle_time(t: np.ndarray, y: np.ndarray, final: float) -> float:
    out = np.abs(y - final) > SETTLED_BAND * abs(final)
    return float(t[np.flatnonzero(out)[-1]]) if out.any() else 0.0


def _const(rows: int, v: float) -> np.ndarray:
    return np.full(rows, float(v))


def switch_run(v: float, fsw: float, lp: float, cp: float, rp: float, values, rows: int,
               mc: slice) -> tuple[dict, dict]:
    """A switch snubber over the batch (``values`` "r", "c" per row; row 0 nominal, ``mc``
    the Monte Carlo rows): the metric arrays and what its page shows."""
    z0, f_ring = math.sqrt(lp / cp), float(resonance_hz(lp, cp))
    w0 = 2 * math.pi * f_ring
    vals = switch_values(lp, cp, rp, rows, values["r"], values["c"])
    p = poles(switch_network(True), vals, w0)
    zeta = damping_ratio(p)
    t = time_grid(p[:1])       # the nominal's grid: no row depends on the others
    nominal = switch_wave({k: a[:1] for k, a in vals.items()}, v, t, True)[0]
    t_show = min(t[-1], max(1.5 * settle_time(t, nominal, v), 8.0 / f_ring))
    idx = display_rows(t, t_show)
    env = Envelope(idx)
    edge = switch_edge(vals, v, fsw, t, envelope=env,
                       band_rows=np.arange(mc.start, mc.stop))
    # Without the snubber: the node rings in Lp, Cp and the loop resistance only.
    bare = switch_values(lp, cp, rp, 1)
    zeta_wo = float(damping_ratio(poles(switch_network(False), bare, w0))[0])
    t_wo = np.linspace(0.0, t[idx[-1]], 4 * DISPLAY_POINTS)
    y_wo = switch_wave(bare, v, t_wo, False)[0]
    arrays = {"damping": zeta, "overshoot": edge["overshoot"], "resistor_power": edge["power"],
              "capacitor_voltage": edge["cap_peak"], "parasitic_c": _const(rows, cp),
              # The resistor per edge: the opening's ring, or the closing's discharge of
              # C from V through R (½·C·V², surge V²/R at the closing instant).
              "resistor_edge_energy": np.maximum(edge["e_off"], edge["e_on"]),
              "resistor_surge": v ** 2 / np.asarray(values["r"], dtype=float),
              "parasitic_l": _const(rows, lp), "characteristic_impedance": _const(rows, z0),
              "ring_frequency": _const(rows, f_ring)}
    q = {"v": v, "fsw": fsw, "lp": lp, "cp": cp, "rp": rp, "z0": z0, "f_ring": f_ring,
         "w0": w0, "zeta": zeta, "zeta_wo": zeta_wo, "edge": edge, "t_wo": t_wo, "y_wo": y_wo,
         "t": t[idx], "nominal": nominal[idx], "band": (env.lo, env.hi)}
    return arrays, q


def load_run(v: float, fsw: float, ac: bool, line: float, ll: float, rc: float, stray: float,
             c_n: float, values, rows: int, mc: slice) -> tuple[dict, dict]:
    """An inductive-load snubber over the batch (``values`` "r", "c" per row; row 0
    nominal with C = ``c_n``): the metric arrays and what its page shows."""
    vpk = v * (math.sqrt(2.0) if ac else 1.0)
    i_a = coil_current(v, ll, rc, ac, line)
    r_all, c_all = values["r"], values["c"]
    f_ring, z0 = float(resonance_hz(ll, stray)), math.sqrt(ll / stray)
    vals = load_values(ll, rc, rows, r_ohm=r_all, c_f=c_all)
    p = poles(load_network(True), vals, 1.0 / math.sqrt(ll * c_n))
    zeta = damping_ratio(p)
    t = time_grid(p[:1], t_min=2.0 / line if ac else 0.0,     # the nominal's grid
                  t_max=10.0 / line if ac else math.inf)
    idx = display_rows(t, t[-1])
    env = Envelope(idx)
    kick = load_kick(vals, i_a, ac, line, t, envelope=env,
                     band_rows=np.arange(mc.start, mc.stop))
    nom = load_kick({k: a[:1] for k, a in vals.items()}, i_a, ac, line, t,
                    want=("contact",))
    bare = load_values(ll, rc, 1, stray_f=stray)
    t_wo = np.linspace(0.0, 2.5 / f_ring, 4 * DISPLAY_POINTS)
    y_wo = load_kick_unsnubbed(bare, i_a, ac, line, t_wo)[0]
    zeta_wo = float(damping_ratio(poles(load_network(False), bare,
                                        2 * math.pi * f_ring))[0])
    # Closing: the capacitor, charged up to the supply's peak, discharges through R into the contact.
    e_close = 0.5 * c_all * vpk ** 2
    i_close = vpk / r_all
    leak = (load_leak(load_values(ll, rc, rows, stray_f=stray, r_ohm=r_all,
                                      c_f=c_all), v, line) if ac else None)
    power = (kick["e_open"] + e_close) * fsw + (leak["power"] if ac else 0.0)
    cap = np.maximum(np.maximum(kick["cap_peak"], vpk), leak["cap_peak"] if ac else 0.0)
    arrays = {"damping": zeta, "overshoot": kick["peak"] - vpk, "resistor_power": power,
              "capacitor_voltage": cap, "parasitic_c": _const(rows, stray),
              "resistor_edge_energy": np.maximum(kick["e_open"], e_close),
              # Surge: the interrupted current enters R at the opening (i²·R); the
              # charged C discharges through R at the closing (V²/R).
              "resistor_surge": np.maximum(vpk * i_close, i_a ** 2 * r_all),
              "parasitic_l": _const(rows, ll), "characteristic_impedance": _const(rows, z0),
              "ring_frequency": _const(rows, f_ring)}
    q = {"i_a": i_a, "f_ring": f_ring, "z0": z0, "zeta": zeta, "zeta_wo": zeta_wo,
         "kick": kick, "t_wo": t_wo, "y_wo": y_wo, "e_close": e_close, "i_close": i_close,
         "leak": leak, "power": power, "cap": cap, "t": t[idx],
         "nominal": nom["contact"][0][idx], "band": (env.lo, env.hi)}
    return arrays, q


def switch_tradeoff(lp, cp, rp, r, c, v, fsw, w0):
    """Damping ratio and resistor power of the nominal switch node against C (R held)."""
    cs = np.logspace(math.log10(min(cp, c / 3)), math.log10(max(10 * cp, 3 * c)), SWEEP_POINTS)
    vals = switch_values(lp, cp, rp, cs.size, np.full(cs.size, r), cs)
    p = poles(switch_network(True), vals, w0)
    edge = switch_edge(vals, v, fsw, time_grid(p))
    return cs, damping_ratio(p), edge["power"]


def load_tradeoff(ll, rc, ac, line, i_a, vpk, fsw, r, c):
    """Peak contact voltage and switching resistor power against C (R held)."""
    cs = np.logspace(math.log10(c / 10), math.log10(c * 10), SWEEP_POINTS)
    vals = load_values(ll, rc, cs.size, r_ohm=np.full(cs.size, r), c_f=cs)
    p = poles(load_network(True), vals, 1.0 / math.sqrt(ll * c))
    t = time_grid(p, t_min=2.0 / line if ac else 0.0, t_max=10.0 / line if ac else math.inf)
    kick = load_kick(vals, i_a, ac, line, t)
    power = (kick["e_open"] + 0.5 * cs * vpk ** 2) * fsw
    return cs, kick["peak"], power
