"""A machine without the PDF renderer's system libraries.

`rcdoc build` says which library is missing and which Debian package provides
it, in one line on stderr, exit status 2, nothing on stdout, nothing written;
`rcdoc check` works without the renderer at all. Each case runs in a fresh
interpreter, where the library is made to fail as it would on such a machine:
cffi's own dlopen (and the compiled FFI's, rcdoc.note.lean_imports) is asked
for a file that does not exist (its real error message), Fontconfig is given a configuration with no font folder, or the
weasyprint package is blocked (sys.modules['weasyprint'] = None).
The package names are checked against the system's package database (dpkg -S)
where there is one.
"""

from __future__ import annotations

import json
import os
import shutil
import subprocess
import sys
import textwrap
from pathlib import Path

import pytest

from rcdoc.commands import renderer

ROOT = Path(__file__).resolve().parent.parent

BOARD = """\
[board]
name = "Bench board"
revision = "A"
date = "2026-02-02"

[analysis]
samples = 100
seed = 1

[[stage]]
id = "1"
title = "Input filter"
kind = "rc-lowpass"
parts.r = { ref = "R1", value = "10k", tolerance = "1%" }
parts.c = { ref = "C1", value = "10n", tolerance = "1%", dielectric = "C0G", voltage = "50 V" }
[[stage.check]]
metric = "corner"
min = "1.4 kHz"
max = "1.8 kHz"
"""

# Run before the command: make dlopen fail for the libraries whose name holds
# BREAK, as the system loader does when the file is not there.
PRELUDE = """
import json, sys
BREAK = BREAKS
if BREAK == "weasyprint":
    sys.modules["weasyprint"] = None
elif BREAK:
    import cffi
    _dlopen = cffi.FFI.dlopen
    def dlopen(self, name, *args):
        if BREAK in str(name):
            name = str(name) + ".not-installed"
        return _dlopen(self, name, *args)
    cffi.FFI.dlopen = dlopen
    # weasyprint's compiled FFI (rcdoc.note.lean_imports) opens them here.
    import rcdoc.note.lean_imports as lean
    _open = lean._open_library
    def open_library(ffi, name, flags):
        if BREAK in str(name):
            name = str(name) + ".not-installed"
        return _open(ffi, name, flags)
    lean._open_library = open_library
"""

COMMAND = PRELUDE + """
from rcdoc.commands.cli import main
rc = main(sys.argv[2:])
json.dump({"rc": rc, "weasyprint": sys.modules.get("weasyprint") is not None},
          open(sys.argv[1], "w"))
"""


def _script(text: str, breaks: str) -> str:
    return textwrap.dedent(text).replace("BREAKS", repr(breaks), 1)


def _run(tmp_path: Path, breaks: str, args: list[str], env_extra=None):
    board = tmp_path / "bench.toml"
    board.write_text(BOARD, encoding="utf-8")
    script = tmp_path / "probe.py"
    script.write_text(_script(COMMAND, breaks))
    report = tmp_path / "report.json"
    env = {**os.environ, "PYTHONPATH": str(ROOT), **(env_extra or {})}
    proc = subprocess.run([sys.executable, str(script), str(report), *args, str(board),
                           "--jobs", "1", "-o", str(tmp_path / "out")],
                          cwd=tmp_path, env=env, capture_output=True, text=True, timeout=600)
    assert report.exists(), proc.stderr
    return json.loads(report.read_text()), proc.stdout, proc.stderr


def _one_error_line(stderr: str) -> str:
    lines = stderr.strip().splitlines()
    assert len(lines) == 1, stderr
    assert lines[0].startswith("rcdoc: error: ") and "Traceback" not in stderr
    return lines[0]


@pytest.mark.slow
@pytest.mark.parametrize("breaks, library, package", [
    ("pango-1.0", "Pango", "libpango-1.0-0"),
    ("pangoft2", "PangoFT2", "libpangoft2-1.0-0"),
    ("harfbuzz", "HarfBuzz", "libharfbuzz0b"),
    ("fontconfig", "Fontconfig", "libfontconfig1"),
])
def test_build_names_a_missing_library_and_its_package(tmp_path, breaks, library, package):
    result, stdout, stderr = _run(tmp_path, breaks, ["build", "--quiet"])
    line = _one_error_line(stderr)
    assert result["rc"] == 2
    assert library in line and f"apt-get install {package}" in line
    assert stdout == ""                        # weasyprint's own banner is kept off stdout
    assert not (tmp_path / "out").exists()      # nothing written


@pytest.mark.slow
def test_build_without_any_font_says_so(tmp_path):
    # A Fontconfig configuration that names no font folder: no font at all.
    conf = tmp_path / "fonts.conf"
    conf.write_text('<?xml version="1.0"?>\n<fontconfig></fontconfig>\n')
    result, stdout, stderr = _run(tmp_path, "", ["build", "--quiet"],
                                  {"FONTCONFIG_FILE": str(conf)})
    line = _one_error_line(stderr)
    assert result["rc"] == 2 and "no font" in line and "fonts-dejavu-core" in line
    assert stdout == "" and not (tmp_path / "out").exists()


@pytest.mark.slow
def test_build_without_weasyprint_says_so(tmp_path):
    result, _, stderr = _run(tmp_path, "weasyprint", ["build", "--quiet"])
    assert result["rc"] == 2 and "pip install weasyprint" in _one_error_line(stderr)


@pytest.mark.slow
def test_missing_subsetter_is_a_one_line_notice(tmp_path):
    # HarfBuzz's subsetter is optional (the renderer falls back to a slower
    # subsetter): a notice, not an error.
    script = tmp_path / "notice.py"
    script.write_text(_script(PRELUDE, "harfbuzz-subset") + textwrap.dedent("""
        from rcdoc.commands.renderer import require_renderer
        print(json.dumps(require_renderer()))
        """))
    proc = subprocess.run([sys.executable, str(script)], env={**os.environ, "PYTHONPATH": str(ROOT)},
                          capture_output=True, text=True, timeout=300, check=True)
    notices = json.loads(proc.stdout.strip().splitlines()[-1])
    assert len(notices) == 1 and "libharfbuzz-subset0" in notices[0]
    assert "\n" not in notices[0]


@pytest.mark.slow
@pytest.mark.parametrize("args", [
    ["check"],
    ["check", "--annotations", "--junit", "checks.xml", "--json", "summary.json"],
])
def test_check_works_without_the_renderer(tmp_path, args):
    result, stdout, stderr = _run(tmp_path, "weasyprint", args)
    assert result["rc"] == 0, stderr            # the corner is inside its limits
    assert result["weasyprint"] is False
    assert "Traceback" not in stderr and "PASS" in stdout.upper()


@pytest.mark.slow
def test_check_works_without_pango(tmp_path):
    result, _, stderr = _run(tmp_path, "pango", ["check", "--quiet"])
    assert result["rc"] == 0, stderr


def test_cffi_message_names_the_library():
    # cffi's wording for a library the loader cannot find.
    msg = ("cannot load library 'libpangoft2-1.0-0': libpangoft2-1.0-0: cannot open shared "
           "object file: No such file or directory.  Additionally, ctypes.util.find_library() "
           "did not manage to locate a library called 'libpangoft2-1.0-0'")
    assert renderer.missing_library(msg)[1] == "libpangoft2-1.0-0"
    assert renderer.missing_library("cannot load library 'libgobject-2.0-0': x")[1] == \
        "libglib2.0-0"
    assert renderer.missing_library("something else entirely") is None


# The file each library is loaded from, as the renderer names it (soname).
SONAMES = {"pango": "libpango-1.0.so.0", "pangoft2": "libpangoft2-1.0.so.0",
           "gobject": "libgobject-2.0.so.0", "harfbuzz": "libharfbuzz.so.0",
           "fontconfig": "libfontconfig.so.1", "harfbuzz-subset": "libharfbuzz-subset.so.0"}


@pytest.mark.skipif(shutil.which("dpkg") is None, reason="no Debian package database")
@pytest.mark.parametrize("key, library, package", renderer.LIBRARIES)
def test_package_names_match_the_package_database(key, library, package):
    # Source: the system's own package database (dpkg -S FILE names the package).
    proc = subprocess.run(["dpkg", "-S", f"*/{SONAMES[key]}"], capture_output=True, text=True)
    if proc.returncode != 0:
        pytest.skip(f"{SONAMES[key]} is not installed from a package here")
    owners = {line.split(":")[0] for line in proc.stdout.splitlines()}
    assert package in owners, owners
