"""rcdoc: design notes for the RC networks on a board.

Reads one TOML project file per board and writes a PDF design note and a JSON
summary: per stage a schematic, the response with its spread over tolerance,
temperature and derating, phasors, time responses, part stresses and
pass/fail checks against the stated requirements.
"""

__version__ = "0.1.0"
