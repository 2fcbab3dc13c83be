"""Bench: start-up CPU, the imports a build pays before its first piece of work.

Each set below runs in a fresh Python process (``python -c``); its CPU seconds
(utime + stime, resource.getrusage(RUSAGE_CHILDREN) around the one child) are
the best of k repeats, the sets interleaved. With ``--against FOLDER`` (another
checkout of rcdoc) every set also runs from that folder, interleaved with this
one, and the ratio is printed: before/after of a change in one run.

server   what the worker pool's fork server imports for a build
         (rcdoc.commands.workers._pool_context: spawnguard, build, preload)
main     what the command itself imports in a one-value rebuild: the CLI, the
         build, the renderer check (require_renderer), the note's page,
         assembly, join and PDF modules
check    what `rcdoc check` imports (the CLI, the build, the kinds)
python   the interpreter's own start (site), for reference

Run (``python -m compileall -q rcdoc`` first where PYTHONDONTWRITEBYTECODE is set):
    python bench/imports.py [--repeats K] [--against FOLDER] [sets...]
"""

from __future__ import annotations

import argparse
import math
import os
import resource
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]

SETS = {
    "server": "import multiprocessing.forkserver\n"
              "import rcdoc.commands.spawnguard, rcdoc.commands.build, rcdoc.commands.preload",
    "main": "import rcdoc.commands.cli, rcdoc.commands.build, rcdoc.commands.workers\n"
            "from rcdoc.commands.renderer import require_renderer\n"
            "require_renderer()\n"
            "import rcdoc.note.assemble, rcdoc.note.page, rcdoc.note.pdf, rcdoc.note.join\n"
            "import rcdoc.note.summary, rcdoc.note.partslist",
    "check": "import rcdoc.commands.cli, rcdoc.commands.build, rcdoc.commands.workers\n"
             "import rcdoc.kinds, rcdoc.note.summary",
    "python": "pass",
}


def cpu_of(code: str, folder: Path) -> float:
    """CPU seconds of a fresh ``python -c code`` with ``folder`` on its path."""
    env = dict(os.environ, PYTHONPATH=str(folder))
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    proc = subprocess.run([sys.executable, "-c", code], env=env, cwd=folder,
                          stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, text=True)
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    if proc.returncode != 0:
        raise SystemExit(f"{code!r} failed in {folder}:\n{proc.stderr[-2000:]}")
    return (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("sets", nargs="*", default=list(SETS), metavar="SET")
    parser.add_argument("--repeats", type=int, default=7)
    parser.add_argument("--against", type=Path, help="another rcdoc checkout: before/after")
    args = parser.parse_args(argv)
    folders = {"this": ROOT}
    if args.against is not None:
        folders["against"] = args.against.resolve()
    best = {(s, f): math.inf for s in args.sets for f in folders}
    for _ in range(args.repeats):
        for s in args.sets:
            for f, folder in folders.items():
                best[s, f] = min(best[s, f], cpu_of(SETS[s], folder))
    for s in args.sets:
        line = f"{s:8s} {best[s, 'this']:6.3f} s CPU"
        if "against" in folders:
            a = best[s, "against"]
            line += (f"   against {a:6.3f} s: {a - best[s, 'this']:+.3f} s saved, "
                     f"ratio {best[s, 'this'] / a:.3f}")
        print(line, flush=True)
    return 0


if __name__ == "__main__":
    sys.exit(main())
