"""Where things are in a project file: key path -> line number.

What it is for: the JSON summary, the JUnit report and the CI annotations
name the line of each check (``[[stage.check]]`` table, or the inline
``check = [{...}]`` element) so a reviewer lands on it. tomllib gives no
positions, so the text is scanned here: a small TOML reader that knows
strings (all four kinds), comments, table headers, arrays of tables, dotted
keys, arrays and inline tables, and records the line where each table or key
starts, under the key paths project.py uses in its messages (stages and
checks counted from 1: ``stage[2].check[1]``; ``stage[2].parts.r``).

It runs only on text tomllib has accepted, but never raises: on anything it
does not follow it returns what it found so far, and the callers check what
they look up against the loaded project (a missing line is written as null).

What it must not do: interpret values or judge the file (project.py does).
"""

from __future__ import annotations

import re
from pathlib import Path

__all__ = ["key_lines", "project_lines", "check_line", "rating_line"]

# Runs of characters taken at once (the scanner went one character at a time: 10 ms
# for the 40-stage bench board, on the way to a rebuild's JSON summary).
_BARE_RUN = re.compile(r"[A-Za-z0-9_-]*")
_SCALAR_RUN = re.compile(r"[^,\]}\n#]*")                 # up to the next delimiter
_BLANKS = re.compile(r"[ \t\r]*")
_BLANKS_LINES = re.compile(r"[ \t\r\n]*")
# A string's body up to its closing quote (or to where it cannot go on); a backslash
# in a basic string takes the character after it, whatever it is.
_BODY = {'"': re.compile(r'(?:[^"\\\n]|\\.)*', re.S), "'": re.compile(r"[^'\n]*"),
         '"""': re.compile(r'(?:[^"\\]|\\.|"(?!""))*', re.S),
         "'''": re.compile(r"(?:[^']|'(?!''))*")}


class _Scanner:
    def __init__(self, text: str):
        self.s = text
        self.i = 0
        self.line = 1
        self.found: dict[str, int] = {}
        self.arrays: dict[str, int] = {}       # array-of-tables path -> tables so far

    # ------------------------------------------------------------ characters
    def peek(self, k: int = 0) -> str:
        j = self.i + k
        return self.s[j] if j < len(self.s) else ""

    def advance(self, n: int = 1) -> None:
        self.line += self.s.count("\n", self.i, self.i + n)
        self.i += n

    def skip_space(self, newlines: bool) -> None:
        """Blanks, and comments; with ``newlines`` line ends too."""
        s, blanks = self.s, (_BLANKS_LINES if newlines else _BLANKS)
        while True:
            end = blanks.match(s, self.i).end()
            if newlines and end > self.i:
                self.line += s.count("\n", self.i, end)
            self.i = end
            if not s.startswith("#", end):
                return
            stop = s.find("\n", end)               # a comment runs to its line's end
            self.i = len(s) if stop < 0 else stop

    def expect(self, text: str) -> None:
        if not self.s.startswith(text, self.i):
            raise ValueError(f"expected {text!r} at line {self.line}")
        self.advance(len(text))

    # ------------------------------------------------------------ pieces
    def string(self) -> str:
        for quote in ('"""', "'''"):
            if self.s.startswith(quote, self.i):
                self.advance(3)
                start = self.i
                self.advance(_BODY[quote].match(self.s, self.i).end() - self.i)
                if not self.s.startswith(quote, self.i):
                    raise ValueError("unterminated string")
                # A closing run may hold up to two more quotes that belong to the string.
                while self.s.startswith(quote[0] * 4, self.i):
                    self.advance()
                text = self.s[start:self.i]
                self.advance(3)
                return text
        quote = self.peek()
        self.advance()
        start = self.i
        self.advance(_BODY[quote].match(self.s, self.i).end() - self.i)
        if self.peek() != quote:
            raise ValueError("unterminated string")
        text = self.s[start:self.i]
        self.advance()
        return text

    def key(self) -> list[str]:
        """A dotted key: its parts (quoted parts taken as written)."""
        parts = []
        while True:
            self.skip_space(False)
            c = self.peek()
            if c in ('"', "'"):
                parts.append(self.string())
            else:
                start = self.i
                self.i = _BARE_RUN.match(self.s, self.i).end()
                if self.i == start:
                    raise ValueError(f"no key at line {self.line}")
                parts.append(self.s[start:self.i])
            self.skip_space(False)
            if self.peek() != ".":
                return parts
            self.advance()

    def value(self, path: str) -> None:
        c = self.peek()
        if c in ('"', "'"):
            self.string()
        elif c == "[":
            self.advance()
            k = 0
            while True:
                self.skip_space(True)
                if self.peek() == "]":
                    self.advance()
                    return
                k += 1
                if self.peek() == "{":
                    self.found.setdefault(f"{path}[{k}]", self.line)
                self.value(f"{path}[{k}]")
                self.skip_space(True)
                if self.peek() == ",":
                    self.advance()
        elif c == "{":
            self.advance()
            while True:
                self.skip_space(True)
                if self.peek() == "}":
                    self.advance()
                    return
                self.pair(path)
                self.skip_space(True)
                if self.peek() == ",":
                    self.advance()
        else:                    # number, date, boolean: up to the next delimiter
            start = self.i
            self.i = _SCALAR_RUN.match(self.s, self.i).end()
            if self.i == start:
                raise ValueError(f"no value at line {self.line}")

    def pair(self, table: str) -> None:
        line = self.line
        parts = self.key()
        path = table
        for p in parts:
            path = f"{path}.{p}" if path else p
            self.found.setdefault(path, line)
        self.expect("=")
        self.skip_space(False)
        self.value(path)

    def resolve(self, parts: list[str]) -> str:
        """A header's key path, each array of tables taken at its latest table."""
        path = ""
        for p in parts:
            path = f"{path}.{p}" if path else p
            if path in self.arrays:
                path = f"{path}[{self.arrays[path]}]"
        return path

    def header(self) -> str:
        line = self.line
        double = self.s.startswith("[[", self.i)
        self.advance(2 if double else 1)
        parts = self.key()
        self.expect("]]" if double else "]")
        if double:
            parent = self.resolve(parts[:-1])
            array = f"{parent}.{parts[-1]}" if parent else parts[-1]
            self.arrays[array] = self.arrays.get(array, 0) + 1
            path = f"{array}[{self.arrays[array]}]"
        else:
            path = self.resolve(parts)
        self.found[path] = line
        return path

    def document(self) -> None:
        table = ""
        while True:
            self.skip_space(True)
            if self.i >= len(self.s):
                return
            if self.peek() == "[":
                table = self.header()
            else:
                self.pair(table)


def key_lines(text: str) -> dict[str, int]:
    """Key path -> line (1-based) for every table and key of a TOML text."""
    scanner = _Scanner(text)
    try:
        scanner.document()
    except (ValueError, IndexError, RecursionError):
        pass              # keep what was found before the part not followed
    return scanner.found


def project_lines(project) -> dict[str, int]:
    """key_lines of the project's file, or {} where it cannot be read (a
    revision from git, a file gone since it was loaded)."""
    try:
        text = Path(project.file).read_bytes().decode("utf-8")
    except (OSError, UnicodeDecodeError, ValueError):
        return {}
    return key_lines(text)


def check_line(lines: dict[str, int], stage, k: int) -> int | None:
    """The line of the ``k``-th check (from 1) of ``stage``: its
    ``[[stage.check]]`` header or inline table; else the stage's line."""
    base = f"stage[{stage.index}]"
    n = len(stage.checks)
    # Sanity: the scan must have seen as many checks as the loader did.
    if n and f"{base}.check[{n}]" in lines and f"{base}.check[{n + 1}]" not in lines:
        return lines.get(f"{base}.check[{k}]")
    if n == 1 and f"{base}.check" in lines:        # check = { ... } or [stage.check]
        return lines[f"{base}.check"]
    return lines.get(base)


def rating_line(lines: dict[str, int], stage, part_ref: str) -> int | None:
    """The line of the part a rating judges (by designator or role), else the stage's."""
    base = f"stage[{stage.index}]"
    for role, part in stage.parts.items():
        if part_ref in (part.ref, role):
            return lines.get(f"{base}.parts.{role}", lines.get(base))
    return lines.get(base)
