"""``rcdoc init``: the commented starting project a new user edits.

What it is for: one TOML text that shows every section of the project
format ([board], [analysis], [[stage]] with parts, checks, drive, source and
load) with a few stages that load and pass as written, and the optional keys
as comments. What it must not do: overwrite an existing file, or hold any
logic beyond writing the text.
"""

from __future__ import annotations

import os
from pathlib import Path

from rcdoc.errors import ProjectError

DEFAULT_FILE = "project.toml"

STARTER = '''\
# rcdoc project file (format 1): one file per board -> one PDF design note.
# Build the note:   rcdoc build FILE      (writes the PDF and JSON to build/ beside FILE)
# Checks only:      rcdoc check FILE
# Every key is described in docs/project-format.md. Quantities are strings with
# an SI prefix and unit ("4.7 kohm", "10 nF", "2.2 uF"), the IEC 60062 code
# ("4k7", "2u2", "R47"), percentages ("1%", "+80%/-20%") or bare SI numbers.
# The board and its values below are an invented example: replace them.

[board]
name = "Bench data logger DL-1"          # shown on the cover and in page headers
revision = "A"
# date = "2026-01-15"                    # default: SOURCE_DATE_EPOCH, else today
authors = ["Your name"]
notes = """
What the board does and where its requirements come from.

A blank line starts a new paragraph.
"""
# hazardous_voltage = "60 V"             # above this a stage page carries safety cautions

[analysis]                               # optional; every key has a default
samples = 2000                           # Monte Carlo samples per stage
seed = 1                                 # same file and seed -> same numbers
distribution = "uniform"                 # or "normal" (tolerance = 3 sigma)
temperature = ["0 °C", "50 °C"]          # ambient range swept by the spread
points_per_decade = 50
# sweep = ["1 Hz", "10 MHz"]             # default: 3 decades either side of each stage
# bom = "bom.csv"                        # CSV with ref, value and optional tolerance,
#                                        # dielectric, voltage, power, model columns;
#                                        # parts with a ref then take their values from it
# bom_wins = false                       # true: the BOM overrides values stated here

# --- Stage 1: a first-order low-pass in front of a converter input ----------
[[stage]]
id = "adc-input"                         # lower case, digits and '-'; names files and links
title = "Thermocouple amplifier output: anti-alias filter"
kind = "rc-lowpass"                      # rc-lowpass, rc-highpass, rc-ladder, rc-bandpass,
                                         # sallen-key-lowpass, mfb-lowpass, network
notes = "Keeps switching noise out of the 16-bit converter sampling at 1 kS/s."
source = "100 ohm"                       # what drives the stage (or { r = ..., l = ... })
load = { r = "1 Mohm", c = "10 pF" }     # what the output drives, in parallel
marks = ["500 Hz"]                       # gain and phase tabulated at these frequencies
drive = { step = "2.5 V" }               # enables rise time, settling and part stresses
parts.r = { ref = "R1", value = "10k", tolerance = "1%", tcr = "100 ppm/K", power = "0.1 W" }
# a resistor may also state pulse = "0.5 J" (energy per pulse) or pulse = "2 W" (peak power)
parts.c = { ref = "C1", value = "100 nF", tolerance = "5%", dielectric = "C0G", voltage = "25 V" }
# Other part keys: dc_bias = { at = "12 V", change = "-40%" } with bias = "5 V"
# (class II capacitors), temperature_change = { at = "85 °C", change = "-8%" }
# (a class II part's measured point; without it the code's full band applies
# at any temperature), model = "manufacturer part number".

[[stage.check]]
metric = "corner"                        # the -3 dB frequency
min = "140 Hz"
max = "180 Hz"

[[stage.check]]
metric = "gain"
at = "500 Hz"
max = "-9 dB"

[[stage.check]]
metric = "settling"
bits = 16                                # to half an LSB; or within = "0.1%"
# full_scale = "3.3 V"                   # with bits: half an LSB of the converter's full scale
max = "25 ms"

# --- Stage 2: AC coupling of a sensor signal ---------------------------------
[[stage]]
id = "vibration-coupling"
title = "Vibration sensor: AC coupling"
kind = "rc-highpass"
source = "1 kohm"
marks = ["10 Hz"]
parts.c = { ref = "C2", value = "1 uF", tolerance = "10%", dielectric = "film-pet" }
parts.r = { ref = "R2", value = "470k", tolerance = "1%" }

[[stage.check]]
metric = "corner"
max = "1 Hz"

[[stage.check]]
metric = "gain"
at = "10 Hz"
min = "-0.1 dB"
yield = "99%"                            # share of samples that must pass; default 100%

# --- Stage 3: a second-order active low-pass --------------------------------
[[stage]]
id = "audio-aaf"
title = "Microphone channel: Sallen-Key low-pass"
kind = "sallen-key-lowpass"
amplifier = { gbw = "10 MHz", gain = "100 dB" }   # omit for an ideal op-amp
marks = ["20 kHz"]
parts.r1 = { ref = "R3", value = "10k", tolerance = "1%" }
parts.r2 = { ref = "R4", value = "10k", tolerance = "1%" }
parts.c1 = { ref = "C3", value = "2.2 nF", tolerance = "5%", dielectric = "C0G" }
parts.c2 = { ref = "C4", value = "1 nF", tolerance = "5%", dielectric = "C0G" }

[[stage.check]]
metric = "q"
min = "0.6"
max = "0.9"

[[stage.check]]
metric = "gain"
at = "20 kHz"
max = "-3 dB"
'''


def write_starter(file: str | os.PathLike | None = None) -> Path:
    """Write the starting project to ``file`` (default ``project.toml``); never overwrite."""
    path = Path(file) if file else Path(DEFAULT_FILE)
    if path.exists():
        raise ProjectError(f"'{path}' already exists; nothing was written (choose another "
                           "name or remove it)")
    if not path.parent.is_dir():
        raise ProjectError(f"the folder '{path.parent}' does not exist; nothing was written")
    try:
        with open(path, "x", encoding="utf-8", newline="\n") as fh:   # "x": never overwrite
            fh.write(STARTER)
    except FileExistsError:
        raise ProjectError(f"'{path}' already exists; nothing was written") from None
    except OSError as exc:
        raise ProjectError(f"cannot write '{path}': {exc.strerror}") from None
    return path
