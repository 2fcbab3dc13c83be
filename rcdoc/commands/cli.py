"""The command line: ``rcdoc build``, ``rcdoc check`` (and the other commands).

Thin: parses options, calls the library, prints. A ProjectError becomes one
line on stderr and exit status 2; a failed check, exit status 1.
"""

from __future__ import annotations

import argparse
import os
import sys
from concurrent.futures import BrokenExecutor
from pathlib import Path

from rcdoc import __version__
from rcdoc.errors import ProjectError

EXIT_OK, EXIT_FAIL, EXIT_INPUT = 0, 1, 2
# The run could not end: a worker process was killed (by the system for want of
# memory, say). Not 1 (a check failed) nor 2 (the input is wrong).
EXIT_BROKEN = 3


class _Parser(argparse.ArgumentParser):
    def error(self, message):          # usage mistakes are input mistakes: exit 2
        self.print_usage(sys.stderr)
        print(f"rcdoc: error: {message}", file=sys.stderr)
        raise SystemExit(EXIT_INPUT)


def _positive_int(text: str) -> int:
    try:
        v = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"'{text}' is not a whole number")
    if v < 0:
        raise argparse.ArgumentTypeError("must not be negative")
    return v


def make_parser() -> argparse.ArgumentParser:
    p = _Parser(prog="rcdoc", description="Design notes for the RC networks on a board.")
    p.add_argument("--version", action="version", version=f"rcdoc {__version__}")
    sub = p.add_subparsers(dest="command", required=True, parser_class=_Parser)

    def common(sp):
        sp.add_argument("files", nargs="+", metavar="FILE", help="project files (TOML)")
        sp.add_argument("--samples", type=_positive_int, help="Monte Carlo samples per stage")
        sp.add_argument("--seed", type=_positive_int, help="random seed")
        sp.add_argument("--quiet", action="store_true", help="print nothing but errors")
        sp.add_argument("--jobs", type=_positive_int, default=None,
                        help="parallel processes (default: the machine's cores)")

    b = sub.add_parser("build", help="analyse and write the PDF note and JSON summary")
    common(b)
    b.add_argument("-o", "--output", metavar="DIR", help="output folder (default: build/ "
                   "beside each project file)")
    b.add_argument("--templates", metavar="DIR", help="folder of templates that override "
                   "the shipped ones")
    b.add_argument("--since", metavar="REV", help="add a 'changes since REV' section: the "
                   "same file at git revision REV, compared")
    c = sub.add_parser("check", help="analyse and judge the checks; no PDF")
    common(c)
    c.add_argument("--junit", metavar="FILE", help="write a JUnit XML report")
    c.add_argument("--json", metavar="PATH", help="write the JSON summary (with several "
                   "project files: a folder, one <stem>.json each)")
    c.add_argument("--annotations", action="store_true", help="print one CI annotation "
                   "line (::error file=...,line=...) per failed check on stdout")
    c.add_argument("-o", "--output", metavar="DIR", help="the build's output folder, whose "
                   "analysis cache is read and filled (default: build/ beside each file)")
    d = sub.add_parser("diff", help="what changed between two revisions of a project")
    d.add_argument("old", metavar="OLD", help="project file, or git:REV for NEW at a git revision")
    d.add_argument("new", metavar="NEW", help="project file")
    d.add_argument("--samples", type=_positive_int, help="Monte Carlo samples per stage")
    d.add_argument("--seed", type=_positive_int, help="random seed")
    d.add_argument("--jobs", type=_positive_int, default=None,
                   help="parallel processes (default: the machine's cores)")
    d.add_argument("--json", metavar="FILE", help="write the comparison as JSON")
    d.add_argument("--fail-on", choices=["regression"], default=None,
                   help="exit 1 when a check went from pass to fail, a yield fell or a "
                   "stage became unstable")
    d.add_argument("-o", "--output", metavar="DIR", help="the build's output folder, whose "
                   "analysis cache is read and filled (default: build/ beside each file)")
    i = sub.add_parser("init", help="write a commented starting project file")
    i.add_argument("file", metavar="FILE", nargs="?", default=None,
                   help="file to create (default: project.toml); never overwritten")
    return p


def _analyse(project, args, **kw):
    """One project's analysis with its progress on stderr (nothing with --quiet)."""
    from rcdoc.commands.build import analyse_project
    from rcdoc.commands.terminal import Progress
    progress = None if getattr(args, "quiet", False) else Progress()
    if progress is not None:
        progress.start(project.file, len(project.stages))
    try:
        return analyse_project(project, jobs=_jobs(args),
                               on_done=progress.done if progress else None, **kw)
    finally:
        if progress is not None:
            progress.stop()


def _say(text: str) -> None:
    """A result line on stdout, in what the console can encode."""
    from rcdoc.commands.terminal import for_console
    print(for_console(text, sys.stdout), flush=True)


def _jobs(args) -> int:
    """--jobs, defaulting to the machine's cores."""
    return args.jobs or os.cpu_count() or 1


def cmd_build(args, pool) -> int:
    """``pool``: the command's pool, started by main before anything else (_started_pool)."""
    with pool:
        return _build_loaded(args, pool)


def _started_pool(args):
    """A build's pool: one for every file. Its fork server starts first thing, so
    that its imports (about 0.4 s of CPU) run beside this process's own; it is
    stopped unused if no stage is to be analysed or the command fails before any
    work."""
    from rcdoc.commands.workers import WorkerPool
    pool = WorkerPool(_jobs(args), draw=True)
    pool.warm(before_fork=_load_build)
    return pool


def _load_build() -> None:
    """What the workers need and this process imports next anyway: imported before
    the fork server is forked from this process, it is the server's too."""
    import rcdoc.commands.build  # noqa: F401


def _build_loaded(args, pool) -> int:
    from rcdoc.commands.build import check_note_paths, load_all, output_dir, stages_to_analyse
    template_dirs = []
    if args.templates:
        tdir = Path(args.templates)
        if not tdir.exists():
            raise ProjectError(f"the templates folder '{tdir}' does not exist", path="--templates")
        if not tdir.is_dir():
            raise ProjectError(f"'{tdir}' is not a folder of templates", path="--templates")
        _check_template_syntax(tdir)
        template_dirs.append(tdir)
    if args.output and Path(args.output).exists() and not Path(args.output).is_dir():
        # Refused before any work, so the file named is left as it was.
        raise ProjectError("the output folder given with -o is a file, not a folder",
                           file=str(args.output))
    projects = load_all(args.files, samples=args.samples, seed=args.seed)
    _check_distinct_outputs(projects, args.output)
    for p in projects:
        check_note_paths(p, output_dir(p.file, args.output))
    if not any(stages_to_analyse(p, output_dir(p.file, args.output)) for p in projects):
        pool.cool()          # its CPU would be spent for nothing
    return _build_checked(args, projects, template_dirs, pool)


def _build_checked(args, projects, template_dirs, pool) -> int:
    from rcdoc.commands.renderer import require_renderer
    for notice in require_renderer():   # a missing system library: one line, before any work
        if not args.quiet:
            print(f"rcdoc: note: {notice}", file=sys.stderr)
    olds, commits = [], []
    if args.since:               # read every old revision before anything is written
        from rcdoc.commands.diff import read_at_revision
        from rcdoc.commands.since import resolve_commit
        commits = [resolve_commit(p.file, args.since) for p in projects]
        olds = [read_at_revision(p.file, args.since, samples=args.samples, seed=args.seed)
                for p in projects]
    return _build_all(args, projects, olds, commits, template_dirs, pool)


def _build_all(args, projects, olds, commits, template_dirs, pool) -> int:
    from rcdoc.commands.build import output_dir, write_outputs
    from rcdoc.commands.terminal import print_outcome
    worst = EXIT_OK
    for k, project in enumerate(projects):
        out_dir = output_dir(project.file, args.output)
        # Stages are analysed and drawn together (in --jobs processes), cached in out_dir.
        outcome = _analyse(project, args, draw=True, out_dir=out_dir,
                           template_dirs=template_dirs, pool=pool, front=not args.since)
        extra = []
        changes = None           # right after the summary, named on the cover
        if args.since:
            from rcdoc.commands.diff import compare
            from rcdoc.commands.since import changes_section
            old = _analyse(olds[k], args, pool=pool)
            changes = changes_section(compare(olds[k], old.results, project, outcome.results,
                                              old_label=f"git:{commits[k].short}"), commits[k])
        try:
            pdf, js = write_outputs(outcome, out_dir, template_dirs=template_dirs,
                                    extra_appendix=extra, changes=changes)
        except OSError as exc:     # e.g. no permission: one line, not a traceback
            raise ProjectError(f"cannot write the note: {exc.strerror or exc}",
                               file=str(exc.filename or out_dir)) from exc
        if not args.quiet:
            print_outcome(outcome)
            _say(f"wrote {pdf} and {js}")
            if outcome.missing_glyphs:
                from rcdoc.note.glyphs import listed
                print(f"rcdoc: note: {project.file}: no installed font draws "
                      f"{listed(outcome.missing_glyphs)}; the note shows empty boxes in their "
                      "place (install a font that has them)", file=sys.stderr)
        if outcome.status != "pass":
            worst = EXIT_FAIL
    return worst


def _check_distinct_outputs(projects, output) -> None:
    """Two files that would write the same note (same stem, same -o) are an input
    error before anything is written: one would overwrite the other and they
    would share one build cache."""
    from rcdoc.commands.build import output_dir
    seen: dict[Path, str] = {}
    for p in projects:
        target = (output_dir(p.file, output) / f"{Path(p.file).stem}.pdf").resolve()
        if target in seen:
            raise ProjectError(f"writes the same note as '{seen[target]}' ({target}); give "
                               "the files different names or build them into different "
                               "folders (-o)", file=p.file)
        seen[target] = p.file


def cmd_check(args) -> int:
    from rcdoc.commands.build import WorkerPool, load_all, output_dir
    from rcdoc.commands.terminal import print_outcome
    from rcdoc.files import refuse_folder, write_atomic
    from rcdoc.note.summary import junit
    projects = load_all(args.files, samples=args.samples, seed=args.seed)
    if args.junit:
        refuse_folder(args.junit, "this is a folder; give the file to write", "--junit")
    if args.json:                # where each summary goes, settled before any analysis
        from rcdoc.note.machine import json_targets
        json_paths = json_targets(args.json, [p.file for p in projects])
    outcomes = []
    with WorkerPool(_jobs(args), draw=False) as pool:     # one pool for every file
        for project in projects:
            # The analysis half of build's cache: a check after a build analyses nothing.
            outcome = _analyse(project, args, out_dir=output_dir(project.file, args.output),
                               pool=pool)
            outcomes.append(outcome)
            if not args.quiet:
                print_outcome(outcome)
    if args.junit:
        try:
            write_atomic(Path(args.junit),
                         junit([(o.project, o.results) for o in outcomes],
                               [o.seconds for o in outcomes]).encode("utf-8"))
        except OSError as exc:     # e.g. a folder that cannot be written: one line, exit 2
            raise ProjectError(f"cannot write the JUnit report: {exc.strerror or exc}",
                               path="--junit", file=str(args.junit)) from exc
    if args.json:
        from rcdoc.commands.regression import write_json
        from rcdoc.note.summary import summary
        for o, path in zip(outcomes, json_paths):
            write_json(str(path), summary(o.project, o.results))
    if args.annotations:
        from rcdoc.note.machine import annotation_lines
        from rcdoc.input.positions import project_lines
        for o in outcomes:
            for line in annotation_lines(o.project, o.results, project_lines(o.project)):
                print(line)
    for o in outcomes:
        o.commit_cache()
    return EXIT_FAIL if any(o.status != "pass" for o in outcomes) else EXIT_OK


def cmd_diff(args) -> int:
    from rich.console import Console

    from rcdoc.commands.diff_render import render_rich
    from rcdoc.commands.regression import diff_json, run_diff, write_json
    from rcdoc.files import refuse_folder
    if args.json:
        refuse_folder(args.json, "this is a folder; give the file to write", "--json")
    d, regs = run_diff(args.old, args.new, samples=args.samples, seed=args.seed,
                       jobs=_jobs(args), output=args.output)
    render_rich(d, Console())
    if args.json:
        write_json(args.json, diff_json(d, regs))
    if args.fail_on == "regression" and regs:
        print(f"rcdoc: {len(regs)} regression{'' if len(regs) == 1 else 's'}", file=sys.stderr)
        return EXIT_FAIL
    return EXIT_OK


def cmd_init(args) -> int:
    from rcdoc.commands.init import write_starter
    path = write_starter(args.file)
    _say(f"wrote {path}; edit it, then run: rcdoc build {path}")
    return EXIT_OK


def rich_escape(text: str) -> str:
    from rich.markup import escape
    return escape(text)


def one_line(text: str) -> str:
    """The message on one line: control characters (newlines, terminal escapes
    that a key or value in the file may hold) written as escapes."""
    return "".join(ch if ch.isprintable() or ch == " " else ascii(ch)[1:-1] for ch in text)


def _check_template_syntax(folder: Path) -> None:
    """Parse every template in a --templates folder before any work is done,
    so a syntax mistake costs no analysis and names its file and line."""
    import jinja2
    env = jinja2.Environment()
    for path in sorted(folder.iterdir()):
        if path.suffix not in (".html", ".css") or not path.is_file():
            continue
        try:
            env.parse(path.read_text(encoding="utf-8"), name=path.name, filename=str(path))
        except UnicodeDecodeError:
            raise ProjectError("the template is not UTF-8 text", file=str(path)) from None
        except OSError as exc:
            raise ProjectError(f"cannot read the template: {exc.strerror}",
                               file=str(path)) from None
        except jinja2.TemplateSyntaxError as exc:
            raise ProjectError(f"line {exc.lineno}: {exc.message}", file=str(path)) from None


# The commands but build, which main starts with its pool (cmd_build).
COMMANDS = {"check": cmd_check, "diff": cmd_diff, "init": cmd_init}


def main(argv: list[str] | None = None) -> int:
    from rcdoc.commands.terminal import third_party_quiet
    from rcdoc.files import Terminated, interrupts
    args = make_parser().parse_args(argv)
    try:
        # A build's pool starts before the handlers and filters below are set: in
        # the rcdoc command its fork server is a fork of this process
        # (rcdoc.commands.forked_server), which must begin as the command began.
        pool = _started_pool(args) if args.command == "build" else None
        # Ctrl-C at any moment: status 130, no output replaced. The renderer's
        # libraries' warnings (fonts) are captured: results on stdout, errors on stderr.
        with interrupts(), third_party_quiet():
            if pool is not None:
                return cmd_build(args, pool)
            return COMMANDS[args.command](args)
    except ProjectError as exc:
        print(f"rcdoc: error: {one_line(str(exc))}", file=sys.stderr)
        return EXIT_INPUT
    except BrokenExecutor:
        print("rcdoc: error: a worker process ended abruptly (killed, or out of memory); "
              "nothing was written; run again, or with --jobs 1", file=sys.stderr)
        return EXIT_BROKEN
    except Terminated:          # SIGTERM: workers stopped as for Ctrl-C; 128 + 15
        print("rcdoc: terminated; nothing was written", file=sys.stderr)
        return 143
    except KeyboardInterrupt:
        print("rcdoc: interrupted; nothing was written", file=sys.stderr)
        return 130


def entry() -> None:
    """The ``rcdoc`` command (and ``python -m rcdoc``): main, then the process ends."""
    from rcdoc import teardown
    from rcdoc.commands import forked_server
    from rcdoc.commands.collector import tune
    forked_server.remember_start()
    tune()
    teardown.skip()         # _leave ends the process: what lives to the end is not freed
    _leave(main())


def _leave(status: int) -> None:
    """End the command's process at once, its work done: every file it wrote is
    closed (rcdoc.files), its threads and workers are ended, and what is left is
    the interpreter's teardown, which frees every module and array one by one
    (about 0.3 s of CPU after a build: 8 % of a one-value rebuild) and the
    fork server's, which would follow after the command, holding its stderr.
    So the output is flushed, the fork server stopped and the process ended
    (os._exit). Under a tracer or profiler (coverage, cProfile), whose results
    are written at the interpreter's exit, the usual exit is taken instead;
    main() itself returns to its caller as usual."""
    for stream in (sys.stdout, sys.stderr):
        try:
            stream.flush()
        except (OSError, ValueError):     # a closed pipe: what it lost is lost either way
            pass
    if sys.gettrace() is not None or sys.getprofile() is not None or "coverage" in sys.modules:
        raise SystemExit(status)
    # What the interpreter's exit would have run of multiprocessing's (Python 3.8 to
    # 3.13): finalizers that unlink the pool's semaphores; without them its
    # resource tracker warns of "leaked semaphore objects" on stderr.
    from multiprocessing import util
    exit_function = getattr(util, "_exit_function", None)
    if exit_function is not None:
        exit_function()
    from rcdoc.commands.workers import stop_fork_server
    stop_fork_server()
    os._exit(status)
