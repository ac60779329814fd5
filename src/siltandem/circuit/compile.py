"""Stack -> Circuit: element stacks through circuit.from_elements, layer stacks through
circuit.from_layers. Both give the same kind of Circuit (circuit.graph.Circuit)."""
from siltandem.circuit.from_elements import compile_element_stack
from siltandem.circuit.from_layers import compile_layer_stack


def compile_stack(stack, reuse=None):
    """Stack -> Circuit (no light yet): the element laws bound to their file values, wired into
    the strings of the stack (circuit.graph.Wiring). ``reuse``: a dict that a study of many layer
    designs passes to every compile, so that parts equal between designs are built once
    (compile_layer_stack)."""
    return compile_layer_stack(stack, reuse) if stack.layers else compile_element_stack(stack)
