"""The one colour palette of rcdoc's figures and report, named by meaning.

Every chart, the schematic adapter and the report's CSS take their colours
from here, so a capacitor voltage, a forbidden region or a failed check looks
the same everywhere in a note. Colours are named for what they show, never for
how they look. This module holds constants only: it must not import plotting
code or decide how a colour is applied.
"""

from __future__ import annotations

# Part voltages in phasor diagrams and anything else drawn per part type.
RESISTOR = "#2e6f95"    # steel blue
CAPACITOR = "#c2693a"   # burnt orange
INDUCTOR = "#7b5ea7"    # muted violet
SOURCE = "#262b33"      # slate, the driving voltage
SUM = "#7a8a1e"         # olive, the sum of the part voltages
CURRENT = "#a23e5c"     # raspberry, the series current / reference direction

# Responses and their spread.
NOMINAL = "#1f4e79"     # deep navy, the nominal curve
BAND_OUTER = "#d3e1ee"  # pale blue, Monte Carlo min-max
BAND_INNER = "#97b7d4"  # mid blue, central percentile band
SPREAD = "#e8cfa9"      # pale sand, the spread of a time or frequency (a corner, a crossing)

# Requirements and verdicts.
LIMIT = "#f4d6d1"       # light rose fill of a forbidden region
LIMIT_EDGE = "#c0695f"  # outline and marker of a forbidden region
ALLOWED = "#dcefe3"     # light green fill of a tolerance window
PASS = "#2f7d4f"
FAIL = "#b8323a"

# Comparisons (e.g. a node's ringing without and with its snubber).
WITHOUT = "#b8864e"     # faded brown
WITH = "#2a7f74"        # deep teal
INPUT = "#8a8f98"       # grey, a drive signal shown for orientation

# Chart furniture.
GRID = "#dde1e6"
INK = "#262b33"         # text, spines, annotation markers
MUTED = "#6b7280"       # secondary text and thin guide lines

COLOR_FOR_KIND = {"R": RESISTOR, "C": CAPACITOR, "L": INDUCTOR}

# Several parts of one kind in one chart (a phasor diagram of a ladder): the first
# takes the kind's colour, the next ones hues apart from it and from the other kinds.
RESISTOR_2 = "#1a9a9f"  # cyan teal
RESISTOR_3 = "#4b4f9e"  # indigo
CAPACITOR_2 = "#c99a16"  # mustard
CAPACITOR_3 = "#8c3b1f"  # rust
INDUCTOR_2 = "#c05f9f"  # orchid
PART_COLORS = {"R": (RESISTOR, RESISTOR_2, RESISTOR_3),
               "C": (CAPACITOR, CAPACITOR_2, CAPACITOR_3),
               "L": (INDUCTOR, INDUCTOR_2)}

# Order in which charts colour curves that carry no meaning of their own.
SERIES_CYCLE = (NOMINAL, CAPACITOR, WITH, INDUCTOR, CURRENT, SUM)

CSS_VARS = {
    "--rc-pass": PASS,
    "--rc-fail": FAIL,
    "--rc-limit": LIMIT,
    "--rc-limit-edge": LIMIT_EDGE,
    "--rc-allowed": ALLOWED,
    "--rc-nominal": NOMINAL,
    "--rc-grid": GRID,
    "--rc-ink": INK,
    "--rc-muted": MUTED,
    "--rc-resistor": RESISTOR,
    "--rc-capacitor": CAPACITOR,
    "--rc-inductor": INDUCTOR,
}
