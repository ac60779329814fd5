"""``[[placement]]`` tables: candidate tunnel-junction placements in a layer stack.

    [[placement]]
    name = "in the silicon"
    after = "silicon emitter"     # insert after this layer ("before" = "..." also works)
    [[placement.layer]]           # the layers inserted there, sun side first
    name = "tunnel p"
    material = "Si"
    thickness_nm = 20
    doping = "p:5e19"
    [[placement.layer]]
    name = "tunnel n"
    ...

Each candidate is the base stack with its layers inserted at its position; inserting them also
changes which isotype interfaces the stack has.
"""
from dataclasses import dataclass, replace

from siltandem.errors import StackError
from siltandem.text import excerpt


@dataclass(frozen=True)
class Placement:
    name: str
    after: int          # insert after this 0-based layer index (-1: on top)
    layers: tuple


def parse_placements(tables, base_layers, *, file, folder_materials=None):
    from siltandem.stack.layers import parse_layers

    if not tables:
        return ()
    if not isinstance(tables, list):
        raise StackError("placement must be an array of tables", file=file,
                         where="key placement", fix="write each candidate as [[placement]]")
    names = {layer.name: i for i, layer in enumerate(base_layers)}
    placements, seen = [], set()
    for k, table in enumerate(tables, start=1):
        where = f"placement {k}"
        if not isinstance(table, dict):
            raise StackError("each [[placement]] must be a table", file=file, where=where,
                             fix="write [[placement]] with name, after (or before) and "
                                 "[[placement.layer]] tables")
        name = table.get("name", f"placement {k}")
        if not isinstance(name, str) or not name.strip():
            raise StackError(f"name must be a non-empty text, got {excerpt(name)}", file=file,
                             where=where, fix='write name = "in the silicon" (any unique name)')
        where = f"placement {k} {name!r}"
        if name in seen:
            raise StackError(f"placement name {name!r} is used twice", file=file, where=where,
                             fix="give every candidate its own name")
        seen.add(name)
        for key in table:
            if key not in ("name", "after", "before", "layer"):
                raise StackError(f"unknown key {key!r} in a placement", file=file, where=where,
                                 fix="a placement has name, after or before, and layer tables")
        if ("after" in table) == ("before" in table):
            raise StackError("give exactly one of 'after' or 'before'", file=file, where=where,
                             fix='write after = "<layer name>" (or before = "<layer name>")')
        anchor = table.get("after", table.get("before"))
        side = "after" if "after" in table else "before"
        if not isinstance(anchor, str):
            raise StackError(f"{side} must be one layer's name (text), got "
                             f"{type(anchor).__name__} {excerpt(anchor)}", file=file,
                             where=f"{where}, key {side}",
                             fix=f'write {side} = "<layer name>"; for several positions write '
                                 "one [[placement]] per position")
        if anchor not in names:
            raise StackError(f"no layer named {excerpt(anchor)} to place it at", file=file,
                             where=where, fix="name one of the stack's layers: "
                                              + ", ".join(repr(n) for n in names))
        after = names[anchor] if "after" in table else names[anchor] - 1
        layers = parse_layers(table.get("layer", []), file=file,
                              folder_materials=folder_materials)
        if any(isinstance(t, dict) and "string" in t for t in table.get("layer", [])):
            raise StackError("a placement's layer gives string: the inserted layers join the string of "
                             f"the layer they are placed {side}", file=file, where=f"{where}, key string",
                             fix="remove string from the placement's layers")
        # the inserted layers join the string of the layer they are placed at (several strings)
        layers = tuple(replace(layer, string=base_layers[names[anchor]].string) for layer in layers)
        clash = [layer.name for layer in layers if layer.name in names]
        if clash:
            raise StackError(f"layer name {clash[0]!r} is already in the stack", file=file,
                             where=where, fix="give the inserted layers their own names")
        placements.append(Placement(name, after, layers))
    return tuple(placements)


def with_placement(stack, placement):
    """The stack's layers with the placement's layers inserted (indices renumbered)."""
    base = list(stack.layers)
    merged = base[: placement.after + 1] + list(placement.layers) + base[placement.after + 1:]
    renumbered = tuple(replace(layer, index=i + 1) for i, layer in enumerate(merged))
    return replace(stack, layers=renumbered, extra={}, name=f"{stack.name} [{placement.name}]")
