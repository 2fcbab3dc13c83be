"""Fast loading of the font that schematic text is outlined with.

schemdraw outlines text through ziafont, and ziafont, while it reads a font's
positioning (GPOS) and coverage tables, defines a new namedtuple class for
every anchor and pair record it meets: about 8000 class definitions for
DejaVu Sans, 1.5 s of CPU in every process that draws a schematic (each
worker of a build, and the main process of a one-stage rebuild). Those
classes are all alike (same name, same fields), so ``speed_up`` hands ziafont
one class per (name, fields), made once and reused. The records, the parsed
font and so every SVG byte stay the same (``tests/test_schematic.py``
compares the outlines with and without it in fresh processes).
"""

from __future__ import annotations

import collections
import functools

__all__ = ["speed_up"]

# ziafont's modules that define namedtuple classes while a font is read.
_READERS = ("ziafont.gpos", "ziafont.tables", "ziafont.font")


@functools.lru_cache(maxsize=None)
def _record_class(name: str, fields: tuple[str, ...]):
    return collections.namedtuple(name, fields)


def _namedtuple(typename, field_names, **options):
    # Anything but the plain (name, field list) form goes to the real factory.
    if options or not isinstance(field_names, (list, tuple)):
        return collections.namedtuple(typename, field_names, **options)
    return _record_class(typename, tuple(field_names))


def speed_up() -> None:
    """Point ziafont's font readers at the reusing factory; call before a font loads.
    Idempotent; does nothing where ziafont is missing."""
    import importlib
    for name in _READERS:
        try:
            module = importlib.import_module(name)
        except ImportError:
            return
        if getattr(module, "namedtuple", None) is collections.namedtuple:
            module.namedtuple = _namedtuple
