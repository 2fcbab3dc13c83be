"""The per-stage build cache: a stage's results and rendered note blocks, by hash.

What it is for: let a rebuild after one value change redo only the stage that
changed. Each entry holds one stage's StageResult (from which the JSON
summary entries are made), its note context (tables and SVG figures) and
its rendered part of the note's PDF (rcdoc.note.assemble; that part carries its
own key, which adds the templates, the date and the renderer's versions),
filed under a key that hashes everything they depend on: every field of the
stage, the analysis settings, the board, rcdoc's version and the source of
every rcdoc module (so any code change, including the stage kind's module,
invalidates the entry), and the versions of the libraries that shape the
numbers and the SVG (numpy, scipy, matplotlib, schemdraw).

Where: ``<output folder>/.rcdoc-cache/<project stem>/<key>.pickle``. Entries
are written atomically; an entry that cannot be read, or whose stored key
differs, is ignored and rebuilt. After a build, entries of that project that
the build did not use are removed, so the folder holds one entry per stage,
and one more, ``note-parts.pickle``, for the parts of the note that span all
stages but change rarely (the appendix and the page numbers).

What it must not do: analyse, draw, or decide what a stage needs; it stores
and finds. The entries are pickles, read back by an unpickler that builds
rcdoc's own data classes, numpy arrays and plain values and nothing else
(``_EntryUnpickler``): an entry that names anything else (a function to call,
which is how a forged pickle runs code) is refused and rebuilt. The folder is
still a private scratch area of the build: an entry holds results as computed,
so one from an untrusted source (a pull request that commits it) could hold
made-up verdicts. Never share it or take it from such a source.
"""

from __future__ import annotations

import dataclasses
import enum
import hashlib
import json
import math
import pickle
from functools import lru_cache
from pathlib import Path
from typing import Any

import numpy as np

from rcdoc import __version__
from rcdoc.files import remove_stale_temps, write_atomic

__all__ = ["CACHE_DIR_NAME", "StageCache", "stage_key", "code_fingerprint", "canonical"]

#: Folder name of the cache inside the output folder (listed in .gitignore).
CACHE_DIR_NAME = ".rcdoc-cache"
# Bump when the layout of an entry changes.
_FORMAT = "rcdoc-stage-cache-1"
# The entry holding the note's appendix and page-number parts (not a stage's key).
_NOTE_PARTS = "note-parts"


def canonical(obj: Any) -> Any:
    """A JSON-able, order-stable image of ``obj`` that two equal inputs share.

    Floats are written exactly (``float.hex``) so that 1e-9 and 1.0000000001e-9
    never collide; dict keys are sorted; dataclasses carry their class name.
    """
    if obj is None or isinstance(obj, (bool, str)):
        return obj
    if isinstance(obj, (int, np.integer)):
        return int(obj)
    if isinstance(obj, (float, np.floating)):
        x = float(obj)
        return {"f": x.hex()} if math.isfinite(x) else {"f": repr(x)}
    if isinstance(obj, complex):
        return {"c": [float(obj.real).hex(), float(obj.imag).hex()]}
    if dataclasses.is_dataclass(obj) and not isinstance(obj, type):
        return {"dc": type(obj).__qualname__,
                "fields": [[f.name, canonical(getattr(obj, f.name))]
                           for f in dataclasses.fields(obj)]}
    if isinstance(obj, dict):
        items = [[canonical(k), canonical(v)] for k, v in obj.items()]
        return {"dict": sorted(items, key=lambda kv: json.dumps(kv[0], sort_keys=True))}
    if isinstance(obj, (list, tuple)):
        return [canonical(v) for v in obj]
    if isinstance(obj, (set, frozenset)):
        return {"set": sorted((canonical(v) for v in obj), key=lambda v: json.dumps(v, sort_keys=True))}
    if isinstance(obj, np.ndarray):
        a = np.ascontiguousarray(obj)
        return {"nd": [str(a.dtype), list(a.shape), hashlib.sha256(a.tobytes()).hexdigest()]}
    return {"repr": type(obj).__qualname__ + ":" + repr(obj)}


@lru_cache(maxsize=1)
def code_fingerprint() -> str:
    """Hash of rcdoc's version, the source of every rcdoc module and the versions
    of the libraries whose output ends up in a stage's results or figures."""
    h = hashlib.sha256()
    h.update(f"{_FORMAT}\0{__version__}\0".encode())
    package = Path(__file__).resolve().parent.parent
    for path in sorted(package.rglob("*.py")):
        h.update(path.relative_to(package).as_posix().encode() + b"\0")
        h.update(path.read_bytes() + b"\0")
    from rcdoc.versions import version
    for name in ("numpy", "scipy", "matplotlib", "schemdraw", "ziamath", "ziafont"):
        try:
            h.update(f"{name}={version(name)}\0".encode())
        except Exception:  # noqa: BLE001 - a missing library is part of the fingerprint too
            h.update(f"{name}=?\0".encode())
    return h.hexdigest()


def stage_key(stage, project) -> str:
    """The cache key of one stage of ``project``: its fields, the analysis
    settings, the board and the code fingerprint."""
    payload = {"stage": canonical(stage), "analysis": canonical(project.analysis),
               "board": canonical(project.board), "code": code_fingerprint()}
    text = json.dumps(payload, sort_keys=True, separators=(",", ":"))
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


# What an entry may name besides rcdoc's own data classes: numpy's array, scalar
# and dtype rebuilders (numpy 1 and 2 module names) and a few builtin types.
_PLAIN = {("builtins", "complex"), ("builtins", "set"), ("builtins", "frozenset"),
          ("builtins", "slice"), ("numpy", "dtype"), ("numpy", "ndarray"),
          ("numpy._core.numeric", "_frombuffer"), ("numpy.core.numeric", "_frombuffer"),
          ("numpy._core.multiarray", "_reconstruct"), ("numpy.core.multiarray", "_reconstruct"),
          ("numpy._core.multiarray", "scalar"), ("numpy.core.multiarray", "scalar")}


# The packages whose data classes an entry holds; importing them runs nothing else.
_DATA_PACKAGES = ("rcdoc.analysis.", "rcdoc.input.", "rcdoc.kinds.")


class _EntryUnpickler(pickle.Unpickler):
    """Unpickles what StageCache files and nothing else: rcdoc's data classes
    (dataclasses, enums, named tuples, and FrozenMap, which pickles as one call
    of itself), numpy arrays, scalars and dtypes, and builtin values. A pickle
    runs code only through the globals it names (a function, called with its
    arguments as it loads); any other name stops the load, and the entry is
    rebuilt (common practice for pickles from a folder others can write)."""

    def find_class(self, module: str, name: str):
        if "." in name:                 # no attribute chains (Class.__init__.__globals__)
            raise pickle.UnpicklingError(f"{module}.{name}: not in a cache entry")
        if (module, name) in _PLAIN:
            return super().find_class(module, name)
        if module.startswith(_DATA_PACKAGES):   # not any module: importing one may run code
            found = super().find_class(module, name)
            if isinstance(found, type) and (
                    dataclasses.is_dataclass(found) or issubclass(found, enum.Enum)
                    or (issubclass(found, tuple) and hasattr(found, "_fields"))
                    or (found.__name__ == "FrozenMap" and found.__module__ == "rcdoc.analysis.results")):
                return found
        elif module in ("numpy", "numpy.dtypes"):
            found = super().find_class(module, name)
            if isinstance(found, type) and issubclass(found, (np.generic, np.dtype)):
                return found
        raise pickle.UnpicklingError(f"{module}.{name}: not in a cache entry")


def _load(path: Path):
    with open(path, "rb") as fh:
        return _EntryUnpickler(fh).load()


class StageCache:
    """Entries of one project in ``root`` (``<out>/.rcdoc-cache/<stem>``)."""

    def __init__(self, root: Path):
        self.root = Path(root)
        self.used: set[str] = set()
        # The rendered note part (rcdoc.note.assemble) of each entry read, by key.
        self.parts: dict[str, dict] = {}
        self.hits = 0
        self.misses = 0

    @classmethod
    def for_output(cls, out_dir: Path, project_file: str) -> "StageCache":
        return cls(Path(out_dir) / CACHE_DIR_NAME / Path(project_file).stem)

    def _path(self, key: str) -> Path:
        return self.root / f"{key}.pickle"

    def has(self, key: str) -> bool:
        """Whether an entry for ``key`` is filed (readable or not: a quick look only)."""
        return self._path(key).is_file()

    def get(self, key: str):
        """(StageResult, stage context) for ``key``, or None (missing or unreadable)."""
        self.used.add(key)
        try:
            entry = _load(self._path(key))
            if (isinstance(entry, dict) and entry.get("format") == _FORMAT
                    and entry.get("key") == key and "result" in entry and "context" in entry):
                self.hits += 1
                if isinstance(entry.get("part"), dict):
                    self.parts[key] = entry["part"]
                return entry["result"], entry["context"]
        except Exception:  # noqa: BLE001 - a damaged entry is rebuilt, whatever the damage
            pass
        self.misses += 1
        return None

    def put(self, key: str, result, context, part: dict | None = None) -> None:
        """File an entry; ``part`` is the stage's rendered note part (its own
        key inside says which templates, date and renderer it was made with)."""
        self.used.add(key)
        data = pickle.dumps({"format": _FORMAT, "key": key, "result": result,
                             "context": context, "part": part},
                            protocol=pickle.HIGHEST_PROTOCOL)
        try:
            write_atomic(self._path(key), data)
        except OSError:
            pass  # a cache that cannot be written only costs time on the next build

    def get_note_parts(self) -> dict:
        """The note's parts made from the whole note (appendix, page numbers) that
        the last build filed, by name; each carries its own key (rcdoc.note.assemble)."""
        self.used.add(_NOTE_PARTS)
        try:
            entry = _load(self._path(_NOTE_PARTS))
            if isinstance(entry, dict) and entry.get("format") == _FORMAT:
                return {k: v for k, v in entry.get("parts", {}).items() if isinstance(v, dict)}
        except Exception:  # noqa: BLE001 - a damaged entry is rendered again
            pass
        return {}

    def put_note_parts(self, parts: dict) -> None:
        self.used.add(_NOTE_PARTS)
        data = pickle.dumps({"format": _FORMAT, "parts": dict(parts)},
                            protocol=pickle.HIGHEST_PROTOCOL)
        try:
            write_atomic(self._path(_NOTE_PARTS), data)
        except OSError:
            pass  # only costs time on the next build

    def prune(self) -> None:
        """Remove this project's entries that the current build did not use."""
        remove_stale_temps(self.root)      # left by a build that was killed
        try:
            entries = list(self.root.glob("*.pickle"))
        except OSError:
            return
        for path in entries:
            if path.stem not in self.used:
                try:
                    path.unlink()
                except OSError:
                    pass
