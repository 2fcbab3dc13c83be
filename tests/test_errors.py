"""The catalogue of user mistakes: every one gives exit status 2 and one line.

Each entry is a project file (TOML text, or bytes), the key path the message
must name, and words the message must hold. Every entry runs ``rcdoc build``
in-process and checks what the issue on hardening asks of an input mistake
(common practice for command-line tools run in CI):

- exit status 2;
- exactly one line on stderr, naming the file and the key path, no traceback,
  nothing on stdout;
- nothing written: a note (.pdf and .json) already in the output folder keeps
  its bytes, and no other file appears anywhere under the test's folder.
"""

from __future__ import annotations

import os
from pathlib import Path

import pytest

from rcdoc.commands import cli

BOARD = '[board]\nname = "Pump controller"\nrevision = "A"\ndate = "2026-01-01"\n'
ANALYSIS = "[analysis]\nsamples = 20\n"
HEAD = '[[stage]]\nid = "adc0"\ntitle = "ADC input 0"\n'
LOWPASS = 'kind = "rc-lowpass"\nparts.r = { ref = "R1", value = "4k7" }\nparts.c = { ref = "C1", value = "10 nF" }\n'
CORNER = '[[stage.check]]\nmetric = "corner"\nmin = "2 kHz"\nmax = "4 kHz"\n'
NETWORK = (
    'kind = "network"\ninput = "in"\noutput = "out"\n'
    'parts.r1 = { value = "10k" }\nparts.c1 = { value = "10n" }\n'
)

SNUBBER = (
    'kind = "snubber"\nacross = "switch"\nvoltage = "48 V"\nswitching_frequency = "250 kHz"\n'
    'ringing = { frequency = "62 MHz", with_added = "220 pF", frequency_with_added = "31 MHz" }\n'
)


# Known bytes of an earlier note; a failed build must leave them alone.
OLD_PDF = b"%PDF-1.7\n% an earlier note, not to be touched\n%%EOF\n"
OLD_JSON = b'{"format": 1, "status": "pass", "note": "earlier"}\n'


def project(stage_body: str = LOWPASS, *, board: str = BOARD, analysis: str = ANALYSIS,
            head: str = HEAD, extra: str = "") -> str:
    """A project file: the board, the analysis, one stage, and anything extra."""
    return board + analysis + head + stage_body + extra


def lowpass(**replace: str) -> str:
    """The rc-lowpass stage with some of its lines replaced."""
    body = LOWPASS
    for old, new in replace.items():
        body = body.replace(old.replace("_", "."), new)
    return body


def part_r(spec: str) -> str:
    """The rc-lowpass stage with part r written as ``spec``."""
    return LOWPASS.replace('{ ref = "R1", value = "4k7" }', spec)


def part_c(spec: str) -> str:
    return LOWPASS.replace('{ ref = "C1", value = "10 nF" }', spec)


def check(body: str, stage: str = LOWPASS) -> str:
    return stage + "[[stage.check]]\n" + body


def second_stage(**fields: str) -> str:
    return HEAD.replace('"adc0"', f'"{fields.get("id", "adc1")}"') + LOWPASS


# (name, project text or bytes, key path, words the message must hold,
#  extra command-line arguments, extra files {name: text})
CASES = [
    # ---- malformed TOML: the message gives the line and the column
    ("toml-unclosed-table", BOARD.replace("[board]", "[board"), "",
     ["malformed TOML", "line 1", "column"], (), {}),
    ("toml-duplicate-key", BOARD + 'name = "Again"\n', "",
     ["malformed TOML", "line 5", "column"], (), {}),
    ("toml-bad-value", project(lowpass().replace('"4k7"', "4k7")), "",
     ["malformed TOML", "line 11", "column"], (), {}),
    ("toml-not-utf8", BOARD.encode("utf-8") + b'notes = "caf\xe9"\n', "",
     ["not UTF-8"], (), {}),
    ("toml-deeply-nested", BOARD + "notes = " + "[" * 5000 + "]" * 5000 + "\n", "",
     ["nested"], (), {}),
    # ---- missing or unknown tables and keys, with "did you mean"
    ("no-board", ANALYSIS + HEAD + LOWPASS, "board", ["missing"], (), {}),
    ("board-not-a-table", 'board = "Pump"\n' + HEAD + LOWPASS, "board",
     ["expected a table"], (), {}),
    ("board-name-missing", project(board=BOARD.replace('name = "Pump controller"\n', "")),
     "board.name", ["required"], (), {}),
    ("unknown-table", project() + "[analysys]\nseed = 3\n", "analysys",
     ["unknown key", "did you mean 'analysis'"], (), {}),
    ("unknown-board-key", project(board=BOARD.replace("revision", "revison")),
     "board.revison", ["did you mean 'revision'"], (), {}),
    ("unknown-analysis-key", project(analysis="[analysis]\nsample = 20\n"),
     "analysis.sample", ["did you mean 'samples'"], (), {}),
    ("unknown-stage-key", project(head=HEAD + 'titel = "x"\n'), "stage[1].titel",
     ["did you mean 'title'"], (), {}),
    ("unknown-part-key", project(part_r('{ value = "4k7", tolerence = "1%" }')),
     "stage[1].parts.r.tolerence", ["did you mean 'tolerance'"], (), {}),
    ("unknown-check-key", project(check('metric = "corner"\nmaxx = "3 kHz"\n')),
     "stage[1].check[1].maxx", ["did you mean 'max'"], (), {}),
    ("no-stages", BOARD + ANALYSIS, "stage", ["at least one stage"], (), {}),
    # Found by the loader fuzz test: an empty array of stages loaded as a project of none.
    ("empty-stage-array", "stage = []\n" + BOARD + ANALYSIS, "stage", ["at least one stage"],
     (), {}),
    ("stage-id-missing", project(head='[[stage]]\ntitle = "ADC input 0"\n'),
     "stage[1].id", ["required"], (), {}),
    ("stage-kind-missing", project(LOWPASS.replace('kind = "rc-lowpass"\n', "")),
     "stage[1].kind", ["required"], (), {}),
    ("part-value-missing", project(part_r('{ ref = "R1" }')), "stage[1].parts.r.value",
     ["missing"], (), {}),
    # Found by mutating the example file's values; each was a traceback: beyond
    # ~6200 dB, 10 ** (gain / 20) overflowed; a 1e300 V snubber's energy
    # overflowed; a 5e-324 ohm source made the nodal matrix infinite.
    ("amplifier-gain-overflows",
     project('kind = "mfb-lowpass"\namplifier = { gbw = "1 MHz", gain = 1e300 }\n'),
     "stage[1].amplifier.gain", ["out of range"], (), {}),
    ("amplifier-gain-beyond-any-op-amp",
     project('kind = "mfb-lowpass"\namplifier = { gbw = "1 MHz", gain = "7000 dB" }\n'),
     "stage[1].amplifier.gain", ["300 dB", "ideal"], (), {}),
    ("snubber-voltage-1e300", project(SNUBBER.replace('"48 V"', "1e300")),
     "stage[1].voltage", ["out of range"], (), {}),
    ("source-subnormal", project(head=HEAD + "source = 5e-324\n"), "stage[1].source",
     ["out of range"], (), {}),
    ("unknown-amplifier-key",
     project('kind = "mfb-lowpass"\namplifier = { gbw = "1 MHz", slew = "1 V/us" }\n'),
     "stage[1].amplifier.slew", ["unknown key"], (), {}),
    # ---- wrong types
    ("name-not-string", project(board=BOARD.replace('"Pump controller"', "3")),
     "board.name", ["expected a string"], (), {}),
    ("date-not-date", project(board=BOARD.replace('"2026-01-01"', '"1 Jan 2026"')),
     "board.date", ["YYYY-MM-DD"], (), {}),
    ("samples-not-number", project(analysis='[analysis]\nsamples = "many"\n'),
     "analysis.samples", ["whole number"], (), {}),
    ("samples-float", project(analysis="[analysis]\nsamples = 20.5\n"),
     "analysis.samples", ["whole number"], (), {}),
    ("stage-not-array", BOARD + "[stage]\nid = \"a\"\n", "stage", ["[[stage]]"], (), {}),
    ("part-not-table", project(part_r('"4k7"')), "stage[1].parts.r",
     ["expected a table"], (), {}),
    ("parts-not-table", project(head=HEAD + 'kind = "rc-lowpass"\nparts = "r c"\n',
                                stage_body=""),
     "stage[1].parts", ["expected a table"], (), {}),
    ("marks-not-list", project(head=HEAD + 'marks = "50 kHz"\n'), "stage[1].marks",
     ["list"], (), {}),
    ("bom-wins-not-bool", project(analysis='[analysis]\nbom_wins = "yes"\n'),
     "analysis.bom_wins", ["true or false"], (), {}),
    ("value-is-list", project(part_r('{ value = ["4k7", "10k"] }')),
     "stage[1].parts.r.value", ["got a list"], (), {}),
    ("tolerance-is-bool", project(part_r('{ value = "4k7", tolerance = true }')),
     "stage[1].parts.r.tolerance", ["boolean"], (), {}),
    ("checks-not-tables", project(head=HEAD + 'check = "corner"\n'), "stage[1].check",
     ["[[stage.check]]"], (), {}),
    ("title-two-lines", project(head=HEAD.replace('"ADC input 0"', '"""ADC\ninput"""')),
     "stage[1].title", ["one line"], (), {}),
    ("distribution-unknown", project(analysis='[analysis]\ndistribution = "gauss"\n'),
     "analysis.distribution", ["uniform", "normal"], (), {}),
    # ---- wrong units
    ("capacitance-in-hz", project(part_c('{ value = "10 kHz" }')),
     "stage[1].parts.c.value", ["frequency", "capacitance"], (), {}),
    ("resistance-in-farad", project(part_r('{ value = "10 nF" }')),
     "stage[1].parts.r.value", ["capacitance", "resistance"], (), {}),
    ("corner-in-volts", project(check('metric = "corner"\nmin = "2 V"\n')),
     "stage[1].check[1].min", ["voltage", "frequency"], (), {}),
    ("source-in-farad", project(head=HEAD + 'source = "10 nF"\n'), "stage[1].source",
     ["capacitance", "resistance"], (), {}),
    ("step-in-amps", project(head=HEAD + 'drive = { step = "3.3 A" }\n'),
     "stage[1].drive.step", ["current", "voltage"], (), {}),
    ("temperature-in-kelvin",
     project(analysis='[analysis]\ntemperature = ["250 K", "300 K"]\n'),
     "analysis.temperature[0]", ["°C"], (), {}),
    ("unreadable-quantity", project(part_r('{ value = "four k seven" }')),
     "stage[1].parts.r.value", ["resistance"], (), {}),
    # ---- non-finite, zero or negative values
    ("value-nan", project(part_r("{ value = nan }")), "stage[1].parts.r.value",
     ["finite"], (), {}),
    ("value-inf", project(part_c("{ value = inf }")), "stage[1].parts.c.value",
     ["finite"], (), {}),
    ("value-overflows", project(part_c('{ value = "1e999 F" }')), "stage[1].parts.c.value",
     ["out of range"], (), {}),
    ("value-zero", project(part_r('{ value = "0 ohm" }')), "stage[1].parts.r.value",
     ["greater than zero"], (), {}),
    ("value-negative", project(part_r('{ value = "-4k7" }')), "stage[1].parts.r.value",
     ["greater than zero"], (), {}),
    ("load-zero", project(head=HEAD + 'load = { r = "0 ohm" }\n'), "stage[1].load.r",
     ["greater than zero"], (), {}),
    ("pwm-frequency-zero",
     project(head=HEAD + 'drive = { pwm = "3.3 V", frequency = "0 Hz", duty = "50%" }\n'),
     "stage[1].drive.frequency", ["greater than zero"], (), {}),
    ("step-zero", project(head=HEAD + 'drive = { step = "0 V" }\n'), "stage[1].drive.step",
     ["0 V"], (), {}),
    ("duty-full", project(head=HEAD + 'drive = { pwm = "3.3 V", frequency = "20 kHz", '
                                      'duty = "100%" }\n'),
     "stage[1].drive.duty", ["duty"], (), {}),
    ("hazardous-negative", project(board=BOARD + 'hazardous_voltage = "-60 V"\n'),
     "board.hazardous_voltage", ["greater than zero"], (), {}),
    ("mark-zero", project(head=HEAD + 'marks = ["0 Hz"]\n'), "stage[1].marks[0]",
     ["greater than zero"], (), {}),
    ("below-absolute-zero",
     project(analysis='[analysis]\ntemperature = ["-300 °C", "25 °C"]\n'),
     "analysis.temperature[0]", ["absolute zero"], (), {}),
    # ---- impossible tolerances, asymmetric tolerances out of range
    ("tolerance-150pct", project(part_r('{ value = "4k7", tolerance = "150%" }')),
     "stage[1].parts.r.tolerance", ["below 100%"], (), {}),
    ("tolerance-bare-5", project(part_r('{ value = "4k7", tolerance = 5 }')),
     "stage[1].parts.r.tolerance", ["fraction"], (), {}),
    ("tolerance-negative", project(part_r('{ value = "4k7", tolerance = "-5%" }')),
     "stage[1].parts.r.tolerance", ["negative"], (), {}),
    ("tolerance-lone-plus", project(part_r('{ value = "4k7", tolerance = "+5%" }')),
     "stage[1].parts.r.tolerance", ["ambiguous"], (), {}),
    ("tolerance-asym-minus-over", project(part_c('{ value = "10 nF", tolerance = "+80%/-120%" }')),
     "stage[1].parts.c.tolerance", ["minus side"], (), {}),
    ("tolerance-asym-plus-over", project(part_c('{ value = "10 nF", tolerance = "+2000%/-20%" }')),
     "stage[1].parts.c.tolerance", ["1000%"], (), {}),
    ("tolerance-asym-same-sign", project(part_c('{ value = "10 nF", tolerance = "+80%/+20%" }')),
     "stage[1].parts.c.tolerance", ["one side must be +"], (), {}),
    ("yield-above-100", project(check('metric = "corner"\nmax = "4 kHz"\nyield = "101%"\n')),
     "stage[1].check[1].yield", ["100 %"], (), {}),
    ("dc-bias-gain", project(part_c('{ value = "10 nF", dielectric = "X7R", '
                                    'dc_bias = { at = "16 V", change = "+10%" } }')),
     "stage[1].parts.c.dc_bias.change", ["loss"], (), {}),
    ("dielectric-unknown", project(part_c('{ value = "10 nF", dielectric = "X9Q" }')),
     "stage[1].parts.c.dielectric", ["X9Q"], (), {}),
    ("dielectric-on-resistor", project(part_r('{ value = "4k7", dielectric = "C0G" }')),
     "stage[1].parts.r.dielectric", ["capacitors"], (), {}),
    # A class II part's measured temperature point, checked against its EIA-198
    # code: X7R is ±15 % over −55..+125 °C; C0G is class I (it takes a tcr).
    ("temperature-change-outside-band",
     project(part_c('{ value = "10 nF", dielectric = "X7R", '
                    'temperature_change = { at = "85 °C", change = "-20%" } }')),
     "stage[1].parts.c.temperature_change.change", ["band", "X7R"], (), {}),
    ("temperature-change-outside-range",
     project(part_c('{ value = "10 nF", dielectric = "X7R", '
                    'temperature_change = { at = "150 °C", change = "-8%" } }')),
     "stage[1].parts.c.temperature_change.at", ["rated range"], (), {}),
    ("temperature-change-class-i",
     project(part_c('{ value = "10 nF", dielectric = "C0G", '
                    'temperature_change = { at = "85 °C", change = "-1%" } }')),
     "stage[1].parts.c.temperature_change", ["class II"], (), {}),
    ("temperature-change-missing-at",
     project(part_c('{ value = "10 nF", dielectric = "X7R", '
                    'temperature_change = { change = "-8%" } }')),
     "stage[1].parts.c.temperature_change.at", ["missing"], (), {}),
    # ---- unknown kinds; roles missing or extra
    ("kind-typo", project(lowpass(**{'"rc-lowpass"': '"rc-lowpas"'})), "stage[1].kind",
     ["unknown kind", "did you mean 'rc-lowpass'"], (), {}),
    ("kind-unknown", project(lowpass(**{'"rc-lowpass"': '"crystal"'})), "stage[1].kind",
     ["unknown kind", "rc-lowpass"], (), {}),
    ("role-missing", project(LOWPASS.replace('parts.c = { ref = "C1", value = "10 nF" }\n', "")),
     "stage[1].parts.c", ["missing"], (), {}),
    ("role-extra", project(LOWPASS + 'parts.r2 = { value = "1k" }\n'), "stage[1].parts.r2",
     ["not part of this kind"], (), {}),
    ("role-bad-letter", project(LOWPASS + 'parts.x1 = { value = "1k" }\n'),
     "stage[1].parts.x1", ["r, c or l"], (), {}),
    ("sallen-key-rf-alone",
     project('kind = "sallen-key-lowpass"\n' + "".join(
         f'parts.{r} = {{ value = "{v}" }}\n' for r, v in
         (("r1", "10k"), ("r2", "10k"), ("c1", "10n"), ("c2", "10n"), ("rf", "10k")))),
     "stage[1].parts.rg", ["rg"], (), {}),
    ("ladder-gap",
     project('kind = "rc-ladder"\n' + "".join(
         f'parts.{r} = {{ value = "{v}" }}\n' for r, v in
         (("r1", "10k"), ("c1", "10n"), ("r2", "10k"), ("c3", "10n")))),
     "stage[1].parts.c2", ["missing", "r1, c1, r2, c2"], (), {}),
    # ---- unknown metrics
    ("metric-typo", project(check('metric = "corne"\nmax = "3 kHz"\n')),
     "stage[1].check[1].metric", ["unknown metric", "did you mean 'corner'"], (), {}),
    ("metric-wrong-kind", project(check('metric = "q"\nmin = 0.5\n')),
     "stage[1].check[1].metric", ["does not apply"], (), {}),
    ("metric-missing", project(check('max = "3 kHz"\n')), "stage[1].check[1].metric",
     ["missing"], (), {}),
    # ---- checks missing what they need
    ("gain-without-at", project(check('metric = "gain"\nmax = "-20 dB"\n')),
     "stage[1].check[1].at", ["needs 'at'"], (), {}),
    ("corner-with-at", project(check('metric = "corner"\nat = "1 kHz"\nmax = "3 kHz"\n')),
     "stage[1].check[1].at", ["takes no 'at'"], (), {}),
    ("check-without-limits", project(check('metric = "corner"\n')), "stage[1].check[1]",
     ["'min', 'max'"], (), {}),
    ("settling-without-band",
     project(check('metric = "settling"\nmax = "1 ms"\n'),
             head=HEAD + 'drive = { step = "3.3 V" }\n'),
     "stage[1].check[1]", ["within", "bits"], (), {}),
    ("settling-bits-zero",
     project(check('metric = "settling"\nbits = 0\nmax = "1 ms"\n'),
             head=HEAD + 'drive = { step = "3.3 V" }\n'),
     "stage[1].check[1].bits", ["out of range"], (), {}),
    ("settling-without-drive", project(check('metric = "settling"\nbits = 12\nmax = "1 ms"\n')),
     "stage[1].check[1].metric", ["does not apply"], (), {}),
    ("ripple-with-step", project(check('metric = "ripple"\nmax = "5 mV"\n'),
                                 head=HEAD + 'drive = { step = "3.3 V" }\n'),
     "stage[1].check[1].metric", ["does not apply"], (), {}),
    ("drive-both", project(head=HEAD + 'drive = { step = "1 V", pwm = "1 V" }\n'),
     "stage[1].drive", ["either 'step' or 'pwm'"], (), {}),
    ("pwm-without-frequency", project(head=HEAD + 'drive = { pwm = "3.3 V" }\n'),
     "stage[1].drive.frequency", ["needs 'frequency'"], (), {}),
    ("within-on-corner", project(check('metric = "corner"\nmax = "3 kHz"\nwithin = "1%"\n')),
     "stage[1].check[1].within", ["settling"], (), {}),
    # ---- reversed ranges
    ("check-min-above-max", project(check('metric = "corner"\nmin = "4 kHz"\nmax = "2 kHz"\n')),
     "stage[1].check[1]", ["min is above max"], (), {}),
    ("temperature-reversed",
     project(analysis='[analysis]\ntemperature = ["60 °C", "-10 °C"]\n'),
     "analysis.temperature", ["reversed"], (), {}),
    ("sweep-reversed", project(analysis='[analysis]\nsweep = ["1 MHz", "1 Hz"]\n'),
     "analysis.sweep", ["reversed"], (), {}),
    ("sweep-too-narrow", project(analysis='[analysis]\nsweep = ["1 kHz", "2 kHz"]\n'),
     "analysis.sweep", ["half a decade"], (), {}),
    ("temperature-one-value", project(analysis='[analysis]\ntemperature = ["25 °C"]\n'),
     "analysis.temperature", ["two values"], (), {}),
    # ---- sample counts out of range (the memory bound: see README "Limits")
    ("samples-zero", project(analysis="[analysis]\nsamples = 0\n"), "analysis.samples",
     ["out of range", "1 to 200000"], (), {}),
    ("samples-over-bound", project(analysis="[analysis]\nsamples = 200001\n"),
     "analysis.samples", ["out of range", "200000"], (), {}),
    ("samples-option-over-bound", project(), "--samples", ["out of range", "200000"],
     ("--samples", "1000000"), {}),
    ("seed-negative", project(analysis="[analysis]\nseed = -1\n"), "analysis.seed",
     ["out of range"], (), {}),
    ("points-per-decade", project(analysis="[analysis]\npoints_per_decade = 100000\n"),
     "analysis.points_per_decade", ["out of range"], (), {}),
    # ---- duplicate or unsafe ids
    ("id-duplicate", project(extra=second_stage(id="adc0")), "stage[2].id",
     ["already used by stage[1]"], (), {}),
    ("id-path", project(head=HEAD.replace('"adc0"', '"../etc/passwd"')), "stage[1].id",
     ["lower-case letters"], (), {}),
    ("id-upper-space", project(head=HEAD.replace('"adc0"', '"ADC 0"')), "stage[1].id",
     ["lower-case letters"], (), {}),
    ("id-html", project(head=HEAD.replace('"adc0"', '"a<b>"')), "stage[1].id",
     ["lower-case letters"], (), {}),
    ("id-too-long", project(head=HEAD.replace('"adc0"', '"' + "a" * 65 + '"')),
     "stage[1].id", ["64 characters"], (), {}),
    ("id-empty", project(head=HEAD.replace('"adc0"', '""')), "stage[1].id",
     ["empty"], (), {}),
    # ---- networks: floating or missing nodes, unknown parts
    ("network-floating",
     project(NETWORK + 'parts.r2 = { value = "1k" }\nparts.c2 = { value = "1n" }\n'
             'elements = [ { part = "r1", between = ["in", "out"] }, '
             '{ part = "c1", between = ["out", "0"] }, '
             '{ part = "r2", between = ["x", "y"] }, { part = "c2", between = ["y", "x"] } ]\n'),
     "stage[1].elements[3].between", ["floating"], (), {}),
    ("network-dangling",
     project(NETWORK + 'parts.r2 = { value = "1k" }\n'
             'elements = [ { part = "r1", between = ["in", "out"] }, '
             '{ part = "c1", between = ["out", "0"] }, '
             '{ part = "r2", between = ["out", "ot"] } ]\n'),
     "stage[1].elements[3].between", ["dangling", "misspelt"], (), {}),
    ("network-output-missing",
     project(NETWORK.replace('output = "out"', 'output = "vout"') +
             'elements = [ { part = "r1", between = ["in", "out"] }, '
             '{ part = "c1", between = ["out", "0"] } ]\n'),
     "stage[1].output", ["not connected"], (), {}),
    ("network-no-ground",
     project(NETWORK + 'elements = [ { part = "r1", between = ["in", "mid"] }, '
             '{ part = "c1", between = ["mid", "out"] } ]\n'),
     "stage[1].elements", ["ground"], (), {}),
    ("network-unknown-part",
     project(NETWORK + 'elements = [ { part = "r1", between = ["in", "out"] }, '
             '{ part = "c9", between = ["out", "0"] } ]\n'),
     "stage[1].elements[2].part", ["unknown part 'c9'"], (), {}),
    ("network-unplaced-part",
     project(NETWORK + 'elements = [ { part = "r1", between = ["in", "out"] } ]\n'),
     "stage[1].parts.c1", ["not placed"], (), {}),
    ("network-input-missing", project(NETWORK.replace('input = "in"\n', "")),
     "stage[1].input", ["needs 'input'"], (), {}),
    ("network-same-node",
     project(NETWORK + 'elements = [ { part = "r1", between = ["in", "in"] }, '
             '{ part = "c1", between = ["in", "0"] } ]\n'),
     "stage[1].elements[1].between", ["same node"], (), {}),
    # ---- a missing or malformed bill of materials
    ("bom-missing", project(part_r('{ ref = "R1" }'), analysis=ANALYSIS + 'bom = "bom.csv"\n'),
     "analysis.bom", ["cannot read", "bom.csv"], (), {}),
    ("bom-no-value-column",
     project(part_r('{ ref = "R1" }'), analysis=ANALYSIS + 'bom = "bom.csv"\n'),
     "analysis.bom", ["no 'value' column"], (), {"bom.csv": "ref,qty\nR1,1\n"}),
    ("bom-column-typo",
     project(part_r('{ ref = "R1" }'), analysis=ANALYSIS + 'bom = "bom.csv"\n'),
     "analysis.bom", ["tolerence", "did you mean 'tolerance'"], (),
     {"bom.csv": "ref,value,tolerence\nR1,4k7,1%\n"}),
    ("bom-duplicate-ref",
     project(part_r('{ ref = "R1" }'), analysis=ANALYSIS + 'bom = "bom.csv"\n'),
     "analysis.bom", ["line 3", "already listed on line 2"], (),
     {"bom.csv": "ref,value\nR1,4k7\nR1,10k\n"}),
    ("bom-empty-value",
     project(part_r('{ ref = "R1" }'), analysis=ANALYSIS + 'bom = "bom.csv"\n'),
     "analysis.bom", ["line 2", "'value' cell is empty"], (), {"bom.csv": "ref,value\nR1,\n"}),
    ("bom-too-many-cells",
     project(part_r('{ ref = "R1" }'), analysis=ANALYSIS + 'bom = "bom.csv"\n'),
     "analysis.bom", ["line 2", "more cells"], (), {"bom.csv": "ref,value\nR1,4k7,extra\n"}),
    ("bom-empty-file",
     project(part_r('{ ref = "R1" }'), analysis=ANALYSIS + 'bom = "bom.csv"\n'),
     "analysis.bom", ["empty"], (), {"bom.csv": ""}),
    ("bom-not-utf8",
     project(part_r('{ ref = "R1" }'), analysis=ANALYSIS + 'bom = "bom.csv"\n'),
     "analysis.bom", ["UTF-8"], (), {"bom.csv": b"ref,value\nR1,4k7 \xb1\n"}),
    ("bom-is-a-folder",
     project(part_r('{ ref = "R1" }'), analysis=ANALYSIS + 'bom = "."\n'),
     "analysis.bom", ["not a regular file"], (), {}),
    ("bom-wrong-unit",
     project(part_r('{ ref = "R1" }'), analysis=ANALYSIS + 'bom = "bom.csv"\n'),
     "stage[1].parts.r.value", ["bom.csv", "line 2", "capacitance"], (),
     {"bom.csv": "ref,value\nR1,10nF\n"}),
    ("bom-disagrees",
     project(part_r('{ ref = "R1", value = "4k7" }'), analysis=ANALYSIS + 'bom = "bom.csv"\n'),
     "stage[1].parts.r.value", ["disagrees", "line 2", "bom_wins"], (),
     {"bom.csv": "ref,value\nR1,10k\n"}),
    # ---- snubbers: measurements that cannot be, missing or misplaced keys
    ("snubber-frequency-rises", project(SNUBBER.replace('"31 MHz"', '"70 MHz"')),
     "stage[1].ringing.frequency_with_added", ["lower the ringing frequency"], (), {}),
    ("snubber-frequency-same", project(SNUBBER.replace('"31 MHz"', '"62 MHz"')),
     "stage[1].ringing.frequency_with_added", ["lower the ringing frequency"], (), {}),
    ("snubber-added-zero", project(SNUBBER.replace('"220 pF"', '"0 pF"')),
     "stage[1].ringing.with_added", ["greater than zero"], (), {}),
    ("snubber-measurement-incomplete",
     project(SNUBBER.replace(', frequency_with_added = "31 MHz"', "")),
     "stage[1].ringing.frequency_with_added", ["missing"], (), {}),
    ("snubber-measured-and-given",
     project(SNUBBER + 'parasitic = { l = "12 nH" }\n'), "stage[1].parasitic.l",
     ["either the measurement or the values"], (), {}),
    ("snubber-nothing-to-damp",
     project(SNUBBER.replace('ringing = { frequency = "62 MHz", with_added = "220 pF", '
                             'frequency_with_added = "31 MHz" }\n', "")),
     "stage[1].ringing", ["'parasitic'"], (), {}),
    ("snubber-across-missing", project(SNUBBER.replace('across = "switch"\n', "")),
     "stage[1].across", ["needs 'across'"], (), {}),
    ("snubber-across-unknown", project(SNUBBER.replace('"switch"', '"relay"')),
     "stage[1].across", ["not a snubber position"], (), {}),
    ("snubber-coil-on-switch", project(SNUBBER + 'coil = { l = "85 mH", r = "48 ohm" }\n'),
     "stage[1].coil", ["inductive-load"], (), {}),
    ("snubber-load-without-coil",
     project('kind = "snubber"\nacross = "inductive-load"\nvoltage = "24 V"\n'
             'switching_frequency = "2 Hz"\n'),
     "stage[1].coil", ["needs coil"], (), {}),
    ("snubber-one-part", project(SNUBBER + 'parts.r = { value = "10 ohm" }\n'),
     "stage[1].parts.c", ["both r and c"], (), {}),
    ("snubber-voltage-zero", project(SNUBBER.replace('"48 V"', '"0 V"')),
     "stage[1].voltage", ["greater than zero"], (), {}),
    ("snubber-corner-check", project(check('metric = "corner"\nmax = "1 MHz"\n', SNUBBER)),
     "stage[1].check[1].metric", ["does not apply"], (), {}),
    # ---- input limits (README "Limits"; rcdoc.input.limits): sizes, ranges, characters
    ("file-over-1mb", project() + "# " + "x" * 1_000_000 + "\n", "",
     ["1,000,000 bytes"], (), {}),
    ("notes-over-limit", project(board=BOARD + 'notes = "' + "n" * 20_001 + '"\n'),
     "board.notes", ["20,000"], (), {}),
    ("name-over-limit", project(board=BOARD.replace("Pump controller", "P" * 201)),
     "board.name", ["200"], (), {}),
    # Python refuses to convert integers of more than 4300 digits (sys.int_info).
    ("integer-5000-digits", project(analysis="[analysis]\nsamples = " + "9" * 5000 + "\n"),
     "analysis.samples", ["line 6", "too many digits"], (), {}),
    # TOML 1.0: integers are 64-bit signed.
    ("integer-beyond-64-bit", project(analysis=f"[analysis]\nseed = {2**70}\n"),
     "analysis.seed", ["out of range"], (), {}),
    ("sweep-1e-20-to-1e20",
     project(analysis='[analysis]\nsweep = ["1e-20 Hz", "1e20 Hz"]\n'),
     "analysis.sweep[0]", ["1 mHz"], (), {}),
    ("sweep-1e-300-to-1e300",     # beyond any quantity's reach (quantities.QUANTITY_RANGE)
     project(analysis='[analysis]\nsweep = ["1e-300 Hz", "1e300 Hz"]\n'),
     "analysis.sweep[0]", ["out of range"], (), {}),
    ("sweep-above-10-thz", project(analysis='[analysis]\nsweep = ["1 MHz", "1e15 Hz"]\n'),
     "analysis.sweep[1]", ["10 THz"], (), {}),
    ("sweep-13-decades", project(analysis='[analysis]\nsweep = ["1 mHz", "10 GHz"]\n'),
     "analysis.sweep", ["13.0 decades", "at most 12"], (), {}),
    ("id-trailing-newline", project(head=HEAD.replace('"adc0"', '"adc0\\n"')),
     "stage[1].id", ["lower-case letters"], (), {}),
    ("role-trailing-newline", project(LOWPASS.replace("parts.r =", '"parts"."r\\n" =')),
     'stage[1].parts.r\\n', ["must start with r"], (), {}),
    ("title-carriage-return", project(head=HEAD.replace('"ADC input 0"', '"ADC\\rinput"')),
     "stage[1].title", ["line break", "U+000D"], (), {}),
    ("title-line-separator", project(head=HEAD.replace('"ADC input 0"', '"ADC\\u2028input"')),
     "stage[1].title", ["line break", "U+2028"], (), {}),
    ("title-nul", project(head=HEAD.replace('"ADC input 0"', '"ADC\\u0000input"')),
     "stage[1].title", ["control character", "U+0000"], (), {}),
    ("name-paragraph-separator",
     project(board=BOARD.replace("Pump controller", "Pump\\u2029controller")),
     "board.name", ["line break", "U+2029"], (), {}),
    ("revision-newline", project(board=BOARD.replace('revision = "A"', 'revision = "A\\nB"')),
     "board.revision", ["one line"], (), {}),
    ("notes-escape-character",
     project(head=HEAD + 'notes = "see \\u001b[31m red"\n'),
     "stage[1].notes", ["control character", "U+001B"], (), {}),
    ("notes-line-separator", project(board=BOARD + 'notes = "a\\u2028b"\n'),
     "board.notes", ["line break", "U+2028"], (), {}),
    ("part-ref-newline", project(part_r('{ ref = "R1\\n", value = "4k7" }')),
     "stage[1].parts.r.ref", ["one line"], (), {}),
    # A tcr that takes the value through zero inside analysis.temperature:
    # 1 + 20000e-6 × (−40 − 25) = −0.3 (the linear model, IEC 60115-1 style).
    ("tcr-pushes-value-negative",
     project(part_r('{ value = "4k7", tcr = "20000 ppm/K" }'),
             analysis='[analysis]\ntemperature = ["-40 °C", "85 °C"]\n'),
     "stage[1].parts.r.tcr", ["tcr", "analysis.temperature", "-0.3"], (), {}),
    # The same limit for a coefficient the part takes from its dielectric: C0G's
    # 0 ± 30 ppm/K (EIA-198) at its negative end, 1 − 30e-6 × (40000 − 25) = −0.199.
    ("dielectric-coefficient-pushes-value-negative",
     project(part_c('{ value = "10 nF", dielectric = "C0G" }'),
             analysis='[analysis]\ntemperature = ["-40 °C", "40000 °C"]\n'),
     "stage[1].parts.c.dielectric", ["C0G", "-30 ppm/K", "analysis.temperature", "-0.199"],
     (), {}),
    # 33 characters: the message says the length limit, not only the letters.
    ("network-node-name-too-long",
     project(NETWORK.replace('input = "in"', 'input = "' + "n" * 33 + '"')
             + 'elements = [ { part = "r1", between = ["in", "out"] }, '
               '{ part = "c1", between = ["out", "0"] } ]\n'),
     "stage[1].input", ["node name", "1 to 32"], (), {}),
    ("network-node-trailing-newline",
     project(NETWORK + 'elements = [ { part = "r1", between = ["in", "out\\n"] }, '
             '{ part = "c1", between = ["out", "0"] } ]\n'),
     "stage[1].elements[1].between", ["node name"], (), {}),
    ("network-no-dc-path",
     project(NETWORK.replace('"10k"', '"10n"').replace("r1", "c2") +
             'elements = [ { part = "c2", between = ["in", "out"] }, '
             '{ part = "c1", between = ["out", "0"] } ]\n'),
     "stage[1].elements[1].between", ["'out'", "no DC path"], (), {}),
    # Snubber measurements (common practice: a frequency reading resolves ~0.1 %).
    ("snubber-shift-within-resolution",
     project(SNUBBER.replace('"31 MHz"', '"61.9999999 MHz"')),
     "stage[1].ringing.frequency_with_added", ["0.1 %", "measurement error"], (), {}),
    ("snubber-ring-out-of-range",
     project(SNUBBER.replace('"62 MHz"', '"62 Hz"').replace('"31 MHz"', '"31 Hz"')),
     "stage[1].ringing.frequency", ["physical range"], (), {}),
    ("snubber-switching-out-of-range",
     project(SNUBBER.replace('"250 kHz"', '"250 GHz"')),
     "stage[1].switching_frequency", ["physical range"], (), {}),
    ("snubber-ring-below-switching",
     project(SNUBBER.replace('"250 kHz"', '"80 MHz"')),
     "stage[1].ringing.frequency", ["faster than the switching"], (), {}),
    # ---- the command line itself
    ("templates-folder-missing", project(), "--templates", ["does not exist"],
     ("--templates", "{tmp}/no-such-folder"), {}),
    ("templates-is-a-file", project(), "--templates", ["not a folder"],
     ("--templates", "{tmp}/board.toml"), {}),
    ("project-missing", None, "", ["cannot read the project file"], (), {}),
]

# Template mistakes: the message names the template file (not the project).
TEMPLATE_CASES = [
    ("template-syntax", "note.html", "{% if title %}<p>{{ title }}</p>\n",
     ["line 1", "endif"]),
    ("template-undefined", "_cover.html", "<h1>{{ board.nmae }}</h1>\n",
     ["undefined", "nmae"]),
    ("template-include-missing", "_cover.html", '{% include "_nothing.html" %}\n',
     ["_nothing.html", "not found"]),
]



def _tree(root: Path) -> dict[str, bytes]:
    """Every file under ``root`` with its bytes (what "nothing written" compares)."""
    out = {}
    for path in sorted(root.rglob("*")):
        if path.is_file() and not path.is_symlink():
            out[str(path.relative_to(root))] = path.read_bytes()
        elif path.is_dir():
            out[str(path.relative_to(root)) + os.sep] = b""
    return out


def _run(tmp_path: Path, capsys, text, files, args) -> tuple[int, str, Path, dict, dict]:
    proj = tmp_path / "board.toml"
    if text is not None:
        proj.write_bytes(text if isinstance(text, bytes) else text.encode("utf-8"))
    for name, content in files.items():
        target = tmp_path / name
        target.parent.mkdir(parents=True, exist_ok=True)
        target.write_bytes(content if isinstance(content, bytes) else content.encode("utf-8"))
    out = tmp_path / "out"
    out.mkdir()
    (out / "board.pdf").write_bytes(OLD_PDF)
    (out / "board.json").write_bytes(OLD_JSON)
    before = _tree(tmp_path)
    argv = ["build", str(proj), "-o", str(out), "--quiet",
            *(a.replace("{tmp}", str(tmp_path)) for a in args)]
    capsys.readouterr()
    rc = cli.main(argv)
    cap = capsys.readouterr()
    assert cap.out == ""
    return rc, cap.err, proj, before, _tree(tmp_path)


def _assert_one_line(err: str, named_file: str, path: str, words) -> str:
    assert "Traceback" not in err
    lines = err.rstrip("\n").split("\n")
    assert len(lines) == 1, f"expected one line, got:\n{err}"
    line = lines[0]
    assert line.startswith("rcdoc: error: "), line
    assert named_file in line, line
    if path:
        # The key path stands on its own, followed by a colon: "file: path: message".
        assert f": {path}: " in line or line.startswith(f"rcdoc: error: {path}: "), line
    for word in words:
        assert word.lower() in line.lower(), f"{word!r} not in {line!r}"
    return line


@pytest.mark.parametrize("name,text,path,words,args,files",
                         CASES, ids=[c[0] for c in CASES])
def test_mistake_gives_status_2_one_line_nothing_written(tmp_path, capsys, name, text, path,
                                                         words, args, files):
    rc, err, proj, before, after = _run(tmp_path, capsys, text, files, args)
    assert rc == 2, err
    named = "" if path.startswith("--templates") else str(proj)
    _assert_one_line(err, named, path, words)
    assert after == before          # the old note kept its bytes; nothing new appeared


@pytest.mark.slow
@pytest.mark.parametrize("name,template,body,words", TEMPLATE_CASES,
                         ids=[c[0] for c in TEMPLATE_CASES])
def test_template_mistake_names_the_template(tmp_path, capsys, name, template, body, words):
    files = {f"tpl/{template}": body}
    rc, err, proj, before, after = _run(tmp_path, capsys, project(), files,
                                        ("--templates", "{tmp}/tpl"))
    assert rc == 2, err
    _assert_one_line(err, str(tmp_path / "tpl" / template), "", words)
    assert after == before


def test_message_escapes_control_characters(tmp_path, capsys):
    # A key holding a newline and a terminal escape would otherwise split the
    # message over two lines and recolour the CI log (common practice: print
    # untrusted text with control characters escaped).
    text = project(head=HEAD + '"ti\\ntle\\u001b[31m" = "x"\n')
    rc, err, proj, before, after = _run(tmp_path, capsys, text, {}, ())
    assert rc == 2
    line = _assert_one_line(err, str(proj), "", ["unknown key"])
    assert "\x1b" not in line and "\\n" in line
    assert after == before


def test_output_folder_that_is_a_file(tmp_path, capsys):
    # -o naming an existing file: refused before any work, the file untouched.
    proj = tmp_path / "board.toml"
    proj.write_text(project(), encoding="utf-8")
    blocker = tmp_path / "out"
    blocker.write_bytes(OLD_PDF)
    rc = cli.main(["build", str(proj), "-o", str(blocker), "--quiet"])
    err = capsys.readouterr().err
    assert rc == 2
    _assert_one_line(err, str(blocker), "", ["not a folder"])
    assert blocker.read_bytes() == OLD_PDF


def test_bad_second_file_stops_before_anything_is_written(tmp_path, capsys):
    # Every file is validated before any is analysed: a good first file must
    # not get a note when the second one is wrong.
    good = tmp_path / "good.toml"
    good.write_text(project(), encoding="utf-8")
    bad = tmp_path / "bad.toml"
    bad.write_text(project(part_r('{ value = "4k7 F" }')), encoding="utf-8")
    out = tmp_path / "out"
    rc = cli.main(["build", str(good), str(bad), "-o", str(out), "--quiet"])
    err = capsys.readouterr().err
    assert rc == 2
    _assert_one_line(err, str(bad), "stage[1].parts.r.value", ["resistance"])
    assert not out.exists()


def test_rich_markup_in_names_is_printed_as_text(tmp_path, capsys):
    # A board name like "[/x]" is rich console markup; printed unescaped it
    # raises inside the table and escapes as a traceback (rich's markup rules).
    proj = tmp_path / "board.toml"
    proj.write_text(project(board=BOARD.replace("Pump controller", "Pump [/x] [bold]")),
                    encoding="utf-8")
    rc = cli.main(["check", str(proj)])
    cap = capsys.readouterr()
    assert rc in (0, 1), cap.err
    # the check table is a result: on stdout (issue 15)
    assert "Pump [/x] [bold]" in cap.out.replace("\n", "")


def test_junit_report_that_cannot_be_written(tmp_path, capsys):
    # --junit into a folder that does not exist: one line naming the file and
    # the option, exit status 2, no traceback.
    proj = tmp_path / "board.toml"
    proj.write_text(project(), encoding="utf-8")
    target = tmp_path / "missing" / "deeper" / "report.xml"
    target.parent.parent.write_bytes(b"a file, not a folder")
    rc = cli.main(["check", str(proj), "--junit", str(target), "--quiet", "--samples", "20"])
    err = capsys.readouterr().err
    assert rc == 2
    _assert_one_line(err, str(target), "--junit", ["cannot write"])
