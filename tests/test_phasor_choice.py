"""Tests of rcdoc.analysis.phasor_choice: the frequency a phasor diagram is drawn at.

Checks against textbook closed forms of first-order RC networks (H = 1 / (1 + j f/fc)).
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import pytest

from boards import analyse_one
from rcdoc.analysis import phasor_choice as pc
from rcdoc.analysis.network import Element, Network
from rcdoc.analysis.results import Phasors
from rcdoc.note.page import phasor_figure

R, C = 10e3, 10e-9
FC = 1.0 / (2.0 * math.pi * R * C)          # textbook RC corner, 1.59 kHz
F = np.logspace(0.0, 7.0, 701)              # 100 points per decade


def test_input_output_spread_of_a_low_pass_follows_the_closed_form():
    # First-order low-pass, phasors V_in = 1 and V_out = 1 / (1 + j f/fc) (textbook).
    # The phase between them is atan(f/fc); V_out counts while |V_out| >= 0.1 (20 dB
    # below V_in), i.e. up to f/fc = sqrt(99); beyond that it is too small to draw.
    x = F / FC
    phasors = np.array([np.ones_like(x, dtype=complex), 1.0 / (1.0 + 1j * x)])
    spread, balance = pc.phase_spread(phasors)
    inside = x <= math.sqrt(99.0)
    np.testing.assert_allclose(spread[inside], np.degrees(np.arctan(x[inside])), atol=1e-9)
    assert np.all(spread[~inside] == 0.0)
    np.testing.assert_allclose(balance[inside], 1.0 / np.sqrt(1.0 + x[inside] ** 2), rtol=1e-12)

    choice = pc.choose(F, phasors)
    largest = math.degrees(math.atan(x[inside].max()))      # below atan(sqrt(99)) = 84.26°
    assert choice.freq_hz <= math.sqrt(99.0) * FC
    assert largest - pc.TIE_DEG - 1e-9 <= choice.spread_deg <= largest + 1e-9
    assert choice.spread_deg == pytest.approx(math.degrees(math.atan(choice.freq_hz / FC)), abs=1e-9)


def test_antiphase_counts_as_one_line():
    # Inverting first-order low-pass, V_out = -2 / (1 + j f/fc) (textbook): at low
    # frequency the output is opposite the input, a collapsed drawing; the angle between
    # their lines is atan(f/fc), as for the non-inverting stage, and never 180°.
    x = F / FC
    phasors = np.array([np.ones_like(x, dtype=complex), -2.0 / (1.0 + 1j * x)])
    spread, _ = pc.phase_spread(phasors)
    inside = 2.0 / np.sqrt(1.0 + x ** 2) >= 0.2          # within 20 dB of the largest (2 V)
    np.testing.assert_allclose(spread[inside], np.degrees(np.arctan(x[inside])), atol=1e-9)
    assert spread.max() <= 90.0


def test_divider_is_drawn_at_its_corner():
    # RC low-pass walked R then C to ground: V_R and V_C are 90° apart at every
    # frequency (textbook phasor triangle); the two are equal in size, so both arrows
    # of the right angle are best seen, at f = 1 / (2 pi R C).
    net = Network(elements=(Element("r", "R", "in", "out"), Element("c", "C", "out", "0")),
                  drive="in", output="out", path=("r", "c"))
    values = {"r": np.array([R]), "c": np.array([C])}
    choice = pc.phasor_frequency(net, values, F)
    assert choice.spread_deg == pytest.approx(90.0, abs=1e-6)
    assert choice.freq_hz == pytest.approx(FC, rel=0.012)       # within one grid step (2.3 %)


def test_drawn_phasors_follow_the_walk():
    # Closed path: V_R + V_C = V_source at every frequency (Kirchhoff's voltage law).
    net = Network(elements=(Element("c", "C", "out", "0"), Element("r", "R", "out", "in")),
                  drive="in", output="out", path=("r", "c"))
    values = {"r": np.array([R]), "c": np.array([C])}
    p = pc.drawn_phasors(net, values, F)
    assert p.shape == (3, F.size)
    np.testing.assert_allclose(p[0] + p[1], p[2], atol=1e-12)
    np.testing.assert_allclose(p[1], 1.0 / (1.0 + 1j * F / FC), rtol=1e-9)


def test_resistive_divider_is_in_phase_everywhere():
    # Two resistors: every voltage is real and positive at every frequency (Ohm's law).
    net = Network(elements=(Element("r1", "R", "in", "out"), Element("r2", "R", "out", "0")),
                  drive="in", output="out", path=("r1", "r2"))
    values = {"r1": np.array([R]), "r2": np.array([2 * R])}
    choice = pc.phasor_frequency(net, values, F)
    assert choice.spread_deg == pytest.approx(0.0, abs=1e-9)


def test_no_path_no_choice():
    net = Network(elements=(Element("r", "R", "in", "out"), Element("c", "C", "out", "0")),
                  drive="in", output="out")
    assert pc.phasor_frequency(net, {"r": np.array([R]), "c": np.array([C])}, F) is None


LOWPASS_STAGE = """
[[stage]]
id = "s"
title = "RC low-pass"
kind = "rc-lowpass"
parts.r = { ref = "R1", value = "10k", tolerance = "1%" }
parts.c = { ref = "C1", value = "100n", tolerance = "1%", dielectric = "C0G" }
"""


def test_pipeline_draws_a_low_pass_at_its_corner_and_says_why(tmp_path):
    res = analyse_one(tmp_path, LOWPASS_STAGE, "samples = 20")
    # Textbook corner 1 / (2 pi R C) = 159.2 Hz; the sweep's step is under 13 %.
    fc = 1.0 / (2.0 * math.pi * 10e3 * 100e-9)
    assert res.phasors.freq_hz == pytest.approx(fc, rel=0.13)
    assert res.phasors.spread_deg == pytest.approx(90.0, abs=1e-6)
    block = phasor_figure(res)
    assert block["type"] == "figure"
    assert "largest angle between two of them is 90.0°" in block["caption"]
    # The caption names the frequency the diagram is drawn at.
    assert block["title"].removeprefix("Phasors at ") in block["caption"]


def test_phasors_in_phase_everywhere_get_one_sentence(tmp_path):
    res = analyse_one(tmp_path, LOWPASS_STAGE, "samples = 20")
    # In phase at every swept frequency (spread under 1°): a sentence, no drawing.
    flat = Phasors(freq_hz=res.phasors.freq_hz, reference="source",
                   vectors=(("r", "R", 0.5 + 0j), ("c", "C", 0.5 + 0j)), closing=None,
                   current=1e-4 + 0j, source=1.0 + 0j, output=0.5 + 0j, spread_deg=0.0)
    block = phasor_figure(dataclasses.replace(res, phasors=flat))
    assert block["type"] == "text"
    assert "At every frequency of the sweep" in block["paragraphs"][0]
