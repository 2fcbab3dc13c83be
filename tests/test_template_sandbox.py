"""Templates run in jinja2's immutable sandbox: the classic escapes end in exit 2 or inert text.

Reference: jinja2's sandbox documentation ("Sandbox",
https://jinja.palletsprojects.com/en/3.1.x/sandbox/): ``SandboxedEnvironment``
refuses attributes starting with an underscore and Python internals
(``is_safe_attribute``), checks ``str.format`` / ``format_map`` calls and the
``attr`` filter the same way, and ``ImmutableSandboxedEnvironment`` also
refuses the methods that change a list, dict, set or deque (``modifies_known_mutable``).
Every refusal is a ``jinja2.exceptions.SecurityError``, which rcdoc reports as
a template error naming the file and line (exit status 2).
"""

from __future__ import annotations

import jinja2.sandbox
import pytest
from pypdf import PdfReader

from rcdoc.commands import cli

from rcdoc.note import report
from rcdoc.errors import ProjectError

# Each payload, and the words of the error it must end in (file and line are
# checked separately). SecurityError: refused by the sandbox (jinja2 sandbox
# documentation); UndefinedError: a name the template context does not hold.
ESCAPES = [
    ("{{ ''.__class__.__mro__[1].__subclasses__() }}", "SecurityError"),
    ("{{ [].__class__.__base__.__subclasses__() }}", "SecurityError"),
    ("{{ cycler.__init__.__globals__.os.popen('id').read() }}", "SecurityError"),
    ("{{ joiner.__call__.__globals__ }}", "SecurityError"),
    ("{{ self._TemplateReference__context }}", "SecurityError"),
    ("{{ self.__init__.__globals__ }}", "SecurityError"),
    ("{{ lipsum.__globals__ }}", "SecurityError"),
    ("{{ namespace.__init__.__globals__ }}", "SecurityError"),
    ("{{ ''|attr('__class__') }}", "SecurityError"),
    ("{{ '{0.__class__}'.format(1) }}", "SecurityError"),
    ("{{ '{x.__class__}'.format_map({'x': 1}) }}", "SecurityError"),
    ("{{ '%s'|format(''.__class__) }}", "SecurityError"),
    ("{% set xs = [1] %}{{ xs.append(2) }}", "SecurityError"),
    ("{% set d = {} %}{{ d.update(a=1) }}", "SecurityError"),
    ("{{ dict(a=1).pop('a') }}", "SecurityError"),
    # Not refused by the sandbox but by the template context: these names do
    # not exist in rcdoc's templates (they are a web framework's).
    ("{{ config }}", "UndefinedError"),
    ("{{ request }}", "UndefinedError"),
    # The builtin range has no __self__ the sandbox would hand out.
    ("{{ range.__self__ }}", "has no attribute '__self__'"),
    # No Python modules and no files outside the template folders.
    ("{% import 'os' as os %}", "not found"),
    ("{% include '/etc/passwd' %}", "not found"),
]


def _template_dir(tmp_path, body: str):
    d = tmp_path / "tpl"
    d.mkdir()
    # A one-file note.html: the payload stands on line 2.
    (d / "note.html").write_text("<p>start</p>\n" + body + "\n", encoding="utf-8")
    return d


def test_templates_render_in_the_immutable_sandbox(tmp_path):
    env = report._environment(report._search_path([]))
    assert isinstance(env, jinja2.sandbox.ImmutableSandboxedEnvironment)


@pytest.mark.parametrize("payload,reason", ESCAPES, ids=[p for p, _ in ESCAPES])
def test_escape_payload_is_a_template_error_with_file_and_line(tmp_path, payload, reason):
    d = _template_dir(tmp_path, payload)
    with pytest.raises(ProjectError) as err:
        report.render_html({}, template_dirs=[d])
    text = str(err.value)
    assert str(d / "note.html") in text
    assert "line 2:" in text
    assert reason in text


def test_harmless_globals_give_inert_text(tmp_path):
    # lipsum and range stay usable (jinja2's default globals); their output is text.
    d = _template_dir(tmp_path, "{{ lipsum(1, html=False)|length > 0 }} {{ range(3)|list }}"
                                " {{ '{{ 7*7 }}' }}")
    html = report.render_html({}, template_dirs=[d])
    assert "True [0, 1, 2] {{ 7*7 }}" in html


BOARD = (
    "[board]\nname = \"Sandbox\"\nrevision = \"A\"\ndate = \"2026-01-01\"\n"
    "[analysis]\nsamples = 10\n"
    "[[stage]]\nid = \"f1\"\ntitle = \"Filter\"\nkind = \"rc-lowpass\"\n"
    "parts.r = { ref = \"R1\", value = \"4k7\" }\n"
    "parts.c = { ref = \"C1\", value = \"10 nF\" }\n"
)


def _build(tmp_path, cover: str):
    proj = tmp_path / "board.toml"
    proj.write_text(BOARD, encoding="utf-8")
    tpl = tmp_path / "tpl"
    tpl.mkdir()
    shipped = (report.shipped_templates_dir() / "_cover.html").read_text(encoding="utf-8")
    (tpl / "_cover.html").write_text(cover + "\n" + shipped, encoding="utf-8")
    out = tmp_path / "out"
    rc = cli.main(["build", str(proj), "-o", str(out), "--templates", str(tpl),
                   "--quiet", "--jobs", "1"])
    return rc, out


@pytest.mark.slow
def test_build_with_an_escaping_override_ends_in_exit_2_and_no_note(tmp_path, capsys):
    rc, out = _build(tmp_path, "{{ cycler.__init__.__globals__.os.environ }}")
    assert rc == 2
    err = capsys.readouterr().err
    assert "_cover.html" in err and "line 1" in err and "SecurityError" in err
    assert "Traceback" not in err
    assert not (out / "board.pdf").exists()


@pytest.mark.slow
def test_build_with_inert_override_prints_the_text(tmp_path):
    rc, out = _build(tmp_path, "<p>{{ '<b>{{ 7*7 }}</b>' }}</p>")
    assert rc in (0, 1)
    text = " ".join(p.extract_text() for p in PdfReader(out / "board.pdf").pages)
    assert "<b>{{ 7*7 }}</b>" in " ".join(text.split())
