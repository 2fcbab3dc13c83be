"""The commands keep the numerical libraries to one thread each, unless told otherwise.

Why (common practice for process-parallel numerical code): parallel work comes
from the ``--jobs`` worker processes; BLAS threads inside each only compete
for the same cores. The variables must be set before numpy loads, so each
case runs in a fresh process.
"""

import json
import os
import subprocess
import sys

import pytest

NAMES = ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS")


def _environment_seen(preset: dict) -> dict:
    env = {k: v for k, v in os.environ.items() if k not in NAMES}
    env.update(preset)
    code = ("import json, os, sys; import rcdoc.commands.cli; import numpy; "
            f"print(json.dumps({{k: os.environ.get(k) for k in {NAMES!r}}}))")
    out = subprocess.run([sys.executable, "-c", code], env=env, capture_output=True,
                         text=True, check=True)
    return json.loads(out.stdout)


def test_commands_set_one_thread_before_numpy_loads():
    assert _environment_seen({}) == {k: "1" for k in NAMES}


@pytest.mark.parametrize("name", NAMES)
def test_a_users_own_setting_is_kept(name):
    seen = _environment_seen({name: "3"})
    assert seen[name] == "3" and all(v == "1" for k, v in seen.items() if k != name)


def test_numpy_is_not_loaded_before_the_setting():
    # The setting only counts if OpenBLAS reads it at load: importing the
    # commands package must not have imported numpy before it ran.
    code = ("import sys; import rcdoc, rcdoc.commands; print('numpy' in sys.modules)")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "False"
