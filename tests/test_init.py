"""rcdoc init: the starting project is written once, loads, and passes `rcdoc check`."""

from __future__ import annotations

import re
import tomllib

import pytest

from rcdoc.commands.cli import main
from rcdoc.commands.init import STARTER
from rcdoc.input.project import ANALYSIS_KEYS, BOARD_KEYS, CHECK_KEYS, PART_KEYS
from rcdoc.kinds import load_project


@pytest.mark.slow
def test_init_writes_a_project_that_checks(tmp_path, capsys):
    f = tmp_path / "board.toml"
    assert main(["init", str(f)]) == 0
    assert f.read_text(encoding="utf-8") == STARTER
    project = load_project(f)
    assert len(project.stages) >= 3
    # docs/project-format.md: exit status 0 when every check passes.
    assert main(["check", str(f), "--samples", "100", "--quiet"]) == 0


def test_init_refuses_an_existing_file(tmp_path, capsys):
    f = tmp_path / "board.toml"
    f.write_text("# mine\n", encoding="utf-8")
    # docs/project-format.md: exit status 2 if FILE exists; the file stays as it was.
    assert main(["init", str(f)]) == 2
    assert f.read_text(encoding="utf-8") == "# mine\n"
    assert "already exists" in capsys.readouterr().err


def test_init_default_file_name(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    assert main(["init"]) == 0
    assert (tmp_path / "project.toml").read_text(encoding="utf-8") == STARTER
    assert main(["init"]) == 2


def test_init_into_a_missing_folder_is_an_input_error(tmp_path):
    assert main(["init", str(tmp_path / "nope" / "p.toml")]) == 2


def test_starter_shows_every_section_and_key():
    data = tomllib.loads(STARTER)
    assert {"board", "analysis", "stage"} <= set(data)
    # Every key of [board], [analysis], parts and checks appears, set or commented.
    for key in BOARD_KEYS + ANALYSIS_KEYS + PART_KEYS + CHECK_KEYS:
        assert re.search(rf"(?<![a-z_]){key} = ", STARTER), key
    kinds = {s["kind"] for s in data["stage"]}
    assert len(kinds) >= 3
