"""Characters of the note that no installed font can draw.

What it is for: a board name, a title or a note in a script the machine has
no font for (Chinese on a machine with DejaVu alone, say) is drawn as empty
boxes. weasyprint says so once per character and drawing through its logger,
which rcdoc keeps off the terminal (rcdoc.commands.terminal); here those
records are gathered, so that the command can say once which characters the
note could not show (README, "Choices").

Only what weasyprint reports is gathered: a character the fonts draw (by
Fontconfig's fallback, from any installed font) is not missing. The result
depends on the machine's fonts, as the PDF's glyphs do.
"""

from __future__ import annotations

import contextlib
import logging
from collections.abc import Iterable, Iterator

__all__ = ["collecting", "listed"]

# weasyprint 70 (draw/text.py): LOGGER.warning('.notdef glyph rendered for Unicode
# string unsupported by fonts: "%s" (U+%04X)', chr(codepoint), codepoint).
_MESSAGE = ".notdef glyph rendered"


class _Gather(logging.Handler):
    def __init__(self, into: set[str]):
        super().__init__(logging.WARNING)
        self.into = into

    def emit(self, record: logging.LogRecord) -> None:
        if str(record.msg).startswith(_MESSAGE) and record.args:
            self.into.add(str(record.args[0]))


@contextlib.contextmanager
def collecting() -> Iterator[set[str]]:
    """The characters weasyprint drew as .notdef while the block ran (a set, filled
    as it runs)."""
    found: set[str] = set()
    handler = _Gather(found)
    logger = logging.getLogger("weasyprint")
    logger.addHandler(handler)
    try:
        yield found
    finally:
        logger.removeHandler(handler)


def listed(chars: Iterable[str], limit: int = 12) -> str:
    """The characters in code-point order with their code points, the first
    ``limit`` of them: '土 (U+571F), 壌 (U+58CC) and 3 more'."""
    ordered = sorted(set(chars))
    shown = ", ".join(f"{c} (U+{ord(c):04X})" for c in ordered[:limit])
    rest = len(ordered) - limit
    return shown + (f" and {rest} more" if rest > 0 else "")
