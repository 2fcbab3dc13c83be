"""Commands: the command line and the build, check, diff and init commands.

Importing the commands keeps the numerical libraries to one thread each
(unless the environment already says otherwise), before numpy is loaded:
rcdoc runs in parallel through its ``--jobs`` worker processes, and its
linear algebra is many tiny matrices (3×3 solves batched over samples), where
BLAS threads only wait for each other. With the default two threads on two
cores, a 200 000-sample check took about a fifth more CPU for the same wall
time, and each worker of ``--jobs 2`` competed with the other for both cores.
It also keeps large arrays on the C heap between uses (rcdoc.commands.allocator).
"""

import os as _os

for _name in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS",
              "BLIS_NUM_THREADS", "VECLIB_MAXIMUM_THREADS"):
    _os.environ.setdefault(_name, "1")

from rcdoc.commands.allocator import keep_heap as _keep_heap  # noqa: E402

_keep_heap()
