"""Bench: the instructions the example note's render takes, this tree against a git
revision, counted by valgrind's cachegrind.

What it is for: CPU seconds of a render move by several percent between runs
of the same code on a shared machine, more than most single changes to the
renderer save; an instruction count moves by a few tenths of a percent. It is
not a time (a zlib level or a cache miss costs differently from a Python
bytecode), so a change that it shows is confirmed in seconds by section e of
bench/floor.py; but it says at once whether a change to the renderer's short
paths helps, and by how much.

For each tree (REV exported with `git archive`, and this one), two fresh
processes under cachegrind, PYTHONHASHSEED=0: one loads the example board and
analyses and draws it (rcdoc.commands.build.analyse_project, serial), the
other does the same and then writes the note (write_outputs). The render's
instructions are the difference. Printed: both trees' counts and the ratio.
Four processes of about a minute each; two run at once.

With --floor, also the floor of bench/floor.py section e (the PNG images of
this tree's note over as many pages of minimal HTML, rendered by weasyprint),
counted the same way (two more processes: weasyprint imported, then also the
floor rendered), and this tree's render against it: a ratio that, unlike
section e's CPU seconds, does not move with the machine's state (it is not a
time either: the floor is mostly C, decoding and packing images).

Needs valgrind (Debian's valgrind package); writes only into a temporary folder.
Run:  python bench/instructions.py [--against REV] [--samples N] [--board FILE] [--floor]
"""

from __future__ import annotations

import argparse
import os
import re
import shutil
import subprocess
import sys
import tempfile
from concurrent.futures import ThreadPoolExecutor
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
EXAMPLE = ROOT / "projects" / "greenhouse-controller.toml"

# argv: tree, board, samples, out folder ("" to stop after the analysis).
SCRIPT = r'''
import sys
from pathlib import Path
sys.path.insert(0, sys.argv[1])
from rcdoc.commands.build import analyse_project, write_outputs
from rcdoc.commands.collector import tune
from rcdoc.kinds import load_project
tune()
project = load_project(sys.argv[2], samples=int(sys.argv[3]))
outcome = analyse_project(project, jobs=1, draw=True)
if sys.argv[4]:
    write_outputs(outcome, Path(sys.argv[4]))
'''


# argv: bench folder, floor folder (its floor.html), "1" to render it. The same
# garbage collector settings as the note's render (rcdoc.commands.collector.tune).
FLOOR = r'''
import sys
from pathlib import Path
sys.path.insert(0, sys.argv[1])
import floor as bench
from rcdoc.commands.collector import tune
import weasyprint
tune()
folder = Path(sys.argv[2])
if sys.argv[3] == "1":
    bench.render_floor((folder / "floor.html").read_text(encoding="utf-8"), folder)
'''


def floor_folder(board: Path, samples: int, into: Path) -> Path:
    """The floor's HTML and images, from this tree's note of ``board`` (bench/floor.py)."""
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    code = (SCRIPT + "\nimport sys; sys.path.insert(0, sys.argv[5]); import floor as bench\n"
            "html, _ = bench.floor_html(next(Path(sys.argv[4]).glob('*.pdf')), Path(sys.argv[6]))\n"
            "(Path(sys.argv[6]) / 'floor.html').write_text(html, encoding='utf-8')\n")
    subprocess.run([sys.executable, "-c", code, str(ROOT), str(board), str(samples),
                    str(into / "note"), str(ROOT / "bench"), str(into / "floor")],
                   check=True, capture_output=True, env=env, cwd=into)
    return into / "floor"


def export(rev: str, into: Path) -> Path:
    """The rcdoc package and templates of git revision ``rev``, in ``into``."""
    archive = subprocess.run(["git", "-C", str(ROOT), "archive", rev, "rcdoc", "templates"],
                             check=True, capture_output=True).stdout
    into.mkdir(parents=True, exist_ok=True)
    subprocess.run(["tar", "-x", "-C", str(into)], input=archive, check=True)
    return into


def count(tree: Path, board: Path, samples: int, out: str, script: str = SCRIPT,
          args: tuple = ()) -> int:
    """Instructions of one process (cachegrind's "I refs")."""
    env = dict(os.environ, PYTHONHASHSEED="0", PYTHONPATH=str(tree))
    argv = args or (str(tree), str(board), str(samples), out)
    proc = subprocess.run(
        ["valgrind", "--tool=cachegrind", "--cache-sim=no", "--cachegrind-out-file=/dev/null",
         sys.executable, "-c", script, *argv],
        capture_output=True, text=True, env=env, cwd=tree)
    found = re.search(r"I\s+refs:\s+([\d,]+)", proc.stderr)
    if proc.returncode != 0 or found is None:
        raise SystemExit(f"the run under cachegrind failed:\n{proc.stderr[-3000:]}")
    return int(found.group(1).replace(",", ""))


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--against", default="HEAD", help="git revision to compare with (HEAD)")
    ap.add_argument("--samples", type=int, default=200)
    ap.add_argument("--board", default=str(EXAMPLE))
    ap.add_argument("--floor", action="store_true", help="also count the floor of section e")
    args = ap.parse_args(argv)
    if shutil.which("valgrind") is None:
        raise SystemExit("valgrind is not installed (Debian: apt-get install valgrind)")
    board = Path(args.board).resolve()
    with tempfile.TemporaryDirectory(prefix="rcdoc-instructions-") as tmp:
        trees = {args.against: export(args.against, Path(tmp) / "rev"), "this tree": ROOT}
        # Per tree: the analysis alone ("" for no output folder), then with the render.
        jobs = [(name, tree, out) for i, (name, tree) in enumerate(trees.items())
                for out in ("", str(Path(tmp) / f"out-{i}"))]
        with ThreadPoolExecutor(max_workers=2) as pool:
            counts = list(pool.map(lambda job: count(job[1], board, args.samples, job[2]), jobs))
            if args.floor:
                folder = floor_folder(board, args.samples, Path(tmp))
                floor_runs = list(pool.map(
                    lambda flag: count(ROOT, board, args.samples, "", FLOOR,
                                       (str(ROOT / "bench"), str(folder), flag)), ("0", "1")))
    render = {}
    for (name, _, out), n in zip(jobs, counts):
        render[name] = render.get(name, 0) + (n if out else -n)
    print(f"{'tree':<24}{'render, instructions':>24}")
    for name, n in render.items():
        print(f"{name:<24}{n / 1e9:>22.3f} G")
    rev, here = render[args.against], render["this tree"]
    print(f"{args.against} / this tree: {rev / here:.3f}")
    if args.floor:
        floor = floor_runs[1] - floor_runs[0]
        print(f"{'floor (section e)':<24}{floor / 1e9:>22.3f} G")
        print(f"this tree / floor: {here / floor:.3f}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
