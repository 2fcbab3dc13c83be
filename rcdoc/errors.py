"""The project's error family.

Every mistake a user can make is raised as a ProjectError that carries the file
and the key path, so the command line can print one clear line and exit 2.
Anything else escaping to the command line is a bug in rcdoc.
"""

from __future__ import annotations


class ProjectError(ValueError):
    """A mistake in the user's input, located by file and key path.

    `path` uses the project's notation: ``stage[2].parts.c.value`` (stages are
    counted from 1, as a person counts them in the file).
    """

    def __init__(self, message: str, *, path: str = "", file: str | None = None):
        super().__init__(message)
        self.message = message
        self.path = path
        self.file = file

    def located(self, file: str) -> "ProjectError":
        """Return the same error with the file filled in (if it was missing)."""
        if self.file is None:
            self.file = file
        return self

    def __str__(self) -> str:
        where = ": ".join(p for p in (self.file, self.path) if p)
        return f"{where}: {self.message}" if where else self.message
