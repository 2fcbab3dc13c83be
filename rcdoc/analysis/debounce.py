"""Debounce physics: a contact read by a logic input through an RC, in closed form.

The circuit (pull-up form): ``r_pull`` from the supply to the contact node,
the contact from that node to ground, ``r`` from the contact node to the
input, ``c`` from the input to ground, and the input's leakage current at the
input node. In either state of the contact the network is first order, so
the input voltage is an exponential towards the state's settled level:

- contact open: C charges through r_pull + r towards the supply, shifted by
  the leakage through r_pull + r (Thevenin), τ = (r_pull + r)·C;
- contact closed: the contact holds its node at the rail, so C discharges
  through r alone towards the rail, shifted by the leakage through r,
  τ = r·C (the pull resistor's current flows into the contact, not into C).

The time to cross a threshold V_th from V0 towards V∞ is the textbook
t = τ·ln((V∞ − V0)/(V∞ − V_th)). ``pull = "down"`` is the mirror image (the
contact goes to the supply). Leakage is taken in its worst direction for
each level: out of the input for the high level, into it for the low level.

Everything here is a numpy expression over rows (Monte Carlo samples,
sensitivity probes, worst-case corners); the kind module (rcdoc.kinds.debounce)
does the bookkeeping, the note and the checks.
"""

from __future__ import annotations

import numpy as np

WAVE_POINTS = 400          # points of a drawn press or release waveform
WAVE_SPAN = 1.6            # waveform window: this many times the slower delay (or 5 τ)


def levels(pull: str, supply: float, leak: float, rp: np.ndarray, r: np.ndarray):
    """(high level, low level) of the input, leakage in its worst direction."""
    if pull == "up":
        high = supply - leak * (rp + r)      # contact open: through r_pull + r from the supply
        low = leak * r                       # contact closed: through r from ground
    else:
        high = supply - leak * r             # contact closed: through r from the supply
        low = leak * (rp + r)                # contact open: through r_pull + r from ground
    return np.asarray(high, float), np.asarray(low, float)


def edges(pull: str, supply: float, leak: float, rp, r, c, rising, falling) -> dict:
    """Start, target, threshold and τ of the press and release edges, per row.

    Pull-up: a press pulls the input down (towards the low level, τ = r·C) and
    crosses the falling threshold; a release lets it rise (τ = (r_pull + r)·C)
    through the rising threshold. Pull-down: the mirror image.
    """
    rp, r, c = (np.asarray(a, float) for a in (rp, r, c))
    high, low = levels(pull, supply, leak, rp, r)
    fast, slow = r * c, (rp + r) * c
    if pull == "up":
        press = {"v0": high, "vinf": low, "vth": falling, "tau": fast}
        release = {"v0": low, "vinf": high, "vth": rising, "tau": slow}
    else:
        press = {"v0": low, "vinf": high, "vth": rising, "tau": fast}
        release = {"v0": high, "vinf": low, "vth": falling, "tau": slow}
    return {"press": press, "release": release, "high": high, "low": low}


def valid_levels(high, low, rising, falling) -> np.ndarray:
    """Rows where both settled levels are valid logic levels (the input toggles)."""
    return (high > rising) & (low < falling)


def crossing_time(e: dict, ok: np.ndarray) -> np.ndarray:
    """t = τ·ln((V∞ − V0)/(V∞ − V_th)); NaN where the edge never crosses."""
    with np.errstate(divide="ignore", invalid="ignore"):
        t = e["tau"] * np.log((e["vinf"] - e["v0"]) / (e["vinf"] - e["vth"]))
    return np.where(ok & np.isfinite(t), t, np.nan)


def slope_at_threshold(e: dict, ok: np.ndarray) -> np.ndarray:
    """|dV/dt| where the edge crosses its threshold: |V∞ − V_th|/τ."""
    return np.where(ok, np.abs(e["vinf"] - e["vth"]) / e["tau"], np.nan)


def metrics(pull: str, supply: float, leak: float, rp, r, c, rising, falling) -> dict:
    """Every debounce metric for every row (NaN where a delay does not exist).

    A delay exists only where both levels are valid: the low level below the
    falling threshold and the high level above the rising one. Otherwise the
    input never crosses one of its thresholds and cannot toggle.
    """
    ed = edges(pull, supply, leak, rp, r, c, rising, falling)
    ok = valid_levels(ed["high"], ed["low"], np.asarray(rising), np.asarray(falling))
    rate = np.fmin(slope_at_threshold(ed["press"], ok), slope_at_threshold(ed["release"], ok))
    return {"press_delay": crossing_time(ed["press"], ok),
            "release_delay": crossing_time(ed["release"], ok),
            "high_level": ed["high"], "low_level": ed["low"],
            "edge_rate": np.where(ok, rate, np.nan)}


def slower_edge(pull: str, supply: float, leak: float, rp, r, c, rising, falling) -> np.ndarray:
    """Per row: True where the release edge is the slower one at its threshold."""
    ed = edges(pull, supply, leak, rp, r, c, rising, falling)
    ok = np.ones(np.shape(ed["high"]), bool)
    return slope_at_threshold(ed["release"], ok) <= slope_at_threshold(ed["press"], ok)


def waveform(e: dict, t: np.ndarray) -> np.ndarray:
    """The input voltage after the edge starts: rows × times."""
    v0, vinf, tau = (np.asarray(e[k], float)[:, None] for k in ("v0", "vinf", "tau"))
    return vinf + (v0 - vinf) * np.exp(-t[None, :] / tau)


def window(e: dict, delay: float) -> float:
    """A display window for one edge: past its crossing, long enough to show it settle."""
    tau = float(np.asarray(e["tau"]).ravel()[0])
    base = WAVE_SPAN * delay if np.isfinite(delay) and delay > 0 else 0.0
    return max(base, 5.0 * tau)


def threshold_rows(rng: np.random.Generator, n: int, rising: tuple[float, float],
                   falling: tuple[float, float]) -> tuple[np.ndarray, np.ndarray]:
    """Monte Carlo thresholds: V_T+ uniform in its range, V_T- uniform in its range
    but never above the same sample's V_T+ (a Schmitt input's hysteresis is
    positive); where the ranges overlap, V_T- is drawn again uniformly in
    [its minimum, that sample's V_T+]."""
    up = rng.uniform(rising[0], rising[1], n)
    down = rng.uniform(falling[0], falling[1], n)
    again = rng.uniform(0.0, 1.0, n)
    over = down > up
    redraw = falling[0] + again * (np.minimum(falling[1], up) - falling[0])
    return up, np.where(over, redraw, down)


def threshold_corners(rising: tuple[float, float], falling: tuple[float, float]):
    """The four corners (V_T+, V_T-) of the threshold ranges, V_T- clipped to V_T+."""
    ups = np.array([rising[0], rising[0], rising[1], rising[1]])
    downs = np.array([falling[0], falling[1], falling[0], falling[1]])
    return ups, np.minimum(downs, ups)
