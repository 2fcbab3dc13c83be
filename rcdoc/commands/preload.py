"""Imported by the worker pool's fork server of a build (never by the command itself):
the note's drawing modules, loaded once before any worker forks.

The renderer (weasyprint, with the note's trimmed user-agent sheet) is not among
them: a worker loads it when it first renders a part of the note. The workers of
a one-value rebuild only draw (the command's process renders the parts), and
their fork server, on that rebuild's critical path, is ready about 0.25 s sooner
without it; a cold build's workers each load it once.

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
# imported (here or in a worker, which inherits this): what they do at import
# that the note never uses is left for later.
lean_imports.install()

with contextlib.suppress(Exception), contextlib.redirect_stdout(io.StringIO()):
    import rcdoc.note.page  # noqa: F401
    # What rcdoc.note.page imports only where it draws (the command's process
    # of a rebuild does without them): every worker draws.
    import rcdoc.note.blocks  # noqa: F401
    import rcdoc.note.charts_freq  # noqa: F401
    import rcdoc.note.charts_time  # noqa: F401
    import rcdoc.note.schematic  # noqa: F401



def _first_stage() -> None:
    """What each worker's first stage would load for itself, loaded here once:
    schemdraw and ziamath, which outlines its labels (its math font is read
    on first use: rcdoc.note.lean_imports), and ziafont pointed at the reusing
    factory first (rcdoc.note.outline_font)."""
    from rcdoc.note import outline_font
    outline_font.speed_up()
    import schemdraw  # noqa: F401
    import schemdraw.elements  # noqa: F401
    import ziamath  # noqa: F401


with contextlib.suppress(Exception), contextlib.redirect_stdout(io.StringIO()):
    _first_stage()
