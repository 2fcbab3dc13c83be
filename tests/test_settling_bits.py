"""Settling to half an LSB: of the step's own final value, or of a converter's full scale.

Source: the first-order step response v(t) = V·(1 − e^(−t/τ)), τ = RC, stays
within a band b of its final value from t = τ·ln(V/b) on (textbook RC
charging). Half an LSB of N bits of the step itself is b = V/2^(N+1), so
t = τ·ln(2^(N+1)) (12 bits: 13·ln 2 = 9.01 τ); against a full scale FS the
band is b = FS/2^(N+1), so t = τ·ln(V_step/(FS/2^(N+1))).
"""

import math

import pytest

from rcdoc.errors import ProjectError

from boards import analyse_one, load

R, C = 1000.0, 1e-6
TAU = R * C


def _stage(step: str, check: str) -> str:
    return f"""
[[stage]]
id = "adc"
title = "ADC input"
kind = "rc-lowpass"
drive = {{ step = "{step}" }}
parts.r = {{ value = "1k", tolerance = "1%" }}
parts.c = {{ value = "1 uF", tolerance = "1%", dielectric = "C0G" }}
[[stage.check]]
metric = "settling"
{check}
max = "1 s"
"""


def _settling(result, detail):
    m = next(m for m in result.metrics if m.name == "settling" and m.detail == detail)
    return m


def test_twelve_bits_of_the_step_is_nine_rc(tmp_path):
    # Textbook: τ·ln(2^13) = 9.01 τ when the step is the full scale.
    r = analyse_one(tmp_path, _stage("3.3 V", "bits = 12"), "samples = 20")
    m = _settling(r, "12 bits")
    assert m.nominal == pytest.approx(TAU * math.log(2 ** 13), rel=2e-3)
    assert m.nominal == pytest.approx(9.01 * TAU, rel=2e-3)


def test_full_scale_equal_to_the_step_gives_the_same_time(tmp_path):
    # Textbook: with the step equal to the full scale both bands are 3.3 V/2^13.
    r = analyse_one(tmp_path, _stage("3.3 V", 'bits = 12\nfull_scale = "3.3 V"'), "samples = 20")
    m = _settling(r, "12 bits of 3.3 V")
    assert m.nominal == pytest.approx(TAU * math.log(2 ** 13), rel=2e-3)


def test_small_step_judged_against_full_scale(tmp_path):
    # Textbook: a 0.63 V step to half an LSB of 12 bits of 3.3 V, band 3.3/2^13:
    # t = τ·ln(0.63/(3.3/2^13)) = 7.35 τ, while against its own 0.63 V it is 9.01 τ.
    stages = _stage("0.63 V", 'bits = 12\nfull_scale = "3.3 V"') + """
[[stage.check]]
metric = "settling"
bits = 12
max = "1 s"
"""
    r = analyse_one(tmp_path, stages, "samples = 20")
    fs = _settling(r, "12 bits of 3.3 V")
    own = _settling(r, "12 bits")
    expected = TAU * math.log(0.63 / (3.3 / 2 ** 13))
    assert fs.nominal == pytest.approx(expected, rel=2e-3)
    assert own.nominal == pytest.approx(TAU * math.log(2 ** 13), rel=2e-3)
    assert fs.nominal < own.nominal - TAU      # 1.66 τ apart: ln(3.3/0.63)


def test_full_scale_check_fails_when_too_slow(tmp_path):
    # Same closed form: 7.35 τ = 7.35 ms is above a 7 ms limit at every sample (R, C ±1 %
    # move it by at most 2 %, to 7.2 ms at the lowest).
    text = _stage("0.63 V", 'bits = 12\nfull_scale = "3.3 V"').replace('max = "1 s"',
                                                                      'max = "7 ms"')
    r = analyse_one(tmp_path, text, "samples = 50")
    assert r.verdicts[0].status == "fail"
    assert r.verdicts[0].detail == "12 bits of 3.3 V"


@pytest.mark.parametrize("check, key", [
    ('within = "1%"\nfull_scale = "3.3 V"', "full_scale"),
    ('bits = 12\nfull_scale = "10 kHz"', "full_scale"),
    ('bits = 12\nfull_scale = "0 V"', "full_scale"),
])
def test_full_scale_is_validated(tmp_path, check, key):
    with pytest.raises(ProjectError) as e:
        load(tmp_path, _stage("1 V", check))
    assert e.value.path.endswith(f"check[1].{key}")


def test_full_scale_belongs_to_settling(tmp_path):
    text = _stage("1 V", "bits = 12").replace('metric = "settling"\nbits = 12',
                                              'metric = "rise_time"\nfull_scale = "3.3 V"')
    with pytest.raises(ProjectError) as e:
        load(tmp_path, text)
    assert e.value.path.endswith("check[1].full_scale")
