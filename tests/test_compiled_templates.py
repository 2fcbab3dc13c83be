"""The shipped templates' code compiled ahead (rcdoc.note.compiled_templates) is
the code jinja2 compiles from them, and the note renders the same either way.

The reference is jinja2 itself: its Environment.compile of the same source with
the same environment, and rendering with no bytecode cache at all."""

from __future__ import annotations

import importlib
import sys
from pathlib import Path

import jinja2
import pytest

from rcdoc.errors import ProjectError
from rcdoc.note import compiled_templates, report
from test_report import make_context

ROOT = Path(__file__).resolve().parents[1]
SHIPPED = report.shipped_templates_dir()
NAMES = sorted(p.name for p in SHIPPED.iterdir() if p.suffix in (".html", ".css"))
SAME_JINJA = jinja2.__version__ == compiled_templates.JINJA2


def _tool():
    sys.path.insert(0, str(ROOT / "tools"))
    try:
        return importlib.import_module("compile_templates")
    finally:
        sys.path.remove(str(ROOT / "tools"))


def _env():
    return report._environment(report._search_path(()))


@pytest.fixture
def from_source(monkeypatch):
    """An environment that compiles every template from its source (jinja2's own
    path: no bytecode cache), in place of the usual one."""
    report._made_environment.cache_clear()
    env = _env()
    monkeypatch.setattr(env, "bytecode_cache", None)
    yield env
    report._made_environment.cache_clear()


def test_every_shipped_template_has_its_code():
    assert set(compiled_templates.TEMPLATES) == set(NAMES)


@pytest.mark.skipif(not SAME_JINJA, reason="made by another jinja2: never used (next test)")
def test_committed_modules_are_what_the_tool_writes():
    want = _tool().generated()
    folder = ROOT / "rcdoc" / "note" / "compiled_templates"
    have = {p.name: p.read_text(encoding="utf-8") for p in folder.glob("*.py")}
    assert have == want, "run: PYTHONPATH=$PWD python3 tools/compile_templates.py"


@pytest.mark.parametrize("name", NAMES)
def test_code_is_jinja2s_own(name):
    env = _env()
    source, filename, _ = env.loader.get_source(env, name)
    checksum = jinja2.BytecodeCache().get_source_checksum(source)
    settings = report._codegen_settings(env)
    made = compiled_templates.code(name, checksum, filename, settings, jinja2.__version__)
    if not SAME_JINJA:
        assert made is None       # another jinja2: compiled from the source as usual
        return
    fresh = compile(env.compile(source, name, filename, raw=True), filename, "exec",
                    dont_inherit=True)
    assert made == fresh                     # instructions, constants, names, line table
    assert _files(made) == _files(fresh) == {filename}   # tracebacks name the template


def _files(code) -> set[str]:
    """The file names of ``code`` and of every code object inside it (code
    objects compare equal whatever their file)."""
    inner = [_files(c) for c in code.co_consts if hasattr(c, "co_filename")]
    return {code.co_filename}.union(*inner)


@pytest.mark.parametrize("name", NAMES[:2])
def test_stale_or_foreign_code_is_not_used(name):
    env = _env()
    source, filename, _ = env.loader.get_source(env, name)
    checksum = jinja2.BytecodeCache().get_source_checksum(source)
    settings = report._codegen_settings(env)
    code = compiled_templates.code
    assert code(name, "0" * 40, filename, settings, jinja2.__version__) is None   # edited
    assert code(name, checksum, filename, settings + "x", jinja2.__version__) is None
    assert code(name, checksum, filename, settings, "0.0.0") is None
    assert code("other.html", checksum, filename, settings, jinja2.__version__) is None


def test_precompiled_code_is_what_renders():
    env = _env()
    env.cache.clear()
    template = env.get_template("note.html")
    if SAME_JINJA:
        assert template.root_render_func.__code__.co_filename == str(SHIPPED / "note.html")
        assert "compiled_templates" not in template.root_render_func.__code__.co_filename


def test_same_html_as_compiled_from_source(from_source):
    context = make_context()
    plain = report.render_html(context)
    css = report.render_css(context)
    report._made_environment.cache_clear()
    assert report._environment(report._search_path(())).bytecode_cache is not None
    assert report.render_html(context) == plain
    assert report.render_css(context) == css


def test_a_user_template_is_compiled_from_its_source(tmp_path):
    override = tmp_path / "tpl"
    override.mkdir()
    cover = (SHIPPED / "_cover.html").read_text(encoding="utf-8")
    (override / "_cover.html").write_text(cover.replace("Design note", "Review copy"))
    html = report.render_html(make_context(), template_dirs=[override])
    assert "Review copy" in html
    assert "Review copy" not in report.render_html(make_context())


def test_errors_in_shipped_code_name_the_template_and_line(tmp_path, from_source):
    # A user's note.html that includes a shipped partial without what it needs: the
    # error is met in _cover.html's code and reported where it was met, as with
    # jinja2's own code.
    override = tmp_path / "tpl"
    override.mkdir()
    (override / "note.html").write_text(
        '{% import "_blocks.html" as ui %}\n<html>\n'
        '{% with board = none %}{% include "_cover.html" %}{% endwith %}\n</html>\n')
    messages = []
    for env_cache in (None, "usual"):
        report._made_environment.cache_clear()
        if env_cache is None:
            env = report._environment(report._search_path([override]))
            env.bytecode_cache = None
        with pytest.raises(ProjectError) as caught:
            report.render_html(make_context(), template_dirs=[override])
        messages.append(str(caught.value))
    assert messages[0] == messages[1]
    assert str(SHIPPED / "_cover.html") in messages[0]
    assert "line 4: UndefinedError" in messages[0]
