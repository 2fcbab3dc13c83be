"""``rcdoc build --since REV``: the commit REV names, and the note's change record.

What it is for: the note records what it was compared with as a commit (short
id and date), not as a name that moves (``HEAD``, a branch). The record is
a section placed right after the summary (templates/_changes.html); the cover
names it.

What it must not do: change the repository (it only reads with ``git
rev-parse`` and ``git log``) or compare projects (rcdoc.commands.diff does).
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

from rcdoc.errors import ProjectError

__all__ = ["Commit", "resolve_commit", "changes_section"]


@dataclass(frozen=True)
class Commit:
    rev: str              # as given: HEAD~1, main, v1.2, a1b2c3d
    full: str             # the commit's full id
    short: str            # its abbreviated id, as git abbreviates it
    date: str             # its commit date, YYYY-MM-DD

    @property
    def title(self) -> str:
        return f"Changes since {self.short} ({self.date})"


def resolve_commit(file: str | Path, rev: str) -> Commit:
    """The commit ``rev`` names in the git repository holding ``file``."""
    from rcdoc.commands.diff import _git
    rev = rev.strip()
    if not rev or rev.startswith("-"):
        raise ProjectError(f"'{rev}' names no revision; write e.g. HEAD~1 or v1.2",
                           path="--since")
    folder = Path(file).resolve().parent
    if not folder.is_dir():
        raise ProjectError(f"the folder of '{file}' does not exist")
    out = _git(["rev-parse", "--verify", "--quiet", f"{rev}^{{commit}}"], folder)
    if out.returncode != 0:
        raise ProjectError(f"'{rev}' is not a commit of a git repository holding '{file}'",
                           path="--since")
    full = out.stdout.decode("ascii", "replace").strip()
    short = _git(["rev-parse", "--short", full], folder).stdout.decode("ascii", "replace").strip()
    date = _git(["log", "-1", "--format=%cd", "--date=short", full],
                folder).stdout.decode("ascii", "replace").strip()
    return Commit(rev=rev, full=full, short=short or full[:12], date=date)


def changes_section(d, commit: Commit) -> dict:
    """The note's "Changes since <short id> (<date>)" section (after the summary)."""
    from rcdoc.commands.diff_render import note_blocks
    return {"title": commit.title, "commit": commit.full, "rev": commit.rev,
            "blocks": note_blocks(d)}
