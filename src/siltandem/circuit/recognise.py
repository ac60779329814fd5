"""Layer stacks -> the structure of the device: subcells, tunnel junctions, isotype interfaces.

Recognition rules (sun side first), in this order:

1. A **tunnel junction** is an adjacent pair of opposite type, both doped at or above
   ``[rules] tunnel_doping_cm3`` (default 5e18 cm^-3: degenerate in the III-V arsenides and
   phosphides and in silicon; common practice, no source).
2. Any other adjacent pair of opposite type is the p-n junction of a **subcell**: the upper layer is
   its emitter, the lower its base. Of one material it is a homojunction; of two, a heterojunction
   (front: a wider-gap emitter; rear: a wider-gap base), whose band offsets the compiler checks
   (circuit/from_layers.py). A pair of different materials next to a tunnel junction written
   upside down is named as that tunnel junction.
3. An adjacent pair of the same type and different materials (or compositions) is an **isotype
   interface** (n-N or p-P). Same material, same type, different doping: a high-low junction,
   treated as an ideal connection.
4. Every subcell must have the same polarity (all n-on-p or all p-on-n); consecutive subcells are
   joined by exactly one tunnel junction, whose upper layer has the type of the upper cell's base
   (otherwise it would block the current); no tunnel junction lies above the top cell or below the
   bottom cell.

The current direction follows from the polarity: in an n-on-p stack electrons flow towards the sun
in every n layer and holes away from it in every p layer (p-on-n: the reverse). That orients each
isotype interface.
"""
from dataclasses import dataclass, field

from siltandem.errors import StackError


@dataclass(frozen=True)
class SubcellLayers:
    """The layers of one subcell, by index into the stack's layers."""

    name: str
    emitter: int
    base: int
    polarity: str             # "n-on-p" or "p-on-n"
    hetero: bool = False      # emitter and base of different materials


@dataclass(frozen=True)
class Structure:
    """What the compiler recognised, in the order of the layer boundaries (sun side first).

    ``parts`` is a list of (kind, info) with kind in "subcell", "tunnel", "isotype"; each
    sits at a boundary between layers ``upper`` and ``upper + 1``.
    """

    parts: list
    subcells: list
    polarity: str
    active_layers: set = field(default_factory=set)
    notes: list = field(default_factory=list)


def _same_material(a, b):
    """One material however it is written (``Ga0.51In0.49P`` and ``GaInP`` at 0.51 alike)."""
    from siltandem.materials import material_identity

    return (material_identity(a.material, a.composition)
            == material_identity(b.material, b.composition))


def _upside_down_tunnel(layers, i, tunnel_doping_cm3, file, *, neighbour_in_a_cell=False):
    """A StackError for the degenerate pair ``layers[i], layers[i + 1]`` when it is a tunnel
    junction written upside down: each of its layers has the type opposite to its outer
    neighbour (n++ under a p base, p++ over an n window), so each neighbour makes a p-n junction
    with it. None when that is not the likely cause."""
    if i < 1 or i + 2 >= len(layers):
        return None
    above, upper, lower, below = layers[i - 1], layers[i], layers[i + 1], layers[i + 2]
    degenerate = min(upper.doping_cm3, lower.doping_cm3) >= tunnel_doping_cm3
    if not (degenerate and upper.polarity != lower.polarity
            and upper.polarity != above.polarity and lower.polarity != below.polarity):
        return None
    # three degenerate layers in a row: upside down only if the third is a cell's layer (it has
    # minority-carrier values); three plain degenerate layers are one layer too many
    third = [layer for layer in (above, below) if layer.doping_cm3 >= tunnel_doping_cm3]
    if neighbour_in_a_cell and not any(layer.diffusion_length_um is not None
                                       or layer.lifetime_ns is not None
                                       or layer.srh_lifetime_ns is not None for layer in third):
        return None
    return StackError(
        f"the tunnel junction {upper.label} / {lower.label} looks upside down: it is "
        f"{upper.polarity}++ over {lower.polarity}++ from the sun side, between {above.label} "
        f"({above.polarity}) above and {below.label} ({below.polarity}) below, so each of its layers "
        "forms a p-n junction with its neighbour", file=file, where=f"{upper.label} / {lower.label}",
        fix=f"swap the dopings of {upper.label} and {lower.label}, so that the junction is "
            f"{above.polarity}++ over {below.polarity}++ (each layer of the type of its neighbour); "
            f"keep {above.label} and {below.label} below {tunnel_doping_cm3:g} cm^-3")


def _classify_boundaries(layers, tunnel_doping_cm3, file):
    """Each layer boundary's kind (rules 1-3), by the index of its upper layer: "tunnel",
    "junction" or "isotype" (a high-low junction gets none, but a note)."""
    notes = []
    used_by_tunnel = set()
    boundary_kind = {}
    for i in range(len(layers) - 1):
        upper, lower = layers[i], layers[i + 1]
        if upper.polarity != lower.polarity:
            degenerate = (upper.doping_cm3 >= tunnel_doping_cm3
                          and lower.doping_cm3 >= tunnel_doping_cm3)
            if degenerate and i in used_by_tunnel:
                hint = _upside_down_tunnel(layers, i, tunnel_doping_cm3, file, neighbour_in_a_cell=True)
                if hint is not None:
                    raise hint
                raise StackError(f"{layers[i - 1].label}, {upper.label} and {lower.label} are "
                                 "three degenerate layers of alternating type: two tunnel "
                                 "junctions share a layer", file=file, where=upper.label,
                                 fix="a tunnel junction is one n++/p++ pair: remove a layer or "
                                     "lower its doping")
            if degenerate:
                boundary_kind[i] = "tunnel"
                used_by_tunnel.update({i, i + 1})
            else:
                boundary_kind[i] = "junction"
        elif not _same_material(upper, lower):
            boundary_kind[i] = "isotype"
        elif upper.doping_cm3 != lower.doping_cm3:
            notes.append(f"{upper.label} / {lower.label}: high-low junction of one material, "
                         "treated as an ideal connection")
    return boundary_kind, notes


def _parts(layers, boundary_kind, tunnel_doping_cm3, file):
    """The parts in boundary order, and the subcells (each p-n junction; a pair of different
    materials is a heterojunction unless a neighbouring tunnel junction is upside down)."""
    parts, subcells = [], []
    for i, kind in sorted(boundary_kind.items()):
        upper, lower = layers[i], layers[i + 1]
        if kind == "junction":
            hetero = not _same_material(upper, lower)
            if hetero:
                for pair in (i - 1, i + 1):          # the degenerate neighbour's tunnel pair
                    hint = (_upside_down_tunnel(layers, pair, tunnel_doping_cm3, file)
                            if boundary_kind.get(pair) == "tunnel" else None)
                    if hint is not None:
                        raise hint
            polarity = "n-on-p" if upper.polarity == "n" else "p-on-n"
            cell = SubcellLayers(f"{upper.material} cell ({upper.name} / {lower.name})", i, i + 1,
                                 polarity, hetero)
            subcells.append(cell)
            parts.append(("subcell", {"upper": i, "cell": cell}))
        elif kind == "tunnel":
            parts.append(("tunnel", {"upper": i}))
        else:
            parts.append(("isotype", {"upper": i}))
    return parts, subcells


def _stack_polarity(layers, subcells, boundary_kind, tunnel_doping_cm3, file):
    """The one polarity of every subcell (rule 4); refuses a stack without a subcell, and one of
    mixed polarity (naming a tunnel junction in the wrong order where that is the cause)."""
    if not subcells:
        lonely = ", ".join(f"{layer.label} ({layer.polarity})" for layer in layers)
        raise StackError("no p-n junction: the layers make no solar cell (" + lonely + ")",
                         file=file, fix="a subcell needs an emitter and a base of opposite type, "
                                        "e.g. n-GaAs on p-GaAs")
    polarities = {c.polarity for c in subcells}
    if len(polarities) > 1:
        # a junction of the other polarity next to a tunnel junction: the tunnel junction is in
        # the wrong order for its neighbours
        for cell in subcells:
            for neighbour in (cell.emitter - 1, cell.base):
                if boundary_kind.get(neighbour) == "tunnel" and min(
                        layers[cell.emitter].doping_cm3, layers[cell.base].doping_cm3) < \
                        tunnel_doping_cm3 <= max(layers[cell.emitter].doping_cm3,
                                                 layers[cell.base].doping_cm3):
                    upper, lower = layers[neighbour], layers[neighbour + 1]
                    raise StackError(
                        f"tunnel junction {upper.label} / {lower.label} "
                        f"({upper.polarity}++/{lower.polarity}++ from the sun side) is in the "
                        "wrong order for its neighbours: with them it forms a junction that "
                        "blocks the stack's current", file=file,
                        where=f"{upper.label} / {lower.label}",
                        fix="swap the two layers of the tunnel junction")
        # a junction that shares a layer with the cell above: no tunnel junction between them
        counts = [c.polarity for c in subcells]
        main = max(("n-on-p", "p-on-n"), key=lambda x: (counts.count(x), x == counts[0]))
        for above, cell in zip(subcells, subcells[1:]):
            if cell.polarity != main and cell.emitter == above.base:
                upper, lower = layers[cell.emitter], layers[cell.base]
                order = "p++ over n++" if main == "n-on-p" else "n++ over p++"
                raise StackError(
                    f"no tunnel junction between {upper.label} and {lower.label}: without one they "
                    f"form a {cell.polarity} junction that opposes the {main} subcells' current "
                    "(a tunnel junction missing, or one of its layers doped too lightly)",
                    file=file, where=f"{upper.label} / {lower.label}",
                    fix=f"insert a tunnel junction between them: two layers doped at or above "
                        f"{tunnel_doping_cm3:g} cm^-3, {order} from the sun side")
        names = ", ".join(f"{c.name}: {c.polarity}" for c in subcells)
        raise StackError(f"subcells of opposite polarity ({names}): their currents oppose; "
                         "where no tunnel junction joins two cells, the layers between them form "
                         "a junction of the other polarity", file=file,
                         fix="make every subcell n-on-p (or every one p-on-n) and join them with "
                             "a tunnel junction: two layers doped at or above "
                             f"{tunnel_doping_cm3:g} cm^-3")
    return polarities.pop()


def _check_tunnel_junctions(layers, order, polarity, tunnel_doping_cm3, file):
    """Every tunnel junction lies between two subcells and in the order that passes the
    current of ``polarity`` subcells (rule 4)."""
    for k, (kind, info) in enumerate(order):
        if kind != "tunnel":
            continue
        i = info["upper"]
        above = [x for x in order[:k] if x[0] == "subcell"]
        below = [x for x in order[k + 1:] if x[0] == "subcell"]
        pair = f"{layers[i].label} / {layers[i + 1].label}"
        if not above or not below:
            raise StackError(f"tunnel junction {pair} lies {'above the top' if not above else 'below the bottom'}"
                             " subcell, where it would be reverse biased", file=file, where=pair,
                             fix="remove it, or lower the doping of one of its layers below "
                                 f"{tunnel_doping_cm3:g} cm^-3 so that it is not a junction")
        base_type = "p" if polarity == "n-on-p" else "n"
        if layers[i].polarity != base_type:
            raise StackError(
                f"tunnel junction {pair} is {layers[i].polarity}++/{layers[i + 1].polarity}++ "
                f"from the sun side, which blocks the current of {polarity} subcells",
                file=file, where=pair,
                fix=f"swap its two layers: in {polarity} stacks the tunnel junction is "
                    f"{base_type}++ over {'n' if base_type == 'p' else 'p'}++")


def _check_alternation(layers, order, polarity, tunnel_doping_cm3, file):
    """Subcells and tunnel junctions alternate: exactly one tunnel junction between consecutive
    subcells (rule 4)."""
    for k in range(len(order) - 1):
        if order[k][0] == "subcell" and order[k + 1][0] == "subcell":
            a, b = order[k][1]["cell"], order[k + 1][1]["cell"]
            raise StackError(f"{a.name} and {b.name} have nothing joining them: their junctions "
                             "would meet back to back", file=file,
                             where=f"{layers[a.base].label} / {layers[b.emitter].label}",
                             fix="insert a tunnel junction (two layers doped at or above "
                                 f"{tunnel_doping_cm3:g} cm^-3, "
                                 f"{'p++ over n++' if polarity == 'n-on-p' else 'n++ over p++'})")
        if order[k][0] == "tunnel" and order[k + 1][0] == "tunnel":
            raise StackError("two tunnel junctions in a row", file=file,
                             where=layers[order[k][1]["upper"]].label,
                             fix="keep one tunnel junction between two subcells")


def recognise(layers, *, tunnel_doping_cm3, file=None):
    """Find the subcells, tunnel junctions and isotype interfaces of a layer stack.

    Parameters
    ----------
    layers : list of Layer
        The stack's layers, sun side first.
    tunnel_doping_cm3 : float
        Doping [cm^-3] at or above which both layers of an n/p pair make a tunnel junction.
    file : str, optional
        The stack file, for messages.

    Returns
    -------
    Structure

    Raises
    ------
    StackError
        Naming the layers, for a stack that makes no device.
    """
    boundary_kind, notes = _classify_boundaries(layers, tunnel_doping_cm3, file)
    parts, subcells = _parts(layers, boundary_kind, tunnel_doping_cm3, file)
    polarity = _stack_polarity(layers, subcells, boundary_kind, tunnel_doping_cm3, file)
    # between consecutive subcells: exactly one tunnel junction of the right order
    order = [(kind, info) for kind, info in parts if kind in ("subcell", "tunnel")]
    _check_tunnel_junctions(layers, order, polarity, tunnel_doping_cm3, file)
    _check_alternation(layers, order, polarity, tunnel_doping_cm3, file)
    active = {c.emitter for c in subcells} | {c.base for c in subcells}
    return Structure(parts, subcells, polarity, active, notes)


def carriers_flow(layer_polarity, stack_polarity):
    """Which way majority carriers cross interfaces in a layer of this type: "up" or "down".

    In an n-on-p stack photo-electrons leave through the front (n) side: electrons flow towards
    the sun in n layers, holes away from it in p layers; p-on-n the reverse.
    """
    towards_sun = "n" if stack_polarity == "n-on-p" else "p"
    return "up" if layer_polarity == towards_sun else "down"

