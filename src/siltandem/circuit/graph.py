"""The circuit: a networkx graph of uniquely named elements between pairs of terminals.

Nodes are the terminals (``front 1``, ``back 1``, ...) and the elements (by name, with the
element object in the node attribute ``element``); edges run in the direction of the stack
current, front terminal to back terminal. A two-terminal stack is one path; a four-terminal
stack is two independent paths. The graph is checked once, before any arithmetic.
"""
from dataclasses import dataclass, field, replace

import networkx as nx

from siltandem.stack.load import Conditions


def front(string):
    return f"front {string}"


def back(string):
    return f"back {string}"


@dataclass(frozen=True)
class Circuit:
    """Elements wired in strings, plus the order light meets them and the conditions.

    Attributes
    ----------
    graph : networkx.DiGraph
    optical_order : tuple of str
        Element names in the order light meets them (sun side first).
    conditions : Conditions
    name : str
    optics : dict
        Filled by the optics stage: photon currents (incident, per subcell, transmitted).
    """

    graph: nx.DiGraph
    optical_order: tuple
    conditions: Conditions
    name: str = "stack"
    optics: dict = field(default_factory=dict)
    #: for layer stacks: the layer model the optics stage needs (layer_stage.LayerModel)
    model: object = None

    def element(self, name):
        return self.graph.nodes[name]["element"]

    @property
    def elements(self):
        """All elements in optical order."""
        return [self.element(n) for n in self.optical_order]

    @property
    def subcells(self):
        return [e for e in self.elements if e.kind == "subcell"]

    def string(self, number):
        """Elements of string ``number`` in current order (front to back)."""
        path = nx.shortest_path(self.graph, front(number), back(number))
        return [self.element(n) for n in path[1:-1]]

    @property
    def strings(self):
        return [self.string(n) for n in range(1, self.conditions.strings + 1)]

    def with_elements(self, elements, **changes):
        """A copy with some element objects replaced (matched by name)."""
        graph = self.graph.copy()
        for element in elements:
            graph.nodes[element.name]["element"] = element
        return replace(self, graph=graph, **changes)


def build_circuit(elements, conditions: Conditions, *, name="stack", model=None):
    """Wire elements (in optical order, each with its ``string`` number) into a checked Circuit."""
    graph = nx.DiGraph()
    for number in range(1, conditions.strings + 1):
        members = [e for e in elements if e.string == number]
        chain = [front(number)] + [e.name for e in members] + [back(number)]
        graph.add_node(front(number), terminal=True)
        graph.add_node(back(number), terminal=True)
        for element in members:
            graph.add_node(element.name, element=element, terminal=False)
        nx.add_path(graph, chain)
    circuit = Circuit(graph, tuple(e.name for e in elements), conditions, name, model=model)
    check_circuit(circuit)
    return circuit


def check_circuit(circuit):
    """Each terminal pair joined by exactly one path; every element on exactly one of them."""
    graph = circuit.graph
    if not nx.is_directed_acyclic_graph(graph):
        raise ValueError("circuit has a loop")
    on_paths = []
    for number in range(1, circuit.conditions.strings + 1):
        paths = list(nx.all_simple_paths(graph, front(number), back(number)))
        if len(paths) != 1:
            raise ValueError(f"string {number}: {len(paths)} paths between its terminals, need 1")
        on_paths.extend(paths[0][1:-1])
    elements = [n for n, terminal in graph.nodes(data="terminal") if not terminal]
    if sorted(on_paths) != sorted(elements):
        raise ValueError("some elements are on no string or on several")
    return True
