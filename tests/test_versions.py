"""Library versions read from .dist-info folder names (rcdoc.versions) against
importlib.metadata, the standard library's reading of the installed metadata."""

from __future__ import annotations

import importlib.metadata

import pytest

from rcdoc import versions

# Every library whose version is in a cache key (rcdoc.commands.cache.code_fingerprint,
# rcdoc.note.assemble._renderer_id), with its import name where that differs.
KEYED = [("numpy", None), ("scipy", None), ("matplotlib", None), ("schemdraw", None),
         ("ziamath", None), ("ziafont", None), ("weasyprint", None), ("pydyf", None),
         ("fonttools", "fontTools")]


@pytest.mark.parametrize("distribution, package", KEYED)
def test_same_version_as_importlib_metadata(distribution, package):
    assert versions.version(distribution, package) == importlib.metadata.version(distribution)


@pytest.mark.parametrize("distribution, package", KEYED)
def test_read_from_the_folder_name(distribution, package):
    # The short way is the one taken for wheel installs (else the test above
    # would pass through importlib.metadata alone).
    assert versions.folder_version(distribution, package) == \
        importlib.metadata.version(distribution)


def test_other_spellings_of_a_name():
    # Wheel folder names escape runs of -_. as "_" and may keep capitals
    # (the binary distribution format); the name given may be spelt either way.
    assert versions.version("Jinja2", "jinja2") == importlib.metadata.version("jinja2")
    assert versions.version("pillow", "PIL") == importlib.metadata.version("pillow")


def test_missing_library_raises_as_importlib_metadata():
    with pytest.raises(importlib.metadata.PackageNotFoundError):
        versions.version("no-such-library-rcdoc-test")


def test_folder_missing_or_doubled_falls_back(tmp_path, monkeypatch):
    pkg = tmp_path / "demo_pkg"
    pkg.mkdir()
    (pkg / "__init__.py").write_text("")
    monkeypatch.syspath_prepend(str(tmp_path))
    versions._listing.cache_clear()
    assert versions.folder_version("demo-pkg", "demo_pkg") is None          # no folder
    (tmp_path / "demo_pkg-1.2.dist-info").mkdir()
    versions._listing.cache_clear()
    assert versions.folder_version("demo-pkg", "demo_pkg") == "1.2"
    assert versions.folder_version("Demo.Pkg", "demo_pkg") == "1.2"
    (tmp_path / "demo_pkg-1.3.dist-info").mkdir()                        # a stale copy
    versions._listing.cache_clear()
    assert versions.folder_version("demo-pkg", "demo_pkg") is None
    versions._listing.cache_clear()
