"""Compiling a stack into a circuit: element and layer stacks into elements (laws bound to their
parameters) and the networkx graph of the strings.
"""
