"""One stage of the example board at a time, its quantities scaled by up to nine
decades, through ``rcdoc build``: a note, or one line naming the file (status 2),
never a traceback.

Where tests/test_example_mutations.py runs ``check``, this draws and renders
too, so the scaled values reach the charts, the schematic and the tables:
1e-9 to 1e9 times a corner, a current, a time or a voltage. A hunt of some
1 500 such builds found no traceback; it found one message without its part's
key path (a dielectric's own coefficient taking a capacitor's value below zero
at an absurd temperature, now refused at ``parts.c.dielectric``: a case of
tests/test_errors.py). Common practice for command-line tools, as the
input-mistake rules of tests/test_errors.py.

CI builds the same documents every time; RCDOC_FUZZ_EXAMPLES=300 builds that many
fresh ones for a deliberate hunt.
"""

from __future__ import annotations

import os
import random
import re
from pathlib import Path

import pytest

from rcdoc.commands import cli

pytestmark = pytest.mark.slow       # renders notes

EXAMPLE = Path(__file__).resolve().parents[1] / "projects" / "greenhouse-controller.toml"
_HUNT = int(os.environ.get("RCDOC_FUZZ_EXAMPLES", "0"))
DOCUMENTS = _HUNT or 16
SEED = random.SystemRandom().randrange(1 << 30) if _HUNT else 20261204
# A quantity written as a string: a number and its unit ("2k2" has no space and
# is left alone, as are names, dates and ids).
_QUANTITY = re.compile(r'"([0-9.]+(?:e-?[0-9]+)?)(\s*[a-zA-Zµμ°%Ω/][^"]*)"')
_SKIP = ("date", "id", "title", "ref", "name", "revision")


def scaled(text: str, rng: random.Random) -> str:
    """``text`` with one to three of its quantities multiplied by 10^u, u uniform
    in [-9, 9]."""
    lines = text.splitlines()
    places = [(i, m) for i, line in enumerate(lines) if "=" in line
              and not line.lstrip().startswith(_SKIP) for m in _QUANTITY.finditer(line)]
    for _ in range(rng.choice([1, 2, 3])):
        i, m = rng.choice(places)
        if lines[i][m.start():m.end()] != m[0]:      # this line changed already
            continue
        factor = 10 ** rng.uniform(-9, 9)
        lines[i] = f'{lines[i][:m.start()]}"{float(m[1]) * factor:.4g}{m[2]}"{lines[i][m.end():]}'
    return "\n".join(lines) + "\n"


def test_scaled_stages_build_or_end_in_one_line(tmp_path, capsys):
    rng = random.Random(SEED)
    head, *stages = re.split(r"(?m)^(?=\[\[stage\]\]\s*$)", EXAMPLE.read_text(encoding="utf-8"))
    head = re.sub(r"(?m)^samples = \d+", "samples = 30", head)
    path = tmp_path / "board.toml"
    outcomes = set()
    for n in range(DOCUMENTS):
        text = scaled(head + stages[n % len(stages)], rng)
        path.write_text(text, encoding="utf-8")
        status = cli.main(["build", str(path), "--jobs", "1", "-o", str(tmp_path / "out"),
                           "--quiet"])
        out, err = capsys.readouterr()
        where = f"document {n} (seed {SEED}):\n{text}"
        assert status in (0, 1, 2), where
        assert "Traceback" not in err and out == "", where + err
        if status == 2:
            lines = err.strip().splitlines()
            assert len(lines) == 1 and "board.toml" in lines[0], where + err
        else:
            assert err == "", where + err
            assert (tmp_path / "out" / "board.pdf").stat().st_size > 10_000, where
        outcomes.add(status)
    # The scaled values reach the end: some boards are built (pass or fail).
    assert outcomes & {0, 1}, outcomes
