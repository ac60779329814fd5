"""siltandem: light I-V, efficiency and per-interface losses of multi-junction solar cells on silicon.

Pipeline (one way, left to right): load a stack file -> compile to a circuit -> optics (photocurrents)
-> series solve -> result. See DEVELOPERS.md.
"""
__version__ = "0.1.0"
