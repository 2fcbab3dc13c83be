"""Node names of a `network` stage are the user's: nothing internal collides with them.

A node the user named "in" used to be merged with the input (a resistor shorted);
a time probe read the node "out" whatever the declared output. Topology mistakes
that make the DC solution undefined are input errors found by the loader.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import signal

from rcdoc.commands import cli
from rcdoc.errors import ProjectError
from tests.boards import analyse_one, load

R, C = 10e3, 10e-9


def two_sections(inp: str, mid: str, out: str, extra: str = "") -> str:
    """Two unbuffered 10k/10n RC sections: inp -r1- mid -r2- out, c1 and c2 to ground."""
    return f"""\
        [[stage]]
        id = "two"
        title = "Two sections"
        kind = "network"
        input = "{inp}"
        output = "{out}"
        {extra}
        parts.r1 = {{ value = "10k", tolerance = "0.1%" }}
        parts.c1 = {{ value = "10n", tolerance = "0.1%" }}
        parts.r2 = {{ value = "10k", tolerance = "0.1%" }}
        parts.c2 = {{ value = "10n", tolerance = "0.1%" }}
        elements = [ {{ part = "r1", between = ["{inp}", "{mid}"] }},
                     {{ part = "c1", between = ["{mid}", "0"] }},
                     {{ part = "r2", between = ["{mid}", "{out}"] }},
                     {{ part = "c2", between = ["{out}", "0"] }} ]
        [[stage.check]]
        metric = "corner"
        max = "1 MHz"
        """


def reference_corner_hz() -> float:
    # Textbook transfer function of two unbuffered RC sections (nodal analysis):
    # H(s) = 1 / (R²C²s² + 3RCs + 1); its −3 dB point found with scipy.signal.freqs.
    b, a = [1.0], [(R * C) ** 2, 3 * R * C, 1.0]
    w = np.logspace(2, 5, 200001)
    _, h = signal.freqs(b, a, worN=w)
    k = np.argmax(np.abs(h) < 1 / np.sqrt(2))     # the half-power point
    return w[k] / (2 * np.pi)


def corner(result) -> float:
    return next(m.nominal for m in result.metrics if m.name == "corner")


def test_reference_is_596_hz_not_the_single_section_1591():
    # Closed forms: 1/(2πRC) = 1591.5 Hz for one section; the two-section
    # −3 dB point is x = ωRC with x⁴ + 7x² − 1 = 0, x = 0.3743 → 595.7 Hz.
    assert reference_corner_hz() == pytest.approx(595.7, abs=0.3)
    assert 1 / (2 * np.pi * R * C) == pytest.approx(1591.5, abs=0.1)


@pytest.mark.parametrize("inp,mid,out", [("vin", "in", "out"),      # the board
                                         ("a", "out", "b"),         # "out" not the output
                                         ("in", "mid", "out"),
                                         ("src", "src_l", "n_1")])  # old internal names
def test_user_node_names_are_not_merged(tmp_path, inp, mid, out):
    res = analyse_one(tmp_path, two_sections(inp, mid, out, 'source = { r = "1 mohm" }'))
    assert corner(res) == pytest.approx(reference_corner_hz(), rel=2e-3)


@pytest.mark.slow
def test_step_drive_follows_the_declared_output(tmp_path):
    # Output named "vout" with a drive: used to end in exit 2 after the analysis.
    # Settling of the step to 1 %: compared with scipy.signal.step of the same H(s).
    res = analyse_one(tmp_path, two_sections("vin", "in", "vout", 'drive = { step = "1 V" }')
                      + '[[stage.check]]\nmetric = "settling"\nwithin = "1%"\nmax = "1 s"\n')
    t = np.linspace(0, 5e-3, 200001)
    _, y = signal.step(([1.0], [(R * C) ** 2, 3 * R * C, 1.0]), T=t)
    t_settle = t[np.nonzero(np.abs(y - 1) > 0.01)[0][-1] + 1]
    settling = next(m.nominal for m in res.metrics if m.name == "settling")
    assert settling == pytest.approx(t_settle, rel=1e-2)


@pytest.mark.slow
def test_check_command_with_vout_and_drive(tmp_path, capsys):
    path = tmp_path / "board.toml"
    path.write_text('[board]\nname = "T"\nrevision = "A"\ndate = "2026-01-01"\n'
                    '[analysis]\nsamples = 20\n'
                    + "\n".join(line.strip() for line in two_sections(
                        "vin", "in", "vout", 'drive = { pwm = "3.3 V", frequency = "1 kHz" }'
                    ).splitlines()), encoding="utf-8")
    assert cli.main(["check", str(path), "--quiet", "--jobs", "1"]) == 0, capsys.readouterr().err


@pytest.mark.parametrize("name", ["in\n", "ü", "a b", "~source", "v:r1", "x" * 33, ""])
def test_odd_node_names_are_refused_by_the_loader(tmp_path, name):
    # Names outside [A-Za-z0-9_]{1,32} (matched in full: a trailing newline is
    # not a name), the internal "~source" included, are input errors.
    text = two_sections("vin", "mid", "out").replace('"mid"', '"' + name.replace("\n", "\\n") + '"')
    with pytest.raises(ProjectError) as err:
        load(tmp_path, text)
    assert err.value.path.startswith("stage[1].elements[")


@pytest.mark.parametrize("elements,where,words", [
    # c1–c2 capacitive divider: node "mid" reaches nothing through R or L.
    ('[{ part = "c1", between = ["in", "mid"] }, { part = "c2", between = ["mid", "0"] },'
     ' { part = "r1", between = ["mid", "out"] }, { part = "c3", between = ["out", "0"] }]',
     "elements[1].between", ["'mid'", "no DC path"]),
    # Two inductors in parallel: a loop of inductors only.
    ('[{ part = "r1", between = ["in", "out"] }, { part = "l1", between = ["out", "0"] },'
     ' { part = "l2", between = ["out", "0"] }]',
     "elements[3].part", ["l2", "loop of inductors"]),
])
def test_undefined_dc_topology_is_found_by_the_loader(tmp_path, elements, where, words):
    # Common netlist practice: a node without a DC path, or an inductor-only loop,
    # leaves the DC solution singular (used to end in a numpy traceback).
    roles = {"r1": "1k", "c1": "10n", "c2": "10n", "c3": "10n", "l1": "1 mH", "l2": "1 mH"}
    used = [r for r in roles if f'"{r}"' in elements]
    parts = "\n".join(f'parts.{r} = {{ value = "{roles[r]}" }}' for r in used)
    text = (f'[[stage]]\nid = "n"\ntitle = "N"\nkind = "network"\ninput = "in"\n'
            f'output = "out"\n{parts}\nelements = {elements}\n')
    with pytest.raises(ProjectError) as err:
        load(tmp_path, text)
    assert err.value.path == f"stage[1].{where}"
    for w in words:
        assert w in err.value.message
