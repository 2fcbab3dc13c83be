"""Part models for the spread: tolerance, temperature and DC-bias factors.

What it is for: turning one validated ``Part`` into Monte Carlo samples of its
in-circuit value, its nominal "as built" value, its worst-case extremes, and
the plain sentences the note prints about the assumptions behind them.

What it must not do: parse quantities or TOML, know about stages, or loop in
Python over samples; everything is vectorised over the samples at once.

The model (every factor multiplies the marked value):

* Tolerance: ``uniform`` over [−tol_minus, +tol_plus], or ``normal`` with the
  tolerance as the 3-sigma limit (common practice); an asymmetric tolerance
  uses sigma = tol_plus/3 above and tol_minus/3 below the marked value, and
  draws are clipped at the limits.
* Temperature, one ambient temperature per Monte Carlo sample shared by all
  parts of a stage (the caller draws it):
  - resistors, inductors, film and class I capacitors:
    1 + tcr·1e-6·(T − 25 °C), with tcr the part's stated coefficient (signed),
    else the dielectric's: polypropylene about −200 ppm/K, polyester about
    +400 ppm/K (common practice); a C0G/NP0 part without a stated tcr draws
    its coefficient uniformly within 0 ± 30 ppm/K (EIA-198);
  - class II ceramics (EIA-198 codes such as X7R): EIA-198 bounds the
    capacitance change (from its 25 °C value) over the code's whole rated
    range and promises nothing tighter at any temperature inside it. So by
    default a sample at any temperature other than 25 °C draws its change
    uniformly within the full band (X7R: ±15 % at 30 °C as at 125 °C), and
    the worst case takes the band's edges: the conservative reading. An
    analysed range outside the code's rated range is an input error (the
    code promises nothing there). A part may state a measured point,
    ``temperature_change = (at_c, change)``: the change is then taken as
    linear in |T − 25 °C| through that point (the same slope mirrored on the
    other side of 25 °C), bounded by the code's band. That one-point curve is
    an assumption; real curves are smooth and part-specific.
  - electrolytic capacitors: no temperature model beyond the tolerance.
* DC bias (capacitors with ``dc_bias = (at_v, change)`` and ``bias_v``):
  factor 1 + change·(bias_v/at_v)², clipped at 0.1. The square law through
  one measured point is an assumption (common practice for a one-point
  model); without ``bias_v`` or ``dc_bias`` no loss is modelled.
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass

import numpy as np

from rcdoc.errors import ProjectError
from rcdoc.input.model import Analysis, Part

REFERENCE_C = 25.0          # reference temperature of values and coefficients
DC_BIAS_FLOOR = 0.1         # the one-point square law is not trusted below this

# EIA-198 class II code tables: first letter = low end of the rated range,
# digit = high end, last letter = capacitance change band (plus, minus), as
# fractions. Source: EIA-198.
_LOW_C = {"X": -55.0, "Y": -30.0, "Z": 10.0}
_HIGH_C = {"2": 45.0, "4": 65.0, "5": 85.0, "6": 105.0, "7": 125.0, "8": 150.0, "9": 200.0}
_BAND = {
    "A": (0.010, 0.010),
    "B": (0.015, 0.015),
    "C": (0.022, 0.022),
    "D": (0.033, 0.033),
    "E": (0.047, 0.047),
    "F": (0.075, 0.075),
    "P": (0.10, 0.10),
    "R": (0.15, 0.15),
    "S": (0.22, 0.22),
    "T": (0.22, 0.33),
    "U": (0.22, 0.56),
    "V": (0.22, 0.82),
}


@dataclass(frozen=True)
class Dielectric:
    """What a capacitor's dielectric code says about its temperature behaviour.

    ``family`` is "class-1", "class-2", "film" or "electrolytic". Rated limits
    are in °C (None where the code states none). ``band_plus``/``band_minus``
    are the class II change limits as positive fractions (Y5V: 0.22, 0.82).
    ``tc_ppm`` is the nominal coefficient in ppm/K and ``tc_spread_ppm`` the
    ± range it may take (C0G: 0 ± 30).
    """

    code: str
    family: str
    description: str
    source: str
    rated_low_c: float | None = None
    rated_high_c: float | None = None
    band_plus: float = 0.0
    band_minus: float = 0.0
    tc_ppm: float | None = None
    tc_spread_ppm: float = 0.0


_C0G = Dielectric(
    code="C0G", family="class-1", description="class I ceramic, 0 ± 30 ppm/K",
    source="EIA-198", tc_ppm=0.0, tc_spread_ppm=30.0,
)
_NAMED = {
    "C0G": _C0G,
    "NP0": _C0G,
    # The letter O for the digit 0 is a frequent spelling of both names.
    "COG": _C0G,
    "NPO": _C0G,
    "FILM-PP": Dielectric(
        code="film-pp", family="film", description="polypropylene film, about −200 ppm/K",
        source="common practice", tc_ppm=-200.0,
    ),
    "FILM-PET": Dielectric(
        code="film-pet", family="film", description="polyester film, about +400 ppm/K",
        source="common practice", tc_ppm=400.0,
    ),
    "ELECTROLYTIC": Dielectric(
        code="electrolytic", family="electrolytic",
        description="electrolytic, no temperature model beyond the tolerance",
        source="common practice",
    ),
}


def decode_dielectric(code: str, path: str = "") -> Dielectric:
    """Decode a dielectric code: EIA-198 class II (``X7R``), C0G/NP0, film or electrolytic.

    Unknown codes raise ProjectError naming ``path``.
    """
    if not isinstance(code, str):
        raise ProjectError(f"a dielectric is a text code such as \"X7R\", got {code!r}", path=path)
    key = code.strip().upper()
    if key in _NAMED:
        return _NAMED[key]
    if len(key) == 3 and key[0] in _LOW_C and key[1] in _HIGH_C and key[2] in _BAND:
        plus, minus = _BAND[key[2]]
        band = _band(plus, minus)
        return Dielectric(
            code=key, family="class-2",
            description=(
                f"class II ceramic, {band} from {_deg(_LOW_C[key[0]])} to {_deg(_HIGH_C[key[1]])}"
            ),
            source="EIA-198",
            rated_low_c=_LOW_C[key[0]], rated_high_c=_HIGH_C[key[1]],
            band_plus=plus, band_minus=minus,
        )
    raise ProjectError(
        f"unknown dielectric {code!r}; expected an EIA-198 class II code "
        "(letter X/Y/Z, digit 2-9, band letter, e.g. \"X7R\"), \"C0G\" (\"NP0\"), "
        "\"film-pp\", \"film-pet\" or \"electrolytic\"",
        path=path,
    )


def check_temperature_range(dielectric: Dielectric, t_low_c: float, t_high_c: float, path: str) -> None:
    """Raise ProjectError if the analysed range leaves the code's rated range."""
    low, high = dielectric.rated_low_c, dielectric.rated_high_c
    if low is None or high is None:
        return
    if t_low_c < low or t_high_c > high:
        raise ProjectError(
            f"the analysed temperature range {_deg(t_low_c)} to {_deg(t_high_c)} goes beyond "
            f"the rated range of {dielectric.code}, {_deg(low)} to {_deg(high)} (EIA-198)",
            path=path,
        )


def default_tolerance(kind: str) -> tuple[float, float]:
    """(plus, minus) tolerance when a part states none: R 5 %, C and L 10 %."""
    k = str(kind).upper()
    if k == "R":
        return 0.05, 0.05
    if k in ("C", "L"):
        return 0.10, 0.10
    raise ProjectError(f"unknown part type {kind!r}; expected R, C or L")


def sample_values(
    part: Part, analysis: Analysis, rng: np.random.Generator, temperature_c: np.ndarray
) -> np.ndarray:
    """Monte Carlo samples of the part's in-circuit value, shape (S,), S = len(temperature_c).

    ``temperature_c`` is the ambient temperature of each sample, shared by all
    parts of the stage. The draws consumed from ``rng`` do not depend on the
    temperature range, so changing the range does not reshuffle tolerances.
    """
    t = np.asarray(temperature_c, dtype=float)
    if t.ndim != 1:
        raise ProjectError("temperature samples must be a 1-D array", path=part.path)
    n = t.shape[0]
    _check_part(part)
    diel = _dielectric_of(part)
    if diel is not None:
        check_temperature_range(diel, *analysis.temperature_c, part.path + ".dielectric")
    tol = _draw_tolerance(rng, n, part.tol_plus, part.tol_minus, analysis.distribution)
    temp = _temperature_factor(part, diel, rng, t)
    return part.value * (1.0 + tol) * temp * _dc_bias_factor(part)


def nominal_value(part: Part, analysis: Analysis) -> float:
    """The marked value at 25 °C with the DC-bias loss applied: the value as built in circuit."""
    _check_part(part)
    return float(part.value * _dc_bias_factor(part))


def extremes(part: Part, analysis: Analysis) -> tuple[float, float]:
    """Lowest and highest in-circuit value over tolerance, analysed temperatures and DC bias.

    Every sample of ``sample_values`` lies within these (worst-case corners).
    """
    _check_part(part)
    t_low, t_high = analysis.temperature_c
    diel = _dielectric_of(part)
    if diel is not None:
        check_temperature_range(diel, t_low, t_high, part.path + ".dielectric")
    if diel is not None and diel.family == "class-2":
        # The change over the analysed range: 25 °C itself when inside it, and both ends.
        t = np.array([t_low, t_high, min(max(REFERENCE_C, t_low), t_high)])
        change = np.concatenate([_class2_change(part, diel, t, end, end)
                                 for end in (-diel.band_minus, diel.band_plus)])
        temp_lo, temp_hi = 1.0 + float(change.min()), 1.0 + float(change.max())
    else:
        tc_lo, tc_hi = _tc_range_ppm(part, diel)
        corners = [1.0 + tc * 1e-6 * (tt - REFERENCE_C) for tc in (tc_lo, tc_hi) for tt in (t_low, t_high)]
        temp_lo, temp_hi = min(corners), max(corners)
    bias = _dc_bias_factor(part)
    return (
        float(part.value * (1.0 - part.tol_minus) * temp_lo * bias),
        float(part.value * (1.0 + part.tol_plus) * temp_hi * bias),
    )


def assumptions(part: Part, analysis: Analysis) -> list[str]:
    """Plain sentences for the note on how this part's spread is modelled."""
    label = part.ref or part.role
    out = [f"{label}: {_tolerance_sentence(part, analysis.distribution)}"]
    t_low, t_high = analysis.temperature_c
    diel = _dielectric_of(part)
    fixed_temperature = t_low == t_high == REFERENCE_C
    if diel is not None and diel.family == "class-2":
        out.append(f"{label}: {_class2_sentence(part, diel, analysis, fixed_temperature)}")
    elif diel is not None and diel.family == "electrolytic":
        out.append(f"{label}: electrolytic; no temperature model beyond the tolerance.")
    elif not fixed_temperature:
        out.append(f"{label}: {_linear_tc_sentence(part, diel)}")
    if part.kind.upper() == "C":
        out.append(f"{label}: {_dc_bias_sentence(part, diel)}")
    return out


# --- internals -------------------------------------------------------------

def _check_part(part: Part) -> None:
    if not (math.isfinite(part.value) and part.value > 0.0):
        raise ProjectError(f"a part value must be positive, got {part.value!r}", path=part.path + ".value")
    if not (math.isfinite(part.tol_plus) and part.tol_plus >= 0.0
            and math.isfinite(part.tol_minus) and 0.0 <= part.tol_minus < 1.0):
        raise ProjectError(
            f"a tolerance must not be negative and its minus side must stay below 100 %, "
            f"got +{part.tol_plus * 100:g} %/−{part.tol_minus * 100:g} %",
            path=part.path + ".tolerance",
        )


def _dielectric_of(part: Part) -> Dielectric | None:
    if part.kind.upper() != "C" or part.dielectric is None:
        return None
    return decode_dielectric(part.dielectric, part.path + ".dielectric")


def _draw_tolerance(
    rng: np.random.Generator, n: int, plus: float, minus: float, distribution: str
) -> np.ndarray:
    """Fractional deviation from the marked value, within [−minus, +plus]."""
    if distribution == "uniform":
        return rng.uniform(-minus, plus, n)
    if distribution == "normal":
        # Tolerance as the 3-sigma limit (common practice); a split normal for
        # asymmetric tolerances, clipped so no part is outside its marking.
        z = rng.standard_normal(n)
        dev = np.where(z >= 0.0, z * (plus / 3.0), z * (minus / 3.0))
        return np.clip(dev, -minus, plus)
    raise ProjectError(
        f"unknown distribution {distribution!r}; expected \"uniform\" or \"normal\"",
        path="analysis.distribution",
    )


def _class2_change(part: Part, diel: Dielectric, t: np.ndarray, cold, hot) -> np.ndarray:
    """Fractional capacitance change of a class II part at temperatures ``t``.

    Without a measured point: anywhere in the code's band at any temperature
    but 25 °C (EIA-198 bounds only the whole range); ``cold``/``hot`` give the
    value taken below and above 25 °C (per-sample draws, or one of the band's
    edges for the extremes; scalars or arrays like ``t``). With ``temperature_change``:
    linear in |T − 25 °C| through the stated point, bounded by the band.
    """
    away = t != REFERENCE_C
    if part.temperature_change is None:
        return np.where(away, np.where(t > REFERENCE_C, hot, cold), 0.0)
    at_c, change = part.temperature_change
    curve = change * np.abs(t - REFERENCE_C) / abs(at_c - REFERENCE_C)
    return np.clip(curve, -diel.band_minus, diel.band_plus)


def _tc_range_ppm(part: Part, diel: Dielectric | None) -> tuple[float, float]:
    """Lowest and highest linear temperature coefficient the part may have, ppm/K."""
    if part.tcr_ppm is not None:
        return part.tcr_ppm, part.tcr_ppm
    if diel is not None and diel.tc_ppm is not None:
        return diel.tc_ppm - diel.tc_spread_ppm, diel.tc_ppm + diel.tc_spread_ppm
    return 0.0, 0.0


def _temperature_factor(
    part: Part, diel: Dielectric | None, rng: np.random.Generator, t: np.ndarray
) -> np.ndarray:
    n = t.shape[0]
    if diel is not None and diel.family == "class-2":
        # Two draws per sample (one each side of 25 °C) whatever the model, so the
        # rng stream of later parts does not depend on it.
        cold_end = rng.uniform(-diel.band_minus, diel.band_plus, n)
        hot_end = rng.uniform(-diel.band_minus, diel.band_plus, n)
        return 1.0 + _class2_change(part, diel, t, cold_end, hot_end)
    tc_lo, tc_hi = _tc_range_ppm(part, diel)
    if diel is not None and part.tcr_ppm is None and diel.tc_spread_ppm > 0.0:
        # Drawn even at a fixed 25 °C so the rng stream (hence every later
        # part's tolerance draw) does not depend on the temperature range.
        tc = rng.uniform(tc_lo, tc_hi, n)
    else:
        tc = tc_lo
    return 1.0 + tc * 1e-6 * (t - REFERENCE_C)


def _dc_bias_factor(part: Part) -> float:
    """1 + change·(bias/at)², clipped at DC_BIAS_FLOOR; 1 without data or bias."""
    if part.kind.upper() != "C" or part.dc_bias is None or part.bias_v is None:
        return 1.0
    at_v, change = part.dc_bias
    if not (math.isfinite(at_v) and at_v > 0.0):
        raise ProjectError(
            f"the DC-bias data point needs a positive voltage, got {at_v!r} V", path=part.path + ".dc_bias.at"
        )
    if not (math.isfinite(change) and change > -1.0):
        raise ProjectError(
            f"a DC-bias change must be above −100 %, got {change * 100:g} %", path=part.path + ".dc_bias.change"
        )
    if not math.isfinite(part.bias_v):
        raise ProjectError(f"the bias voltage must be finite, got {part.bias_v!r}", path=part.path + ".bias")
    return max(DC_BIAS_FLOOR, 1.0 + change * (part.bias_v / at_v) ** 2)


def _pct(fraction: float) -> str:
    return f"{fraction * 100:.3g} %"


def _num(x: float, spec: str) -> str:
    """A formatted number with the typographic minus sign used in the note's text."""
    return format(x, spec).replace("-", "\u2212")


def _deg(celsius: float) -> str:
    return f"{_num(celsius, '+g')} °C" if celsius else "0 °C"


def _band(plus: float, minus: float) -> str:
    return f"±{_pct(plus)}" if plus == minus else f"+{_pct(plus)}/−{_pct(minus)}"


def _tolerance_sentence(part: Part, distribution: str) -> str:
    tol = _band(part.tol_plus, part.tol_minus)
    if distribution == "normal":
        return (
            f"tolerance {tol} taken as the 3-sigma limit of a normal distribution, clipped at "
            "the limits (common practice)."
        )
    return f"tolerance {tol} drawn uniformly over its whole range."


def _class2_sentence(part: Part, diel: Dielectric, analysis: Analysis, fixed: bool) -> str:
    t_low, t_high = analysis.temperature_c
    head = f"{diel.code} is an EIA-198 {diel.description}."
    if fixed:
        return head + " The analysis at 25 °C, the code's reference, sees no temperature change."
    lo, hi = extremes(dataclasses.replace(part, tol_plus=0.0, tol_minus=0.0, dc_bias=None),
                      analysis)
    lo_pct, hi_pct = ((x / part.value - 1) * 100 for x in (lo, hi))
    reached = (f"from {_deg(t_low)} to {_deg(t_high)}: {_num(lo_pct, '+.3g') if lo_pct else 0} % "
               f"to {_num(hi_pct, '+.3g') if hi_pct else 0} %.")
    if part.temperature_change is None:
        return (head + " EIA-198 bounds the change over the whole range only, so the full "
                "band is taken at any temperature other than 25 °C (the conservative "
                "reading; each sample draws its change uniformly within the band); "
                + reached)
    at_c, change = part.temperature_change
    return (head + f" Measured point stated for the part: {_num(change * 100, '+.3g')} % at "
            f"{_deg(at_c)}; the change is taken as linear in |T − 25 °C| through it (the "
            "same slope on the other side of 25 °C), bounded by the band (an assumption; "
            "real curves are part-specific); " + reached)


def _linear_tc_sentence(part: Part, diel: Dielectric | None) -> str:
    if part.tcr_ppm is not None:
        return f"temperature coefficient {_num(part.tcr_ppm, '+g')} ppm/K as stated, linear from 25 °C."
    if diel is not None and diel.family == "class-1":
        return (
            f"{diel.code} (EIA-198 class I): temperature coefficient drawn uniformly within "
            f"{diel.tc_ppm:g} ± {diel.tc_spread_ppm:g} ppm/K, linear from 25 °C."
        )
    if diel is not None and diel.tc_ppm is not None:
        return f"{diel.description} assumed (common practice), linear from 25 °C."
    return "no temperature coefficient given; the value is taken as constant with temperature."


def _dc_bias_sentence(part: Part, diel: Dielectric | None) -> str:
    if part.dc_bias is None:
        if diel is not None and diel.family == "class-2":
            return "no DC-bias data given; no loss of capacitance with voltage is modelled."
        return "no loss of capacitance with DC voltage is modelled."
    at_v, change = part.dc_bias
    if part.bias_v is None:
        return (
            f"DC-bias data ({_num(change * 100, '+.3g')} % at {at_v:g} V) given but no bias "
            "voltage; no loss is modelled."
        )
    factor = _dc_bias_factor(part)
    clipped = " (clipped at the floor of 10 % of the value)" if factor == DC_BIAS_FLOOR else ""
    return (
        f"DC bias: {_num(change * 100, '+.3g')} % at {at_v:g} V from the part's data; the loss is "
        f"assumed to grow with the square of the voltage (an assumption, common practice for a "
        f"one-point model), giving {_num((factor - 1) * 100, '+.3g')} % at "
        f"{_num(part.bias_v, 'g')} V{clipped}."
    )
