"""rcdoc: design notes for the RC networks on a board.

Reads one TOML project file per board and writes a PDF design note and a JSON
summary: per stage a schematic, the response with its spread over tolerance,
temperature and derating, phasors, time responses, part stresses and
pass/fail checks against the stated requirements.
"""

__version__ = "0.1.0"

# Before any data class or named tuple of rcdoc's is made: their methods' code
# compiled ahead (rcdoc.code_cache).
from rcdoc import code_cache as _code_cache  # noqa: E402

_code_cache.install()
