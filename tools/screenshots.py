"""Regenerate the README's page images of the example note (docs/screenshots/).

Builds projects/greenhouse-controller.toml into a temporary folder, finds each
page by the note's own bookmarks (a stage's title, then a block title within the
stage) and writes it as a PNG with poppler's pdftoppm at a modest resolution.

    PYTHONPATH=$PWD python3 tools/screenshots.py [--dpi 70] [--out docs/screenshots]

Run it after a change that alters how the note looks (templates, note.css,
charts, tables) and commit the PNGs with that change.
"""

from __future__ import annotations

import argparse
import shutil
import subprocess
import sys
import tempfile
import tomllib
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
EXAMPLE = ROOT / "projects" / "greenhouse-controller.toml"

# (file name, stage id or None for the summary, block title on the page or None
# for the stage's first page). The README shows them in this order.
SHOTS = (
    ("summary.png", None, None),
    ("lowpass.png", "moisture-aaf", "Frequency response"),
    ("sampled-input.png", "moisture-adc", "Sample error against sample rate"),
    ("snubber.png", "pump-contactor-snubber", None),
)


def _outline(reader) -> list[tuple[int, str, int]]:
    """The PDF's bookmarks as (level, title, page index), in document order."""
    found: list[tuple[int, str, int]] = []

    def walk(items, level):
        for item in items:
            if isinstance(item, list):
                walk(item, level + 1)
            else:
                found.append((level, item.title, reader.get_destination_page_number(item)))

    walk(reader.outline, 0)
    return found


def _page_of(reader, titles: dict[str, str], stage: str | None, block: str | None) -> int:
    """Index of the page a shot shows (ValueError when the note no longer has it)."""
    if stage is None:      # the summary: the first page whose text opens with its heading
        for i, page in enumerate(reader.pages):
            lines = [ln.strip() for ln in page.extract_text().splitlines() if ln.strip()]
            if lines and lines[0] == "Summary":
                return i
        raise ValueError("no summary page in the note")
    inside = False
    for level, title, page in _outline(reader):
        if level == 0:
            if inside:
                break
            inside = title == titles[stage]
            if inside and block is None:
                return page
        elif inside and title == block:
            return page
    raise ValueError(f"no page with {block or 'the start'} of stage {stage!r} in the note")


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--dpi", type=int, default=70)
    parser.add_argument("--out", type=Path, default=ROOT / "docs" / "screenshots")
    args = parser.parse_args(argv)
    if shutil.which("pdftoppm") is None:
        print("pdftoppm (poppler-utils) is needed to turn pages into images", file=sys.stderr)
        return 2
    import pypdf  # noqa: PLC0415 - a test dependency, only needed here

    from rcdoc.commands.cli import main as rcdoc  # noqa: PLC0415 - after the checks

    project = tomllib.loads(EXAMPLE.read_text(encoding="utf-8"))
    titles = {s["id"]: s["title"] for s in project["stage"]}
    args.out.mkdir(parents=True, exist_ok=True)
    with tempfile.TemporaryDirectory() as tmp:
        if rcdoc(["build", str(EXAMPLE), "-o", tmp, "--quiet"]) != 0:
            return 1
        pdf = Path(tmp) / f"{EXAMPLE.stem}.pdf"
        reader = pypdf.PdfReader(pdf)
        for name, stage, block in SHOTS:
            number = _page_of(reader, titles, stage, block) + 1
            target = args.out / name
            subprocess.run(["pdftoppm", "-png", "-r", str(args.dpi), "-f", str(number),
                            "-l", str(number), "-singlefile", str(pdf),
                            str(target.with_suffix(""))], check=True)
            print(f"{target.relative_to(ROOT) if target.is_relative_to(ROOT) else target}: "
                  f"page {number}, {target.stat().st_size // 1024} kB")
    return 0


if __name__ == "__main__":
    sys.exit(main())
