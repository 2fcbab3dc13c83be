"""rcdoc.commands.allocator: large arrays reuse the C heap's pages instead of
faulting fresh ones in each time (glibc, Linux); a MALLOC_* choice of the
environment is left alone. Measured by the process's minor page faults
(getrusage), in fresh interpreters that load the module by its path (importing
rcdoc.commands would already have applied it)."""

import json
import os
import subprocess
import sys
from pathlib import Path

import pytest

import rcdoc

MODULE = Path(rcdoc.__file__).parent / "commands" / "allocator.py"

# Temporaries as the analysis makes them: a chunk's 4 000 x 301 arrays and the
# band's concatenation of eight float32 copies (38 MB, above glibc's largest
# dynamic mmap threshold of 32 MB).
SCRIPT = r'''
import importlib.util, json, resource, sys
import numpy as np
done = False
if sys.argv[1] == "keep":
    spec = importlib.util.spec_from_file_location("allocator", sys.argv[2])
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    done = mod.keep_heap()
def faults():
    return resource.getrusage(resource.RUSAGE_SELF).ru_minflt
a = np.random.default_rng(0).random((4000, 301))
before = faults()
for _ in range(20):
    x = np.log(a * a)
    y = np.arctan(x)
    z = (y * 2).astype(np.float32)
    w = np.concatenate([z] * 8)
    del x, y, z, w
print(json.dumps({"done": done, "faults": faults() - before}))
'''


def _run(mode, env=None):
    out = subprocess.run([sys.executable, "-c", SCRIPT, mode, str(MODULE)], capture_output=True,
                         text=True, check=True, env={**os.environ, **(env or {})})
    return json.loads(out.stdout)


@pytest.mark.skipif(not sys.platform.startswith("linux"), reason="glibc's malloc only")
def test_large_arrays_reuse_the_heap():
    plain, kept = _run("plain"), _run("keep")
    assert kept["done"] is True and plain["done"] is False
    # Twenty rounds of some 90 MB of temporaries: tens of thousands of pages faulted in
    # again without (measured 31 000 on 4 KiB pages); with, the heap's pages are reused
    # (2 800). A kernel that maps them in huge pages shows too few faults to compare.
    if plain["faults"] < 5000:
        pytest.skip(f"{plain['faults']} page faults without: huge pages, nothing to compare")
    assert kept["faults"] < plain["faults"] / 5


def test_an_environment_choice_is_left_alone():
    got = _run("keep", {"MALLOC_ARENA_MAX": "2"})
    assert got["done"] is False
