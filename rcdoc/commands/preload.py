"""Imported by the worker pool's fork server of a build (never by the command itself):
the note's drawing and rendering modules, loaded once before any worker forks.

The server is started early (WorkerPool.warm), beside the command's own imports and
before ``require_renderer`` has checked the system libraries. A renderer that cannot
load (a missing Pango, say) must then not print weasyprint's banner or a traceback
from the server: the command reports it in one line. A worker that needs the
modules imports them again and fails in the usual, reported way.
"""

from __future__ import annotations

import contextlib
import io

from rcdoc.note import lean_imports

# Before matplotlib (rcdoc.note.page's charts), weasyprint and schemdraw are
# imported: what they do at import that the note never uses is left for later.
lean_imports.install()

with contextlib.suppress(Exception), contextlib.redirect_stdout(io.StringIO()):
    import rcdoc.note.page  # noqa: F401
    import rcdoc.note.assemble  # noqa: F401



def _first_stage() -> None:
    """What each worker's first stage would load for itself, loaded here once:
    schemdraw and ziamath, which outlines its labels (its math font is read
    on first use: rcdoc.note.lean_imports), ziafont pointed at the reusing
    factory first (rcdoc.note.outline_font), and the note's trimmed
    user-agent sheet."""
    from rcdoc.note import note_html, outline_font
    outline_font.speed_up()
    import schemdraw  # noqa: F401
    import schemdraw.elements  # noqa: F401
    import ziamath  # noqa: F401
    note_html.trimmed_sheet()


with contextlib.suppress(Exception), contextlib.redirect_stdout(io.StringIO()):
    _first_stage()
