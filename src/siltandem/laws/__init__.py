"""Pure, vectorized physics: element laws (diode, Esaki, thermionic), optics and collection laws,
and their compiled (numba) scalar forms. No file access, no printing.
"""
