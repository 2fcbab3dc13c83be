"""Stage kinds: one small module each, found automatically, checked at registration.

A kind module defines the names listed in ``rcdoc.kinds.base.KindModule``;
dropping a new module into this package is all it takes to add a kind (see
DEVELOPERS.md). ``register`` checks the interface when the kind is
registered (at import for the modules of this package) and refuses a kind
that misses a name, has one of the wrong type, or names a metric the metric
registry (rcdoc.analysis.metrics.METRICS) does not hold; the error names the
module.

The layers below (input, analysis) do not import this package: they receive
the kind registry or a kind object. The conveniences here (``load_project``,
``analyse_stage``, ``kind_of``) pass it for callers above.
"""

from __future__ import annotations

import importlib
import inspect
import pkgutil

from rcdoc.analysis import analyse as _analyse
from rcdoc.analysis.evaluate import Evaluator
from rcdoc.analysis.metrics import METRICS
from rcdoc.input import project as _project
from rcdoc.input.model import Drive

KINDS: dict = {}

PASSBANDS = ("low", "high", "band", "band-stop")
_STRINGS = ("NAME", "TITLE")
_TUPLES = ("ROLES", "OPTIONS", "HEADLINE")
_FUNCTIONS = ("parse_options", "check_roles", "metrics", "build", "characteristic_hz",
              "schematic")
# Drives a kind's metrics() is asked about at registration: none, a step, a PWM wave.
_PROBE_DRIVES = (None, Drive("step", 1.0), Drive("pwm", 1.0, 1e3, 0.5))


class KindError(TypeError):
    """A kind module that does not provide the kind interface (a programming error)."""


def check_kind(module) -> None:
    """Raise KindError naming ``module`` when it does not provide the kind interface."""
    who = f"stage kind module {getattr(module, '__name__', module)!r}"
    for name in _STRINGS:
        value = getattr(module, name, None)
        if not isinstance(value, str) or not value:
            raise KindError(f"{who}: {name} must be a non-empty string")
    for name in _TUPLES:
        value = getattr(module, name, None)
        if not isinstance(value, tuple) or not all(isinstance(x, str) for x in value):
            raise KindError(f"{who}: {name} must be a tuple of strings")
    passband = getattr(module, "PASSBAND", None)
    if not (callable(passband) or passband in PASSBANDS):
        raise KindError(f"{who}: PASSBAND must be one of {', '.join(PASSBANDS)} "
                        "or a function of the stage")
    for name in _FUNCTIONS + (("analyse",) if hasattr(module, "analyse") else ()):
        if not callable(getattr(module, name, None)):
            raise KindError(f"{who}: {name}() is missing")
    if hasattr(module, "analyse") and not _takes_bode(module.analyse):
        raise KindError(f"{who}: analyse() must take a 'bode' keyword "
                        "(analyse(stage, analysis, bode=True))")
    evaluator = getattr(module, "EVALUATOR", None)
    if evaluator is not None and not (isinstance(evaluator, type)
                                      and issubclass(evaluator, Evaluator)):
        raise KindError(f"{who}: EVALUATOR must be a subclass of "
                        "rcdoc.analysis.evaluate.Evaluator")
    _check_metric_names(module, who, "HEADLINE", module.HEADLINE)
    for drive in _PROBE_DRIVES:
        try:
            offered = tuple(module.metrics({}, drive))
        except Exception as exc:      # noqa: BLE001 - reported with the module's name
            raise KindError(f"{who}: metrics({{}}, {drive}) raised {exc!r}") from exc
        _check_metric_names(module, who, "metrics()", offered)


def _takes_bode(fn) -> bool:
    """Whether ``fn`` can be called with a ``bode`` keyword."""
    try:
        params = inspect.signature(fn).parameters.values()
    except (TypeError, ValueError):       # a callable without a signature: leave it be
        return True
    return any(p.name == "bode" and p.kind in (p.POSITIONAL_OR_KEYWORD, p.KEYWORD_ONLY)
               or p.kind is p.VAR_KEYWORD for p in params)


def _check_metric_names(module, who: str, where: str, names) -> None:
    unknown = [n for n in names if n not in METRICS]
    if unknown:
        raise KindError(f"{who}: {where} names {', '.join(map(repr, unknown))}, not in "
                        "the metric registry (rcdoc.analysis.metrics.METRICS)")


def register(module) -> None:
    """Check ``module``'s kind interface and add it to KINDS under its NAME."""
    check_kind(module)
    other = KINDS.get(module.NAME)
    if other is not None and other is not module:
        raise KindError(f"stage kind module {module.__name__!r}: kind '{module.NAME}' is "
                        f"already registered by {other.__name__!r}")
    KINDS[module.NAME] = module


def unregister(name: str) -> None:
    """Remove a kind registered under ``name`` (tests register kinds of their own)."""
    KINDS.pop(name, None)


def kind_of(stage):
    """The kind module of a validated stage."""
    return KINDS[stage.kind]


def load_project(file, **kw):
    """rcdoc.input.project.load_project with this registry and the metric registry."""
    return _project.load_project(file, kinds=KINDS, metrics=METRICS, **kw)


def analyse_stage(stage, analysis, bode: bool = True):
    """rcdoc.analysis.analyse.analyse_stage with the stage's kind looked up here
    (``bode`` False: the Bode band left out, for commands that draw nothing)."""
    return _analyse.analyse_stage(stage, analysis, kind_of(stage), bode=bode)


def complete_bode(result, analysis):
    """rcdoc.analysis.analyse.complete: the Bode band a result was analysed without."""
    return _analyse.complete(result, analysis, kind_of(result.stage))


for _info in sorted(pkgutil.iter_modules(__path__), key=lambda m: m.name):
    if _info.name.startswith("_") or _info.name in ("base", "recipes"):
        continue
    _mod = importlib.import_module(f"{__name__}.{_info.name}")
    if hasattr(_mod, "NAME"):
        register(_mod)
