"""The example board's file with its values changed at random, run through
``rcdoc check``: every document ends in a verdict (status 0 or 1) or in one
line naming the file (status 2), never in a traceback.

Where test_loader_fuzz builds documents from the format's keys, this starts
from a whole, valid board and changes one to three of its values (or drops or
repeats a line), so the mutated value reaches the analysis: a 1e300 V snubber,
a 5e-324 ohm source, a -0.0 tolerance and a 7000 dB op-amp were each a
traceback before these were refused or handled. The check is common practice
for command-line tools (the input-mistake rules in tests/test_errors.py).

CI runs the same documents every time; RCDOC_FUZZ_EXAMPLES=1000 runs that many
fresh ones for a deliberate hunt.
"""

from __future__ import annotations

import os
import random
import re
from pathlib import Path

import pytest

from rcdoc.commands import cli

pytestmark = pytest.mark.slow

EXAMPLE = Path(__file__).resolve().parents[1] / "projects" / "greenhouse-controller.toml"
_HUNT = int(os.environ.get("RCDOC_FUZZ_EXAMPLES", "0"))
DOCUMENTS = _HUNT or 150
SEED = random.SystemRandom().randrange(1 << 30) if _HUNT else 20261204

# Values right, nearly right and nonsense; TOML literals, written in place of a value.
VALUES = [
    "-1", "0", "-0.0", "3", "0.5", "1e300", "1e308", "5e-324", "-1e-300", "nan", "inf",
    "2147483648", "true", '""', '"abc"', "[]", "{}", '[1, "a"]', "{ a = 1 }",
    '"' + "x" * 300 + '"', '"Ω"', '"nan"', '"inf ohm"', '"1e400 ohm"', '"1e300 ohm"',
    '"1e-300 F"', '"1e30 ohm"', '"1e-30 F"', '"1e-12 ohm"', '"1e15 F"', '"0 F"', '"1 kohm"',
    '"100 nF"', '"1 uF"', '"10 %"', '"-1 %"', '"150 %"', '"5 Hz"', '"0 Hz"', '"300 kHz"',
    '"1 THz"', '"1e300 Hz"', '"1 ms"', '"1e-15 s"', '"2 mV"', '"-5 V"', '"1e9 V"',
    '"9999 dB"', '"-9999 dB"', '"-40 degC"', '"1e6 degC"', '"-300 degC"', '"1e9 ppm/K"',
    '"x7r"', '"C0G"', '"e24"',
]
# Factors for a quantity kept in its own unit: values decades apart, at the ends
# of what a file may state (1e-30 to 1e30 in the base unit) and just beyond.
FACTORS = [0, -1, 1e-9, 1e-6, 1e-3, 0.1, 0.99, 1.01, 10, 1e3, 1e6, 1e9, 1e-40, 1e40]
_KEY_VALUE = re.compile(r'^\s*[\w."-]+\s*=\s*\S')
_INLINE = re.compile(r'(\w+)\s*=\s*("[^"]*"|[^,}\s]+)')
_QUANTITY = re.compile(r'^"([0-9.]+(?:e-?[0-9]+)?)(\s*[^0-9"][^"]*)"$')


def _new_value(old: str, rng: random.Random) -> str:
    """Half the time the same quantity scaled (it parses, and reaches the
    analysis), else any of VALUES."""
    m = _QUANTITY.match(old.strip())
    if m and rng.random() < 0.5:
        return f'"{float(m[1]) * rng.choice(FACTORS):.6g}{m[2]}"'
    return rng.choice(VALUES)


def mutated(lines: list[str], rng: random.Random) -> str:
    lines = list(lines)
    # Single-line values only: a changed first line of a multi-line array or
    # string leaves the rest of it as broken TOML.
    places = [i for i, line in enumerate(lines)
              if _KEY_VALUE.match(line) and not line.rstrip().endswith(("[", '"""', "{"))]
    for _ in range(rng.choice([1, 1, 2, 3])):
        i = rng.choice(places)
        if "=" not in lines[i]:            # emptied by an earlier change of this document
            continue
        roll = rng.random()
        if roll < 0.9:
            inner = list(_INLINE.finditer(lines[i])) if "{" in lines[i] else []
            if inner and rng.random() < 0.7:          # a value inside an inline table
                m = rng.choice(inner)
                lines[i] = lines[i][:m.start(2)] + _new_value(m[2], rng) + lines[i][m.end(2):]
            else:
                key, old = lines[i].split("=", 1)
                lines[i] = key + "= " + _new_value(old, rng)
        else:
            lines[i] = ""
    return "\n".join(lines) + "\n"


def test_mutated_example_ends_in_a_verdict_or_one_line(tmp_path, capsys):
    rng = random.Random(SEED)
    source = EXAMPLE.read_text(encoding="utf-8").splitlines()
    path = tmp_path / "board.toml"
    outcomes = set()
    for n in range(DOCUMENTS):
        text = mutated(source, rng)
        path.write_text(text, encoding="utf-8")
        try:
            status = cli.main(["check", str(path), "--samples", "40", "--jobs", "1",
                               "-o", str(tmp_path / "out"), "--quiet"])
        except SystemExit as exc:          # argparse's own exits
            status = exc.code
        out, err = capsys.readouterr()
        where = f"document {n} (seed {SEED}):\n{text}"
        assert status in (0, 1, 2), where
        assert "Traceback" not in err, where + err
        if status == 2:
            lines = err.strip().splitlines()
            assert len(lines) == 1 and "board.toml" in lines[0], where + err
        outcomes.add(status)
    # The mutations reach both ends: some documents are refused, some analysed.
    assert 2 in outcomes and outcomes & {0, 1}
