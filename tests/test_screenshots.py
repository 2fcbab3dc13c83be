"""The README's page images of the note: each one shown exists, is a PNG of modest
size, and is one that tools/screenshots.py regenerates (so none goes stale unseen)."""

from __future__ import annotations

import importlib.util
import re
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"      # the PNG specification (ISO/IEC 15948), section 5.2


def _shown() -> list[str]:
    readme = (ROOT / "README.md").read_text(encoding="utf-8")
    return re.findall(r'<img src="(docs/screenshots/[^"]+)"', readme)


def _tool():
    spec = importlib.util.spec_from_file_location("screenshots", ROOT / "tools" / "screenshots.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def test_every_image_the_readme_shows_exists_and_is_small():
    shown = _shown()
    assert len(shown) >= 3
    total = 0
    for name in shown:
        path = ROOT / name
        assert path.is_file(), name
        data = path.read_bytes()
        assert data[:8] == PNG_SIGNATURE, name
        assert len(data) < 150_000, (name, len(data))   # a modest page image
        total += len(data)
    assert total < 600_000


def test_the_tool_writes_exactly_the_images_the_readme_shows():
    written = [f"docs/screenshots/{name}" for name, _stage, _block in _tool().SHOTS]
    assert sorted(written) == sorted(_shown())
