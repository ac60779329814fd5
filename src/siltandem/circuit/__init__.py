"""Compiling a stack into a circuit: element and layer stacks into elements (laws bound to their
parameters) and the wiring of the strings (a networkx graph on request).
"""
