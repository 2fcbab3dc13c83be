"""Load a project file: TOML text -> validated, unit-parsed `Project`.

Every mistake is raised as a ProjectError naming the file and the key path
(``stage[2].parts.c.value``); unknown keys get a "did you mean". Kind-specific
keys are validated by the kind's own module. Nothing here computes physics or
renders anything.
"""

from __future__ import annotations

import datetime as _dt
import difflib
import os
import re
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Mapping

from rcdoc.input.bom import merge_bom
from rcdoc.errors import ProjectError
from rcdoc.input.limits import check_sweep, check_text, read_toml
from rcdoc.input.model import Analysis, Board, Check, Drive, Part, Project, Stage
from rcdoc.input.parts import check_temperature_range, decode_dielectric, default_tolerance
from rcdoc.input.quantities import (PART_UNITS, parse_percent, parse_positive, parse_quantity,
                                    parse_tolerance)

MAX_SAMPLES = 200_000
# Matched with fullmatch: "adc0\n" is not an id ("$" would allow the newline).
ID_PATTERN = re.compile(r"[a-z0-9][a-z0-9-]*")
ROLE_PATTERN = re.compile(r"[rcl][a-z0-9_]*")

BOARD_KEYS = ("name", "revision", "date", "authors", "notes", "hazardous_voltage")
ANALYSIS_KEYS = ("samples", "seed", "distribution", "temperature", "points_per_decade",
                 "sweep", "bom", "bom_wins")
STAGE_KEYS = ("id", "title", "kind", "notes", "source", "load", "marks", "drive",
              "parts", "check", "channels")
PART_KEYS = ("ref", "value", "tolerance", "tcr", "dielectric", "dc_bias", "bias",
             "temperature_change",
             "voltage", "power", "pulse", "model")
CHECK_KEYS = ("metric", "min", "max", "at", "within", "bits", "full_scale", "yield")


def check_keys(table: dict, allowed, path: str) -> None:
    """Reject unknown keys with a "did you mean" suggestion."""
    for key in table:
        if key not in allowed:
            close = difflib.get_close_matches(key, list(allowed), n=1, cutoff=0.6)
            hint = f"; did you mean '{close[0]}'?" if close else \
                f"; allowed keys: {', '.join(allowed)}"
            where = f"{path}.{key}" if path else key
            raise ProjectError(f"unknown key '{key}'{hint}", path=where)


def need_table(value: Any, path: str) -> dict:
    if not isinstance(value, dict):
        raise ProjectError(f"expected a table, got {_type_name(value)}", path=path)
    return value


def need_string(value: Any, path: str, *, allow_empty: bool = False) -> str:
    if not isinstance(value, str):
        raise ProjectError(f"expected a string, got {_type_name(value)}", path=path)
    if not allow_empty and not value.strip():
        raise ProjectError("must not be empty", path=path)
    return value


def one_line(value: Any, path: str, *, allow_empty: bool = False) -> str:
    """A one-line text (a name, a title, a reference): no line breaks or control
    characters, at most rcdoc.input.limits.MAX_LINE_CHARS."""
    return check_text(need_string(value, path, allow_empty=allow_empty), path)


def need_int(value: Any, path: str, lo: int, hi: int) -> int:
    if isinstance(value, bool) or not isinstance(value, int):
        raise ProjectError(f"expected a whole number, got {_type_name(value)}", path=path)
    if not lo <= value <= hi:
        raise ProjectError(f"{value} is out of range; allowed {lo} to {hi}", path=path)
    return value


def need_bool(value: Any, path: str) -> bool:
    if not isinstance(value, bool):
        raise ProjectError(f"expected true or false, got {_type_name(value)}", path=path)
    return value


def _type_name(value: Any) -> str:
    return {dict: "a table", list: "a list", str: "a string", bool: "a boolean",
            int: "a number", float: "a number"}.get(type(value), type(value).__name__)


def paragraphs(text: str) -> tuple[str, ...]:
    """Plain text -> paragraphs (a blank line starts a new one)."""
    parts = re.split(r"\n\s*\n", text.strip())
    return tuple(" ".join(p.split()) for p in parts if p.strip())


@dataclass(frozen=True)
class Registries:
    """What the loader validates against, passed in by the caller (the input layer
    knows neither the kinds nor the metrics): the stage kinds by name
    (rcdoc.kinds.KINDS) and the metric registry (rcdoc.analysis.metrics.METRICS)."""

    kinds: Mapping[str, Any]
    metrics: Mapping[str, Any]


def load_project(file: str | os.PathLike, *, kinds: Mapping[str, Any],
                 metrics: Mapping[str, Any], samples: int | None = None,
                 seed: int | None = None) -> Project:
    """Read and validate a project file; raise ProjectError located in it.

    ``kinds`` and ``metrics`` are the registries to validate stages and checks
    against (commands pass rcdoc.kinds.KINDS and rcdoc.analysis.metrics.METRICS;
    rcdoc.kinds.load_project does it for you).
    """
    reg = Registries(kinds, metrics)
    name = str(file)
    try:
        try:
            raw_bytes = Path(file).read_bytes()
        except OSError as exc:
            raise ProjectError(f"cannot read the project file: {exc.strerror}")
        data = read_toml(raw_bytes)     # size, encoding, TOML, integers, text (rcdoc.input.limits)
        return _project(data, name, reg, samples=samples, seed=seed)
    except ProjectError as exc:
        raise exc.located(name)


def _project(data: dict, file: str, reg: Registries, *, samples: int | None,
             seed: int | None) -> Project:
    check_keys(data, ("board", "analysis", "stage"), "")
    if "board" not in data:
        raise ProjectError("the [board] table is missing", path="board")
    board = _board(need_table(data["board"], "board"))
    analysis = _analysis(need_table(data.get("analysis", {}), "analysis"))
    if samples is not None:
        analysis = _replace(analysis, samples=need_int(samples, "--samples", 1, MAX_SAMPLES))
    if seed is not None:
        analysis = _replace(analysis, seed=need_int(seed, "--seed", 0, 2**63 - 1))
    raw_stages = data.get("stage")
    # `stage = []` is as empty as no [[stage]] table at all: nothing to judge.
    if raw_stages is None or raw_stages == []:
        raise ProjectError("no [[stage]] tables: a project needs at least one stage",
                           path="stage")
    if not isinstance(raw_stages, list):
        raise ProjectError("write stages as [[stage]] tables", path="stage")
    bom_rows = None
    if analysis.bom is not None:
        from rcdoc.input.bom import read_bom
        bom_path = Path(file).parent / analysis.bom
        # Confined: rcdoc reads nothing outside the project's folder.
        home = Path(file).resolve().parent
        if not bom_path.resolve().is_relative_to(home):
            raise ProjectError(f"the bill of materials must lie inside the project's folder "
                               f"({home}); '{analysis.bom}' does not", path="analysis.bom")
        bom_rows = read_bom(bom_path, "analysis.bom")
    stages = []
    seen: dict[str, int] = {}
    for i, raw in enumerate(raw_stages, start=1):
        path = f"stage[{i}]"
        st = _stage(need_table(raw, path), i, analysis, bom_rows, reg)
        if st.id in seen:
            raise ProjectError(f"id '{st.id}' is already used by stage[{seen[st.id]}]",
                               path=f"{path}.id")
        seen[st.id] = i
        stages.append(st)
    unused: tuple = ()
    if bom_rows is not None:
        from rcdoc.input.bom import unused_rows
        from rcdoc.input.channels import used_refs
        unused = tuple(unused_rows(bom_rows, {p.ref for st in stages
                                              for p in st.parts.values()}
                                   | {r for st in stages for r in used_refs(st)}))
    return Project(file=file, board=board, analysis=analysis, stages=tuple(stages),
                   bom_unused=unused)


def _replace(obj, **changes):
    import dataclasses
    return dataclasses.replace(obj, **changes)


def _default_date() -> str:
    epoch = os.environ.get("SOURCE_DATE_EPOCH")
    if epoch and epoch.strip().isdigit():
        return _dt.datetime.fromtimestamp(int(epoch), _dt.timezone.utc).date().isoformat()
    return _dt.date.today().isoformat()


def _board(t: dict) -> Board:
    check_keys(t, BOARD_KEYS, "board")
    for key in ("name", "revision"):
        if key not in t:
            raise ProjectError(f"'{key}' is required", path=f"board.{key}")
    date = t.get("date")
    if date is None:
        date = _default_date()
    elif isinstance(date, _dt.date) and not isinstance(date, _dt.datetime):
        date = date.isoformat()   # TOML allows a bare local date: 2026-11-30
    else:
        date = need_string(date, "board.date")
        try:
            date = _dt.date.fromisoformat(date).isoformat()
        except ValueError:
            raise ProjectError(f"'{date}' is not a date; write YYYY-MM-DD", path="board.date")
    authors = t.get("authors", [])
    if isinstance(authors, str):
        authors = [authors]
    if not isinstance(authors, list):
        raise ProjectError("expected a list of names", path="board.authors")
    authors = tuple(one_line(a, f"board.authors[{k}]") for k, a in enumerate(authors))
    hv = parse_positive(t.get("hazardous_voltage", 60.0), "V", "board.hazardous_voltage")
    return Board(name=one_line(t["name"], "board.name"),
                 revision=one_line(t["revision"], "board.revision"),
                 date=date, authors=authors,
                 notes=need_string(t.get("notes", ""), "board.notes", allow_empty=True),
                 hazardous_voltage_v=hv)


def _pair(value: Any, unit: str, path: str) -> tuple[float, float]:
    if not isinstance(value, list) or len(value) != 2:
        raise ProjectError("expected a list of two values [low, high]", path=path)
    lo = parse_quantity(value[0], unit, f"{path}[0]")
    hi = parse_quantity(value[1], unit, f"{path}[1]")
    if lo > hi:
        raise ProjectError("the range is reversed: the first value must not exceed the second",
                           path=path)
    return lo, hi


def _analysis(t: dict) -> Analysis:
    check_keys(t, ANALYSIS_KEYS, "analysis")
    kw: dict[str, Any] = {}
    if "samples" in t:
        kw["samples"] = need_int(t["samples"], "analysis.samples", 1, MAX_SAMPLES)
    if "seed" in t:
        kw["seed"] = need_int(t["seed"], "analysis.seed", 0, 2**63 - 1)
    if "distribution" in t:
        d = need_string(t["distribution"], "analysis.distribution")
        if d not in ("uniform", "normal"):
            raise ProjectError(f"'{d}' is not a distribution; use 'uniform' or 'normal'",
                               path="analysis.distribution")
        kw["distribution"] = d
    if "temperature" in t:
        lo, hi = _pair(t["temperature"], "degC", "analysis.temperature")
        if lo < -273.15:
            raise ProjectError("below absolute zero", path="analysis.temperature[0]")
        kw["temperature_c"] = (lo, hi)
    if "points_per_decade" in t:
        kw["points_per_decade"] = need_int(t["points_per_decade"],
                                           "analysis.points_per_decade", 5, 1000)
    if "sweep" in t:
        lo, hi = _pair(t["sweep"], "Hz", "analysis.sweep")
        if lo <= 0:
            raise ProjectError("the sweep must start above 0 Hz", path="analysis.sweep[0]")
        check_sweep(lo, hi, "analysis.sweep")
        if hi / lo < 10 ** 0.5:
            raise ProjectError("the sweep must span at least half a decade",
                               path="analysis.sweep")
        kw["sweep_hz"] = (lo, hi)
    if "bom" in t:
        kw["bom"] = one_line(t["bom"], "analysis.bom")
    if "bom_wins" in t:
        kw["bom_wins"] = need_bool(t["bom_wins"], "analysis.bom_wins")
    return Analysis(**kw)


def _impedance(value: Any, keys: tuple[str, ...], path: str) -> dict[str, float]:
    if isinstance(value, (str, int, float)) and not isinstance(value, bool):
        return {"r": parse_positive(value, "ohm", path)}
    t = need_table(value, path)
    check_keys(t, keys, path)
    units = {"r": "ohm", "l": "H", "c": "F"}
    return {k: parse_positive(v, units[k], f"{path}.{k}") for k, v in t.items()}


def _drive(value: Any, path: str) -> Drive:
    t = need_table(value, path)
    check_keys(t, ("step", "pwm", "frequency", "duty"), path)
    if ("step" in t) == ("pwm" in t):
        raise ProjectError("give either 'step' or 'pwm' (with 'frequency' and 'duty')",
                           path=path)
    if "step" in t:
        for k in ("frequency", "duty"):
            if k in t:
                raise ProjectError(f"'{k}' belongs to a pwm drive", path=f"{path}.{k}")
        amp = parse_quantity(t["step"], "V", f"{path}.step")
        if amp == 0:
            raise ProjectError("a step of 0 V tells nothing", path=f"{path}.step")
        return Drive(kind="step", amplitude_v=amp)
    amp = parse_positive(t["pwm"], "V", f"{path}.pwm")
    if "frequency" not in t:
        raise ProjectError("a pwm drive needs 'frequency'", path=f"{path}.frequency")
    freq = parse_positive(t["frequency"], "Hz", f"{path}.frequency")
    duty = parse_percent(t.get("duty", "50%"), f"{path}.duty")
    if not 0 < duty < 1:
        raise ProjectError("duty must lie between 0 % and 100 % (exclusive)",
                           path=f"{path}.duty")
    return Drive(kind="pwm", amplitude_v=amp, frequency_hz=freq, duty=duty)


def _temperature_change(t: dict, path: str) -> tuple[float, float]:
    """A class II part's measured point ``{ at = "85 °C", change = "-8%" }``, checked
    against its EIA-198 code: inside the rated range, away from 25 °C, within the band."""
    key = f"{path}.temperature_change"
    diel = decode_dielectric(t["dielectric"], f"{path}.dielectric") if "dielectric" in t else None
    if diel is None or diel.family != "class-2":
        raise ProjectError("a measured temperature change applies to class II ceramics "
                           "(a dielectric such as \"X7R\"); others take 'tcr'", path=key)
    b = need_table(t["temperature_change"], key)
    check_keys(b, ("at", "change"), key)
    for k in ("at", "change"):
        if k not in b:
            raise ProjectError(f"'{k}' is missing", path=f"{key}.{k}")
    at = parse_quantity(b["at"], "degC", f"{key}.at")
    change = parse_percent(b["change"], f"{key}.change")
    if not diel.rated_low_c <= at <= diel.rated_high_c or at == 25.0:
        raise ProjectError(f"the measured point must lie inside the rated range of {diel.code} "
                           f"({diel.rated_low_c:g} °C to {diel.rated_high_c:g} °C, EIA-198) "
                           "and away from 25 °C, its reference", path=f"{key}.at")
    if not -diel.band_minus <= change <= diel.band_plus:
        raise ProjectError(f"a change of {change * 100:g} % is outside the band of {diel.code} "
                           f"(+{diel.band_plus * 100:g} %/−{diel.band_minus * 100:g} %, EIA-198): "
                           "the part would not meet its code", path=f"{key}.change")
    return at, change


def _part(role: str, t: dict, path: str, analysis: Analysis, bom_rows) -> Part:
    check_keys(t, PART_KEYS, path)
    kind = role[0].upper()
    if bom_rows is not None:
        t = merge_bom(t, bom_rows, path, bom_wins=analysis.bom_wins)
    ref = one_line(t.get("ref", ""), f"{path}.ref", allow_empty=True)
    if "value" not in t:
        raise ProjectError("'value' is missing (give it here, or through [analysis].bom "
                           "with a 'ref')", path=f"{path}.value")
    value = parse_positive(t["value"], PART_UNITS[kind], f"{path}.value")
    tol = (parse_tolerance(t["tolerance"], f"{path}.tolerance") if "tolerance" in t
           else default_tolerance(kind))
    kw: dict[str, Any] = {}
    if "tcr" in t:
        kw["tcr_ppm"] = parse_quantity(t["tcr"], "ppm/K", f"{path}.tcr")
        _check_tcr(kw["tcr_ppm"], analysis.temperature_c, path)
    if "dielectric" in t:
        if kind != "C":
            raise ProjectError("only capacitors have a dielectric", path=f"{path}.dielectric")
        code = need_string(t["dielectric"], f"{path}.dielectric")
        diel = decode_dielectric(code, f"{path}.dielectric")
        check_temperature_range(diel, *analysis.temperature_c, f"{path}.dielectric")
        kw["dielectric"] = code
        if "tcr" not in t and diel.tc_ppm is not None:
            # The code's own coefficient (C0G 0 ± 30 ppm/K, film): the same limit.
            for tc in (diel.tc_ppm - diel.tc_spread_ppm, diel.tc_ppm + diel.tc_spread_ppm):
                _check_tcr(tc, analysis.temperature_c, path,
                           what=f"{diel.code}'s coefficient {tc:+g} ppm/K", key="dielectric")
        if "tcr" in t and diel.family == "class-2":
            raise ProjectError("a class II dielectric has no tcr; its code sets the "
                               "temperature band", path=f"{path}.tcr")
    if "temperature_change" in t:
        kw["temperature_change"] = _temperature_change(t, path)
    if "dc_bias" in t:
        if kind != "C":
            raise ProjectError("only capacitors have a DC-bias loss", path=f"{path}.dc_bias")
        b = need_table(t["dc_bias"], f"{path}.dc_bias")
        check_keys(b, ("at", "change"), f"{path}.dc_bias")
        for k in ("at", "change"):
            if k not in b:
                raise ProjectError(f"'{k}' is missing", path=f"{path}.dc_bias.{k}")
        at = parse_positive(b["at"], "V", f"{path}.dc_bias.at")
        change = parse_percent(b["change"], f"{path}.dc_bias.change")
        if not -1 < change <= 0:
            raise ProjectError("change must be a loss between 0 % and -100 % (exclusive)",
                               path=f"{path}.dc_bias.change")
        kw["dc_bias"] = (at, change)
    if "bias" in t:
        if kind != "C":
            raise ProjectError("'bias' applies to capacitors", path=f"{path}.bias")
        kw["bias_v"] = abs(parse_quantity(t["bias"], "V", f"{path}.bias"))
    if "voltage" in t:
        if kind != "C":
            raise ProjectError("'voltage' (a voltage rating) applies to capacitors; "
                               "resistors take 'power'", path=f"{path}.voltage")
        kw["voltage_rating_v"] = parse_positive(t["voltage"], "V", f"{path}.voltage")
    if "power" in t:
        if kind != "R":
            raise ProjectError("'power' (a power rating) applies to resistors",
                               path=f"{path}.power")
        kw["power_rating_w"] = parse_positive(t["power"], "W", f"{path}.power")
    if "pulse" in t:
        kw.update(_pulse_rating(t["pulse"], kind, f"{path}.pulse"))
    if "model" in t:
        kw["model"] = one_line(t["model"], f"{path}.model", allow_empty=True)
    return Part(role=role, kind=kind, value=value, ref=ref, tol_plus=tol[0],
                tol_minus=tol[1], path=path, **kw)


def _pulse_rating(raw, kind: str, path: str) -> dict:
    """A resistor's pulse rating: energy per pulse ("0.5 J") or peak power ("2 W");
    the unit says which, so a bare number is refused."""
    if kind != "R":
        raise ProjectError("'pulse' (a pulse rating) applies to resistors", path=path)
    text = str(raw).strip()
    unit = "J" if text.endswith("J") else "W" if text.endswith("W") else None
    if unit is None:
        raise ProjectError(f"{raw!r}: state the unit, J for energy per pulse "
                           "(\"0.5 J\") or W for peak power (\"2 W\")", path=path)
    value = parse_positive(raw, unit, path)
    return {"pulse_energy_j": value} if unit == "J" else {"pulse_power_w": value}


def _check_tcr(tcr_ppm: float, temperature_c: tuple[float, float], path: str, *,
               what: str | None = None, key: str = "tcr") -> None:
    """The linear model value·(1 + tcr·(T − 25 °C)) must stay above zero over the
    range; ``what`` and ``key`` name a coefficient the part does not state (its
    dielectric's)."""
    from rcdoc.input.parts import REFERENCE_C
    for t_c in temperature_c:
        factor = 1.0 + tcr_ppm * 1e-6 * (t_c - REFERENCE_C)
        if factor <= 0:
            raise ProjectError(f"{what or f'tcr {tcr_ppm:g} ppm/K'} at {t_c:g} °C "
                               f"(analysis.temperature) scales the value by {factor:.3g}: "
                               "a part value cannot be zero or negative; check the "
                               f"{key} or analysis.temperature", path=f"{path}.{key}")


def _check(t: dict, path: str, stage_metrics: tuple[str, ...],
           metrics: Mapping[str, Any]) -> Check:
    check_keys(t, CHECK_KEYS, path)
    if "metric" not in t:
        raise ProjectError("'metric' is missing", path=f"{path}.metric")
    name = need_string(t["metric"], f"{path}.metric")
    if name not in metrics:
        close = difflib.get_close_matches(name, list(metrics), n=1, cutoff=0.6)
        hint = f"; did you mean '{close[0]}'?" if close else ""
        raise ProjectError(f"unknown metric '{name}'{hint}", path=f"{path}.metric")
    if name not in stage_metrics:
        raise ProjectError(f"metric '{name}' does not apply to this stage kind; it offers: "
                           f"{', '.join(stage_metrics)}", path=f"{path}.metric")
    metric = metrics[name]
    kw: dict[str, Any] = {}
    for bound in ("min", "max"):
        if bound in t:
            kw[bound] = parse_quantity(t[bound], metric.unit, f"{path}.{bound}")
    if "min" not in kw and "max" not in kw:
        raise ProjectError("a check needs 'min', 'max' or both", path=path)
    if "min" in kw and "max" in kw and kw["min"] > kw["max"]:
        raise ProjectError("min is above max", path=path)
    if metric.needs_at:
        if "at" not in t:
            raise ProjectError(f"metric '{name}' needs 'at' (a frequency)", path=f"{path}.at")
        kw["at_hz"] = parse_positive(t["at"], "Hz", f"{path}.at")
    elif "at" in t:
        raise ProjectError(f"metric '{name}' takes no 'at'", path=f"{path}.at")
    if name == "settling":
        if ("within" in t) == ("bits" in t):
            raise ProjectError("settling needs one of 'within' (e.g. \"0.1%\") or 'bits'",
                               path=path)
        if "within" in t:
            w = parse_percent(t["within"], f"{path}.within")
            if not 0 < w < 1:
                raise ProjectError("within must lie between 0 % and 100 %",
                                   path=f"{path}.within")
            kw["within"] = w
        else:
            kw["bits"] = need_int(t["bits"], f"{path}.bits", 1, 32)
        if "full_scale" in t:
            if "bits" not in t:
                raise ProjectError("'full_scale' goes with 'bits' (one LSB = full_scale / "
                                   "2^bits); with 'within' the band is a share of the final "
                                   "value", path=f"{path}.full_scale")
            kw["full_scale"] = parse_positive(t["full_scale"], "V", f"{path}.full_scale")
    else:
        for k in ("within", "bits", "full_scale"):
            if k in t:
                raise ProjectError(f"'{k}' belongs to the settling metric", path=f"{path}.{k}")
    if "yield" in t:
        y = parse_percent(t["yield"], f"{path}.yield")
        if not 0 < y <= 1:
            raise ProjectError("yield must lie above 0 % and at most 100 %",
                               path=f"{path}.yield")
        kw["required_yield"] = y
    return Check(metric=name, path=path, **kw)


def _stage(t: dict, index: int, analysis: Analysis, bom_rows, reg: Registries) -> Stage:
    path = f"stage[{index}]"
    for key in ("id", "title", "kind"):
        if key not in t:
            raise ProjectError(f"'{key}' is required", path=f"{path}.{key}")
    kind_name = need_string(t["kind"], f"{path}.kind")
    if kind_name not in reg.kinds:
        close = difflib.get_close_matches(kind_name, list(reg.kinds), n=1, cutoff=0.5)
        hint = f"; did you mean '{close[0]}'?" if close else \
            f"; known kinds: {', '.join(reg.kinds)}"
        raise ProjectError(f"unknown kind '{kind_name}'{hint}", path=f"{path}.kind")
    kind = reg.kinds[kind_name]
    check_keys(t, STAGE_KEYS + tuple(kind.OPTIONS), path)
    sid = need_string(t["id"], f"{path}.id")
    if not ID_PATTERN.fullmatch(sid) or len(sid) > 64:
        raise ProjectError(f"id '{sid}' must be lower-case letters, digits and '-', "
                           "starting with a letter or digit (at most 64 characters)",
                           path=f"{path}.id")
    title = need_string(t["title"], f"{path}.title")
    if "\n" in title.strip():
        raise ProjectError("the title must be one line", path=f"{path}.title")
    one_line(title, f"{path}.title")
    kw: dict[str, Any] = {}
    if "source" in t:
        src = _impedance(t["source"], ("r", "l"), f"{path}.source")
        kw["source_r"] = src.get("r", 0.0)
        kw["source_l"] = src.get("l", 0.0)
    if "load" in t:
        ld = _impedance(t["load"], ("r", "c"), f"{path}.load")
        kw["load_r"] = ld.get("r")
        kw["load_c"] = ld.get("c")
    if "marks" in t:
        if not isinstance(t["marks"], list):
            raise ProjectError("expected a list of frequencies", path=f"{path}.marks")
        kw["marks_hz"] = tuple(parse_positive(m, "Hz", f"{path}.marks[{k}]")
                               for k, m in enumerate(t["marks"]))
    if "drive" in t:
        kw["drive"] = _drive(t["drive"], f"{path}.drive")
    raw_parts = need_table(t.get("parts", {}), f"{path}.parts")
    if "channels" in t:             # several identical channels (rcdoc.input.channels)
        from rcdoc.input import channels as _channels
        kw["channels"] = _channels.parse(t["channels"], raw_parts, f"{path}.channels")
        raw_parts = _channels.first_channel_refs(raw_parts, kw["channels"], f"{path}.parts",
                                                 f"{path}.channels")
    parts: dict[str, Part] = {}
    for role, pt in raw_parts.items():
        ppath = f"{path}.parts.{role}"
        if not ROLE_PATTERN.fullmatch(role):
            raise ProjectError(f"role '{role}' must start with r, c or l (the part type) "
                               "and hold lower-case letters and digits", path=ppath)
        parts[role] = _part(role, need_table(pt, ppath), ppath, analysis, bom_rows)
    options = kind.parse_options(t, path)
    kind.check_roles(parts, options, f"{path}.parts")
    if kw.get("channels"):
        _channels.check_identical(parts, raw_parts, kw["channels"], f"{path}.channels",
                                  lambda r, tb, p: _part(r, tb, p, analysis, bom_rows))
    stage_metrics = kind.metrics(options, kw.get("drive"))
    checks = tuple(_check(need_table(c, f"{path}.check[{k}]"), f"{path}.check[{k}]",
                          stage_metrics, reg.metrics)
                   for k, c in enumerate(_list_of_tables(t.get("check", []),
                                                         f"{path}.check"), start=1))
    for c in checks:
        if reg.metrics[c.metric].needs_drive and kw.get("drive") is None:
            raise ProjectError(f"metric '{c.metric}' needs a drive: add "
                               "drive = { step = \"...\" } or a pwm drive to the stage",
                               path=c.path)
        if c.metric == "ripple" and kw["drive"].kind != "pwm":
            raise ProjectError("metric 'ripple' needs a pwm drive", path=c.path)
    notes = need_string(t.get("notes", ""), f"{path}.notes", allow_empty=True)
    stage = Stage(index=index, id=sid, title=title.strip(), kind=kind_name, notes=notes,
                  parts=parts, checks=checks, options=options, **kw)
    if hasattr(kind, "check_stage"):     # whole-stage checks (topology with the load)
        kind.check_stage(stage)
    return stage


def _list_of_tables(value: Any, path: str) -> list:
    if isinstance(value, dict):
        return [value]
    if not isinstance(value, list):
        raise ProjectError("write checks as [[stage.check]] tables", path=path)
    return value
