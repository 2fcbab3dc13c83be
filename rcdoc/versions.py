"""Installed versions of the libraries that shape rcdoc's outputs, for cache keys.

What it is for: the build cache's keys name the versions of nine libraries
(numpy, scipy, the drawing and the PDF libraries). ``importlib.metadata``
finds a distribution by searching every folder of ``sys.path`` and parses its
METADATA file on every call: importing it and reading the nine took 0.03 s in
the command's process, on the one-value rebuild's critical path (its analysis,
then the front matter). A distribution installed from a wheel has a folder
``<name>-<version>.dist-info`` beside its packages (the binary distribution
format and the recording-installed-projects specification of the Python
Packaging Authority): here the version is read from that folder's name, found
beside the library's top-level package without importing it.

What it must not do: give another answer than ``importlib.metadata.version``.
Where the folder is not there, or there twice (an egg-info, editable or
vendored install, a stale copy left beside the new one), the answer is
``importlib.metadata``'s own. tests/test_versions.py compares the two.
rcdoc.note.lean_imports asks ``folder_version`` which library versions its
steps apply to.
"""

from __future__ import annotations

import functools
import importlib.util
import os
import re

__all__ = ["version", "folder_version"]

_SUFFIX = ".dist-info"


def version(distribution: str, package: str | None = None) -> str:
    """The installed version of ``distribution`` (its top-level import name is
    ``package``, the distribution's own name by default); raises
    ``importlib.metadata.PackageNotFoundError`` where it is not installed."""
    found = folder_version(distribution, package)
    if found is not None:
        return found
    from importlib.metadata import version as metadata_version
    return metadata_version(distribution)


def _normal(name: str) -> str:
    # The name as a .dist-info folder spells it: runs of "-", "_" and "." as one "_"
    # (the specification's escaping), compared without case.
    return re.sub(r"[-_.]+", "_", name).lower()


def folder_version(distribution: str, package: str | None = None) -> str | None:
    """The version in the name of ``distribution``'s one ``.dist-info`` folder
    beside its package ``package`` (found without importing it), or None."""
    try:
        spec = importlib.util.find_spec(package or distribution)
    except (ImportError, ValueError):
        return None
    if spec is None:
        return None
    where = (list(spec.submodule_search_locations or []) or [spec.origin or ""])[0]
    if not where:
        return None
    want = _normal(distribution)
    # <name>-<version>.dist-info: a normalised version holds no "-" (PEP 440).
    matches = [stem.rpartition("-")[2] for stem in
               (name[:-len(_SUFFIX)] for name in _listing(os.path.dirname(where))
                if name.endswith(_SUFFIX))
               if "-" in stem and _normal(stem.rpartition("-")[0]) == want]
    return matches[0] if len(matches) == 1 and matches[0] else None


@functools.lru_cache(maxsize=8)
def _listing(folder: str) -> tuple[str, ...]:
    try:
        return tuple(os.listdir(folder))
    except OSError:
        return ()
