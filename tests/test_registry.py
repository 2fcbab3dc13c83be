"""Tests that guard the codebase itself: the metric registry and the kinds stay complete."""

import pytest

from rcdoc.analysis import evaluate
from rcdoc.kinds import KINDS
from rcdoc.analysis.metrics import METRICS
from rcdoc.input.quantities import UNITS

REQUIRED = ("NAME", "TITLE", "ROLES", "OPTIONS", "PASSBAND", "HEADLINE", "parse_options",
            "check_roles", "metrics", "build", "characteristic_hz", "schematic")


@pytest.mark.parametrize("name", list(METRICS))
def test_every_metric_has_unit_label_and_definition(name):
    m = METRICS[name]
    assert m.name == name
    assert m.unit in UNITS, f"{name}: unit {m.unit!r} is not a quantity unit"
    assert m.label and m.description and m.json_unit


@pytest.mark.parametrize("kind", list(KINDS))
def test_every_kind_provides_the_interface(kind):
    mod = KINDS[kind]
    for attr in REQUIRED:
        assert hasattr(mod, attr), f"{kind} lacks {attr}"
    assert mod.NAME == kind
    assert mod.PASSBAND in ("low", "high", "band", "band-stop")
    assert isinstance(mod.TITLE, str) and mod.TITLE
    for name in mod.HEADLINE:
        assert name in METRICS, f"{kind}: headline metric {name} is not registered"


@pytest.mark.parametrize("kind", [k for k in KINDS if not hasattr(KINDS[k], "analyse")])
def test_every_metric_a_filter_kind_offers_is_computed(kind):
    # Filter kinds go through the Evaluator: each offered metric needs its method there.
    from rcdoc.input.model import Drive
    offered = KINDS[kind].metrics({"passband": "band"}, Drive(kind="pwm", amplitude_v=1.0,
                                                               frequency_hz=1e3, duty=0.5))
    for name in offered:
        assert name in METRICS, f"{kind} offers unregistered metric {name}"
        assert callable(getattr(evaluate.Evaluator, name, None)), f"no Evaluator.{name}"
