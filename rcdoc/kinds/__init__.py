"""Stage kinds: one small module each, found automatically.

A kind module defines ``NAME`` and the functions listed in
``rcdoc.kinds.base.KindModule``; dropping a new module into this package is
all it takes to add a kind (see DEVELOPERS.md).
"""

from __future__ import annotations

import importlib
import pkgutil

KINDS: dict = {}

for _info in sorted(pkgutil.iter_modules(__path__), key=lambda m: m.name):
    if _info.name.startswith("_") or _info.name == "base":
        continue
    _mod = importlib.import_module(f"{__name__}.{_info.name}")
    if hasattr(_mod, "NAME"):
        KINDS[_mod.NAME] = _mod
