"""Input limits (rcdoc.input.limits) on every TOML read, and texts that stay allowed.

The catalogue in test_errors.py holds the one-file cases; here are the reads
through git (``diff git:REV`` and ``build --since``), the very large file, and
what the limits must not refuse.
"""

from __future__ import annotations

import shutil

import pytest

from rcdoc.commands import cli
from rcdoc.errors import ProjectError
from rcdoc.input.limits import MAX_FILE_BYTES, check_text, read_toml
from tests.boards import load
from tests.test_diff import _git

needs_git = pytest.mark.skipif(shutil.which("git") is None, reason="git is not installed")

GOOD = ('[board]\nname = "T"\nrevision = "A"\ndate = "2026-01-01"\n[analysis]\nsamples = 20\n'
        '[[stage]]\nid = "a"\ntitle = "A"\nkind = "rc-lowpass"\n'
        'parts.r = { value = "4k7" }\nparts.c = { value = "10n" }\n')
# tomllib recurses once per nesting level: 5000 levels exceed Python's recursion limit.
DEEP = GOOD.replace('revision = "A"', 'revision = "A"\nnotes = ' + "[" * 5000 + "]" * 5000)


def _repo_with(tmp_path, old_text: str):
    root = tmp_path / "repo"
    root.mkdir()
    f = root / "board.toml"
    f.write_text(old_text, encoding="utf-8")
    _git(root, "init", "-q")
    _git(root, "add", ".")
    _git(root, "commit", "-q", "-m", "old")
    f.write_text(GOOD, encoding="utf-8")
    return f


@needs_git
@pytest.mark.parametrize("command", ["diff", "since"])
@pytest.mark.parametrize("old,words", [(DEEP, "nested too deeply"),
                                       (GOOD + "# " + "x" * MAX_FILE_BYTES, "bytes")],
                         ids=["deeply-nested", "over-1mb"])
def test_old_revision_is_read_with_the_same_guards(tmp_path, capsys, command, old, words):
    # A deeply nested or oversized old revision: exit 2 naming the revision, no traceback.
    f = _repo_with(tmp_path, old)
    argv = (["diff", "git:HEAD", str(f)] if command == "diff"
            else ["build", str(f), "--since", "HEAD", "--quiet", "-o", str(tmp_path / "out")])
    rc = cli.main(argv)
    err = capsys.readouterr().err
    assert rc == 2, err
    assert "Traceback" not in err and words in err and "at git:HEAD" in err
    assert not (tmp_path / "out").exists()


def test_ten_megabyte_file_is_refused_before_parsing(tmp_path, capsys):
    # A 10 MB notes field used to render for ever; the size limit stops it first.
    path = tmp_path / "big.toml"
    path.write_text(GOOD.replace('revision = "A"', 'revision = "A"\nnotes = "'
                                 + "word " * 2_000_000 + '"'), encoding="utf-8")
    rc = cli.main(["check", str(path), "--quiet"])
    err = capsys.readouterr().err
    assert rc == 2 and str(path) in err and "1,000,000 bytes" in err


def test_size_limit_comes_before_decoding():
    with pytest.raises(ProjectError, match="at most 1,000,000 bytes"):
        read_toml(b"\xff" * (MAX_FILE_BYTES + 1))


def test_notes_keep_ordinary_newlines_and_tabs(tmp_path):
    p = load(tmp_path, '[[stage]]\nid = "a"\ntitle = "Filter, 2nd \u00b5C input"\nkind = '
             '"rc-lowpass"\nnotes = """First line.\n\tIndented.\n\nSecond paragraph."""\n'
             'parts.r = { value = "4k7" }\nparts.c = { value = "10n" }\n')
    assert "\tIndented." in p.stages[0].notes and p.stages[0].title.endswith("\u00b5C input")


def test_crlf_file_is_read_as_plain_newlines(tmp_path):
    # TOML 1.0 allows CRLF line ends; a multi-line note must not count them as CR.
    path = tmp_path / "crlf.toml"
    text = GOOD.replace('revision = "A"', 'revision = "A"\nnotes = """one\ntwo"""')
    path.write_bytes(text.replace("\n", "\r\n").encode("utf-8"))
    assert load_ok(path).board.notes == "one\ntwo"


def load_ok(path):
    from rcdoc.kinds import load_project
    return load_project(path)


@pytest.mark.parametrize("ch", ["\r", "\x00", "\x07", "\x1b", "\x85", "\u2028", "\u2029", "\n"])
def test_one_line_text_refuses_breaks_and_controls(ch):
    with pytest.raises(ProjectError) as err:
        check_text(f"a{ch}b", "board.name")
    assert err.value.path == "board.name" and f"U+{ord(ch):04X}" in err.value.message


def test_command_line_integers_beyond_the_digit_limit(tmp_path, capsys):
    # Python's int() refuses more than 4300 digits (sys.int_info); --samples with
    # 5000 digits is a usage mistake, exit 2.
    path = tmp_path / "b.toml"
    path.write_text(GOOD, encoding="utf-8")
    with pytest.raises(SystemExit) as ex:
        cli.main(["check", str(path), "--samples", "9" * 5000])
    assert ex.value.code == 2
    assert "Traceback" not in capsys.readouterr().err
