"""The circuit: uniquely named elements wired in strings, each a path between a pair of terminals.

A two-terminal stack is one string; a four-terminal stack is two independent strings. Each string
is held as the plain list of its elements in current order (front terminal to back terminal),
which is all the solve needs; :attr:`Circuit.graph` gives the same wiring as a networkx graph
(terminals ``front 1``, ``back 1``, ... and the elements by name, with the element object in the
node attribute ``element``; edges in the direction of the stack current), built on request, so
that solving a stack does not import networkx (about 0.1 s of a command's start-up). The wiring
is checked once, before any arithmetic.
"""
from dataclasses import dataclass, field, replace

from siltandem.stack.load import Conditions


def front(string):
    return f"front {string}"


def back(string):
    return f"back {string}"


class Wiring:
    """The strings of a circuit: ``paths[k]`` the element names of string k + 1 in current
    order, ``elements`` name -> element object. Compared by identity, as a graph object is."""

    def __init__(self, paths, elements):
        self.paths = tuple(tuple(path) for path in paths)
        self.elements = dict(elements)

    def with_elements(self, elements):
        """A copy with some element objects replaced (matched by name)."""
        return Wiring(self.paths, {**self.elements, **{e.name: e for e in elements}})


@dataclass(frozen=True)
class Circuit:
    """Elements wired in strings, plus the order light meets them and the conditions.

    Attributes
    ----------
    wiring : Wiring
        Each string's element names in current order, and the element objects by name.
    optical_order : tuple of str
        Element names in the order light meets them (sun side first).
    conditions : Conditions
    name : str
    optics : dict
        Filled by the optics stage: photon currents (incident, per subcell, transmitted).
    """

    wiring: Wiring
    optical_order: tuple
    conditions: Conditions
    name: str = "stack"
    optics: dict = field(default_factory=dict)
    #: for layer stacks: the layer model the optics stage needs (layer_stage.LayerModel)
    model: object = None

    def element(self, name):
        return self.wiring.elements[name]

    @property
    def elements(self):
        """All elements in optical order."""
        return [self.element(n) for n in self.optical_order]

    @property
    def subcells(self):
        return [e for e in self.elements if e.kind == "subcell"]

    def string(self, number):
        """Elements of string ``number`` in current order (front to back)."""
        return [self.element(n) for n in self.wiring.paths[number - 1]]

    @property
    def strings(self):
        return [self.string(n) for n in range(1, self.conditions.strings + 1)]

    @property
    def graph(self):
        """The wiring as a networkx.DiGraph (nodes: terminals and element names, the element in
        the node attribute ``element``; edges front to back), built on each request."""
        import networkx as nx

        graph = nx.DiGraph()
        for number, path in enumerate(self.wiring.paths, start=1):
            graph.add_node(front(number), terminal=True)
            graph.add_node(back(number), terminal=True)
            for name in path:
                graph.add_node(name, element=self.element(name), terminal=False)
            nx.add_path(graph, [front(number), *path, back(number)])
        return graph

    def with_elements(self, elements, **changes):
        """A copy with some element objects replaced (matched by name)."""
        return replace(self, wiring=self.wiring.with_elements(elements), **changes)


def build_circuit(elements, conditions: Conditions, *, name="stack", model=None):
    """Wire elements (in optical order, each with its ``string`` number) into a checked Circuit."""
    paths = [[e.name for e in elements if e.string == number]
             for number in range(1, conditions.strings + 1)]
    circuit = Circuit(Wiring(paths, {e.name: e for e in elements}),
                      tuple(e.name for e in elements), conditions, name, model=model)
    check_circuit(circuit, elements)
    return circuit


def check_circuit(circuit, elements=None):
    """Each string one path between its terminals that visits no element twice (unique names),
    and every element on exactly one string."""
    names = [e.name for e in elements] if elements is not None else list(circuit.optical_order)
    on_paths = [name for path in circuit.wiring.paths for name in path]
    if len(set(on_paths)) != len(on_paths):
        raise ValueError("circuit has a loop: an element name appears twice")
    if sorted(on_paths) != sorted(names):
        raise ValueError("some elements are on no string or on several")
    return True
