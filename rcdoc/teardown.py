"""Whether this process ends without the interpreter's teardown, and the objects
it then keeps to the end instead of freeing them one by one on the way.

What it is for: the ``rcdoc`` command ends its process as soon as its output is
out, without the interpreter's teardown (rcdoc.commands.cli.entry and
``_leave``: the memory goes back to the system at once). An object that would
only be freed on the way there costs its freeing and nothing else: the joined
note's PDF objects (rcdoc.note.join) took 15 to 20 ms to free after a 156-page
join, at the end of a one-value rebuild whose every step is on its way to the
output. Such an object is handed to ``keep``: where ``skip`` was called (the
command), the last one handed is kept until the process ends (4 MiB for that
note); elsewhere (rcdoc used from Python, the tests) nothing is kept and it is
freed as usual.

What it must not do: keep anything where the process tears down as usual, or
more than the last object handed over.
"""

from __future__ import annotations

__all__ = ["skip", "keep"]

_KEPT: list | None = None       # a list once the process is known to end without teardown


def skip() -> None:
    """Say this process ends without the interpreter's teardown (the ``rcdoc``
    command, as it starts)."""
    global _KEPT
    if _KEPT is None:
        _KEPT = []


def keep(obj) -> bool:
    """Keep ``obj`` until the process ends, in place of the one kept before
    (freed now), where the process ends without teardown; False elsewhere."""
    if _KEPT is None:
        return False
    _KEPT[:] = [obj]
    return True
