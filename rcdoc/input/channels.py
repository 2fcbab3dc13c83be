"""Channels: one stage standing for several identical copies of its circuit
(three phases, eight converter inputs), analysed once.

``channels = [{ r = "R101", c = "C101" }, { r = "R102", c = "C102" }]`` maps
each role to a designator per channel. The first entry is the stage's own
parts (channel 1): a part without a ``ref`` takes the first entry's
designator, a part with one must name the same. Every further channel's parts
are the stage's part tables with their designators, merged with the bill of
materials like any part, and must come out identical to channel 1's (value,
tolerance, temperature behaviour, DC bias, ratings); otherwise the loader
stops with an error naming both designators.

What it must not do: analyse or draw; project.py builds the parts, this
module reads the list and compares.
"""

from __future__ import annotations

import difflib
from typing import Any, Callable

from rcdoc.errors import ProjectError
from rcdoc.input.quantities import PART_UNITS, format_quantity

# Part fields that make two parts the same part for the analysis (the model
# number is not among them: a second source with the same data is identical).
_SAME = (("value", "value"), ("tol_plus", "tolerance"), ("tol_minus", "tolerance"),
         ("tcr_ppm", "tcr"), ("dielectric", "dielectric"), ("dc_bias", "dc_bias"),
         ("bias_v", "bias"), ("voltage_rating_v", "voltage"), ("power_rating_w", "power"),
         ("pulse_energy_j", "pulse"), ("pulse_power_w", "pulse"))
_UNITS = PART_UNITS


def parse(raw: Any, raw_parts: dict, path: str) -> tuple[dict[str, str], ...]:
    """The ``channels`` list as role -> designator tables, checked against the stage's roles."""
    if not isinstance(raw, list) or not raw:
        raise ProjectError("expected a list of tables, one per channel: "
                           "[{ r = \"R101\", c = \"C101\" }, ...]", path=path)
    if not raw_parts:
        raise ProjectError("channels need the stage's parts (parts.<role> = { ... })",
                           path=path)
    roles = list(raw_parts)
    seen: dict[str, str] = {}
    out = []
    for k, entry in enumerate(raw):
        where = f"{path}[{k}]"
        if not isinstance(entry, dict):
            raise ProjectError("expected a table of role = designator", path=where)
        for role in entry:
            if role not in raw_parts:
                close = difflib.get_close_matches(role, roles, n=1, cutoff=0.6)
                hint = f"; did you mean '{close[0]}'?" if close else \
                    f"; the stage's roles: {', '.join(roles)}"
                raise ProjectError(f"unknown role '{role}'{hint}", path=f"{where}.{role}")
        chan = {}
        for role in roles:
            if role not in entry:
                raise ProjectError(f"no designator for role '{role}' (every channel names "
                                   f"all of: {', '.join(roles)})", path=where)
            ref = entry[role]
            if not isinstance(ref, str) or not ref.strip():
                raise ProjectError("expected a designator, e.g. \"R101\"",
                                   path=f"{where}.{role}")
            ref = ref.strip()
            if ref.upper() in seen:
                raise ProjectError(f"{ref} is already used by {seen[ref.upper()]}",
                                   path=f"{where}.{role}")
            seen[ref.upper()] = f"{where}.{role}"
            chan[role] = ref
        out.append(chan)
    return tuple(out)


def first_channel_refs(raw_parts: dict, channels, parts_path: str, path: str) -> dict:
    """The stage's part tables with channel 1's designators filled in where a part has none."""
    first = channels[0]
    out = {}
    for role, table in raw_parts.items():
        ref = table.get("ref") if isinstance(table, dict) else None
        if not isinstance(table, dict) or ref is None:
            out[role] = dict(table, ref=first[role]) if isinstance(table, dict) else table
            continue
        if not isinstance(ref, str) or ref.strip().upper() != first[role].upper():
            raise ProjectError(f"the first channel is the stage's own parts, but "
                               f"{parts_path}.{role}.ref is {ref!r} and the first channel "
                               f"names {first[role]!r}", path=f"{path}[0].{role}")
        out[role] = table
    return out


def check_identical(parts: dict, raw_parts: dict, channels, path: str,
                    make_part: Callable[[str, dict, str], Any]) -> None:
    """Build every further channel's parts (``make_part(role, table, key_path)``, which
    merges the BOM) and stop at the first that differs from channel 1's."""
    for k, chan in enumerate(channels[1:], start=1):
        for role, ref in chan.items():
            where = f"{path}[{k}].{role}"
            try:
                other = make_part(role, dict(raw_parts[role], ref=ref), where)
            except ProjectError as exc:   # a BOM conflict: say which channel it is
                raise ProjectError(f"{exc.message} ({ref} is channel {k + 1}; channel 1 "
                                   f"is {parts[role].ref})", path=exc.path) from None
            _compare(parts[role], other, where)


def _compare(mine, other, where: str) -> None:
    for attr, key in _SAME:
        a, b = getattr(mine, attr), getattr(other, attr)
        if not _equal(a, b):
            raise ProjectError(f"{other.ref} differs from {mine.ref} in its {key} "
                               f"({_show(attr, b, other.kind)} against "
                               f"{_show(attr, a, mine.kind)}); the channels of a stage "
                               "must be identical parts", path=where)


def _equal(a, b) -> bool:
    if a is None or b is None:
        return a is b
    if isinstance(a, tuple):
        return len(a) == len(b) and all(_equal(x, y) for x, y in zip(a, b))
    if isinstance(a, float):
        return abs(a - b) <= 1e-9 * max(abs(a), abs(b))
    if isinstance(a, str):
        from rcdoc.input.parts import decode_dielectric      # NP0 and C0G are one dielectric
        return decode_dielectric(a, "").code == decode_dielectric(b, "").code
    return a == b


def _show(attr: str, v, kind: str) -> str:
    if v is None:
        return "not stated"
    if attr == "value":
        return format_quantity(v, _UNITS[kind])
    if attr.startswith("tol_"):
        return f"{v * 100:g} %"
    if attr in ("voltage_rating_v", "bias_v"):
        return format_quantity(v, "V")
    if attr in ("power_rating_w", "pulse_power_w"):
        return format_quantity(v, "W")
    if attr == "pulse_energy_j":
        return format_quantity(v, "J")
    return str(v)


def used_refs(stage) -> set[str]:
    """Every channel's designators (they count as analysed)."""
    return {ref for chan in getattr(stage, "channels", ()) for ref in chan.values()}


def channel_line(stage) -> str:
    """"Channels: R101/C101, R102/C102" in the order of the stage's parts; "" without channels."""
    chans = getattr(stage, "channels", ())
    if not chans:
        return ""
    roles = list(stage.parts)
    return "Channels: " + ", ".join("/".join(c[r] for r in roles if r in c) for c in chans)
