"""Schematic recipes of arbitrary networks: elements placed on a grid of node buses.

Used by rcdoc.kinds.recipes.netlist when a netlist is not a plain ladder.
Backend-neutral data, like every recipe.
"""

from __future__ import annotations

from collections.abc import Sequence

from rcdoc.kinds.recipes_base import (_check_kind, _Pen, _room_right, _text_units, AIR, Label,
    LEAD, Recipe, SHUNT, SLOT, UNIT)

# --- arbitrary networks ----------------------------------------------------------

GROUND = "0"
ROW = 2.0        # pitch of element rows in the node grid


def _shunt_legs(elements: Sequence[tuple[str, Label, str, str]], input: str,
                output: str) -> list[tuple[str, list[int], list[str]]] | None:
    """The branches to ground: (top node, element indices top to bottom,
    inner nodes top to bottom), in the order of their first element.

    A leg climbs from an element on ground through nodes that touch exactly
    two elements and are neither input nor output; the node where it stops
    is its top. None when a climb comes back to ground (a loop hanging from
    ground alone is no ladder).
    """
    touching: dict[str, list[int]] = {}
    for i, (_k, _l, a, b) in enumerate(elements):
        for node in {a, b}:
            touching.setdefault(node, []).append(i)
    legs = []
    for i, (_k, _l, a, b) in enumerate(elements):
        if GROUND not in (a, b):
            continue
        chain, inner = [i], []
        node = b if a == GROUND else a
        while node not in (input, output) and len(touching[node]) == 2:
            nxt = next(j for j in touching[node] if j != chain[-1])
            _k2, _l2, a2, b2 = elements[nxt]
            if GROUND in (a2, b2):
                return None
            chain.append(nxt)
            inner.append(node)
            node = b2 if a2 == node else a2
        legs.append((node, chain[::-1], inner[::-1]))
    legs.sort(key=lambda leg: min(leg[1]))
    return legs


def _ladder_sections(elements: Sequence[tuple[str, Label, str, str]],
                     input: str, output: str) -> list[tuple] | None:
    """The network as ladder sections, or None when it is not a ladder.

    A ladder is one chain of elements from input to output that visits each
    node once, with every other element in a shunt leg: a single element
    from a chain node to ground, or several in series from a chain node to
    ground whose inner nodes connect to nothing else (an RC damping leg).
    Elements in series along the chain are simply consecutive steps.
    """
    if GROUND in (input, output) or any(a == b for _k, _l, a, b in elements):
        return None
    legs = _shunt_legs(elements, input, output)
    if legs is None:
        return None
    in_legs = {i for _top, chain, _inner in legs for i in chain}
    series = [e for i, e in enumerate(elements) if i not in in_legs]
    path = [input]
    used: list[int] = []
    while path[-1] != output:
        touching = [i for i, e in enumerate(series)
                    if i not in used and path[-1] in (e[2], e[3])]
        if len(touching) != 1:
            return None
        used.append(touching[0])
        _k, _l, a, b = series[touching[0]]
        nxt = b if a == path[-1] else a
        if nxt in path:
            return None
        path.append(nxt)
    if len(used) != len(series):
        return None
    legs_at: dict[str, list[tuple[list[int], list[str]]]] = {node: [] for node in path}
    for top, chain, inner in legs:
        if top not in legs_at:
            return None
        legs_at[top].append((chain, inner))
    sections: list[tuple] = []
    for k, node in enumerate(path):
        for chain, inner in legs_at[node]:
            kind, label, _a, _b = elements[chain[0]]
            sections.append(("shunt", kind, label))
            for j, above in zip(chain[1:], inner):
                kind, label, _a, _b = elements[j]
                sections.append(("stack", kind, label, above))
        if k < len(used):
            kind, label, _a, _b = series[used[k]]
            sections.append(("series", kind, label))
    return sections


def _goto(pen: _Pen, name: str, x: float, y: float) -> str:
    """Name the point (x, y) measured from the origin."""
    pen("point", name=f"{name}~x", start="origin",
        direction="right" if x >= 0 else "left", length=abs(x))
    return pen("point", name=name, direction="up" if y >= 0 else "down",
               length=abs(y))


def _node_order(elements: Sequence[tuple[str, Label, str, str]],
                input: str, output: str) -> list[str]:
    """Columns: input first, then breadth-first from it, output last."""
    order = [input]
    for node in order:
        for _k, _l, a, b in elements:
            for here, there in ((a, b), (b, a)):
                if here == node != GROUND and there not in order \
                        and there not in (GROUND, output):
                    order.append(there)
    for _k, _l, a, b in elements:
        for node in (a, b):
            if node not in order and node not in (GROUND, output):
                order.append(node)
    if output != input:
        order.append(output)
    return order


def _node_text(node: str, terminal: str) -> str:
    if not terminal or node.upper() == terminal:
        return terminal or node
    return f"{terminal} ({node})"


GRID_GAP = UNIT + 1.0   # least distance between node buses: a part and two leads


def _hang_offsets(labels: Sequence[Label]) -> list[float]:
    """Distances from a bus to the parts hanging side by side from it."""
    offsets = [0.0]
    for label in labels[:-1]:
        offsets.append(offsets[-1] + max(SLOT, _room_right(label)))
    return offsets[:len(labels)]


def _grid(elements: Sequence[tuple[str, Label, str, str]], input: str,
          output: str, source: Sequence[tuple[str, Label]],
          load: Sequence[tuple[str, Label]]) -> Recipe:
    """Any network: each node a vertical bus, each element in its own row."""
    pen = _Pen()
    columns = _node_order(elements, input, output)
    col = {node: i for i, node in enumerate(columns)}
    rows, hanging, grounded = _grid_sort(elements, columns, output, load)
    # Parts to ground hang side by side, each clear of its left neighbour's
    # label; a column's gap fits them and the labels of the row parts drawn
    # in it, and no more, so the grid keeps the ladders' scale.
    offsets = {node: _hang_offsets([label for _k, label, _n in hanging[node]])
               for node in columns}
    gaps = []
    for c, node in enumerate(columns):
        need = [GRID_GAP]
        if hanging[node]:
            need.append(offsets[node][-1] + _room_right(hanging[node][-1][1]))
        need += [_text_units(label.lines()) + 2 * AIR for _i, _k, label, a, b in rows
                 if min(col[a], col[b]) == c]
        gaps.append(max(need))
    xs = [sum(gaps[:i]) for i in range(len(columns))]
    # Long spans go on top, so that buses of the nodes they pass over start
    # below them and the wires cross fewer buses.
    rows.sort(key=lambda row: (-abs(col[row[3]] - col[row[4]]), row[0]))
    row_y = [-(r + 1) * ROW for r in range(len(rows))]
    hang_y = -(len(rows) + 1) * ROW + (0.5 if not rows else 0.0)
    top, bottom = _bus_ends(columns, rows, row_y, hanging, hang_y, input, output)

    def junction(node: str, y: float) -> None:
        # Only a T needs a dot; bus ends are corners (or terminals).
        if bottom[node] < y < top[node]:
            pen("dot")

    # Buses with their node names; input and output as terminals on top.
    for node in columns:
        head = _goto(pen, f"bus_{col[node]}", xs[col[node]], top[node])
        terminal = "IN" if node == input else "OUT" if node == output else ""
        if top[node] > bottom[node]:
            pen("wire", start=head, direction="down", length=top[node] - bottom[node])
        pen("terminal" if terminal else "text", start=head,
            text=_node_text(node, terminal),
            side={"IN": "above-left", "OUT": "above-right"}.get(terminal, "above-right"))
    _grid_source(pen, source)
    # Rows: the part sits in the gap right of its left-hand node.
    for (i, kind, label, a, b), y in zip(rows, row_y):
        left, right = sorted((col[a], col[b]))
        gap = gaps[left]
        _goto(pen, f"row_{i + 1}", xs[left], y)
        junction(columns[left], y)
        pen("wire", direction="right", length=(gap - UNIT) / 2)
        pen(kind, name=f"e{i + 1}", label=label)
        if a == b:
            pen("wire", direction="down", length=0.8)
            pen("wire", end=f"bus_{left}", route="x")
            junction(a, y - 0.8)
        else:
            pen("wire", direction="right", length=xs[right] - xs[left] - (gap + UNIT) / 2)
            junction(columns[right], y)
    _grid_hanging(pen, columns, col, xs, offsets, hanging, hang_y)
    # A part with both ends on ground, drawn between two ground symbols.
    for k, (kind, label) in enumerate(grounded):
        at = _goto(pen, f"shorted_{k + 1}", k * (UNIT + 1.5),
                   hang_y - SHUNT - 1.5 - ROW)
        pen("ground", start=at)
        pen(kind, name=f"shorted_part_{k + 1}", start=at, label=label)
        pen("ground")
    return pen.recipe()


def _grid_sort(elements, columns, output, load):
    """Elements between two nodes (rows), to ground (hanging, by node, loads
    last at the output) and with both ends on ground."""
    rows: list[tuple[int, str, Label, str, str]] = []
    hanging: dict[str, list[tuple[str, Label, str]]] = {n: [] for n in columns}
    grounded: list[tuple[str, Label]] = []
    for i, (kind, label, a, b) in enumerate(elements):
        _check_kind(kind, f"element {i}")
        if a == GROUND and b == GROUND:
            grounded.append((kind, label))
        elif GROUND in (a, b):
            hanging[b if a == GROUND else a].append((kind, label, f"e{i + 1}"))
        else:
            rows.append((i, kind, label, a, b))
    hanging[output] += [(kind, label, f"load_{i + 1}")
                        for i, (kind, label) in enumerate(load)]
    return rows, hanging, grounded


def _bus_ends(columns, rows, row_y, hanging, hang_y, input, output):
    """Top and bottom of each node's bus: where connections meet it, outermost."""
    meets: dict[str, list[float]] = {node: [] for node in columns}
    for (_i, _k, _l, a, b), y in zip(rows, row_y):
        meets[a].append(y)
        meets[b].append(y - 0.8 if a == b else y)
    for node in columns:
        if hanging[node]:
            meets[node].append(hang_y)
        if node in (input, output):
            meets[node].append(0.0)
        if meets[node] == [0.0]:
            meets[node].append(-0.75)   # an unconnected terminal keeps a stub
    return ({node: max(meets[node]) for node in columns},
            {node: min(meets[node]) for node in columns})


def _grid_hanging(pen: _Pen, columns, col, xs, offsets, hanging, hang_y) -> None:
    """Parts to ground hang below the last row, side by side; loads framed."""
    load_names: list[str] = []
    for node in columns:
        for s, (kind, label, name) in enumerate(hanging[node]):
            at = _goto(pen, f"hang_{name}", xs[col[node]] + offsets[node][s], hang_y)
            if s:
                pen("wire", start=f"hang_{hanging[node][s - 1][2]}", end=at, route="-")
            if s < len(hanging[node]) - 1 and len(hanging[node]) > 1:
                pen("dot", start=at)
            pen(kind, name=name, start=at, direction="down", length=SHUNT,
                label=label, side="right")
            pen("ground", start=name)
            if name.startswith("load_"):
                load_names.append(name)
    if load_names:
        pen("box", name="load_box", members=tuple(load_names), text="load",
            side="above", dashed=True)


def _grid_source(pen: _Pen, source: Sequence[tuple[str, Label]]) -> None:
    """Source with its impedance, left of the input bus and joining its top."""
    width = 2 * LEAD + UNIT * len(source) + 3 * LEAD
    at = _goto(pen, "source_foot", -width, -SHUNT)
    pen("ground", name="gnd_source", start=at)
    pen("source", name="vs", start=at, direction="up", length=SHUNT,
        variant="sine", text="Vs", side="left")
    pen("wire", direction="right", length=2 * LEAD)
    names = [pen(_check_kind(kind, "source"), name=f"src_{i + 1}", label=label)
             for i, (kind, label) in enumerate(source)]
    if names:
        pen("box", name="source_box", members=tuple(names), text="source",
            side="below", dashed=True)
    pen("wire", start=names[-1] if names else "", end="bus_0", route="-")
