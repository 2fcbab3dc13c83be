"""What surrounds every stage's core circuit: the source impedance and the load.

The element and node names rcdoc adds around a kind's network (the kinds wrap
their circuit with them, rcdoc.kinds.base.wrap), and the fixed values those
elements carry. They live in the analysis layer because the analysis needs
them too (batches, worst-case rows, the input impedance without the source),
and the analysis must not import the kinds.
"""

from __future__ import annotations

from rcdoc.analysis.network import Network
from rcdoc.input.model import Stage

# Element names of the source impedance and the load; they carry fixed values.
SOURCE_R, SOURCE_L, LOAD_R, LOAD_C = "source.r", "source.l", "load.r", "load.c"
# Nodes rcdoc adds between the ideal source and the stage's input. The '~' is
# outside the node-name syntax of a `network` stage, so no user node can be
# one of them (a user's node named like an internal one was silently merged).
SOURCE_NODE, SOURCE_L_NODE = "~source", "~source.l"


def core_input(network: Network) -> str:
    """The stage's own input node: where the source impedance (if any) ends."""
    for name in (SOURCE_L, SOURCE_R):      # the element nearest the input first
        try:
            return network.element(name).b
        except KeyError:
            continue
    return network.drive


def fixed_values(stage: Stage) -> dict[str, float]:
    """Values of the source and load elements (ideal: no tolerance)."""
    out = {}
    if stage.source_r > 0:
        out[SOURCE_R] = stage.source_r
    if stage.source_l > 0:
        out[SOURCE_L] = stage.source_l
    if stage.load_r is not None:
        out[LOAD_R] = stage.load_r
    if stage.load_c is not None:
        out[LOAD_C] = stage.load_c
    out.update(stage.options.get("fixed_elements", {}))   # a kind's own fixed parts (pin capacitance)
    return out
