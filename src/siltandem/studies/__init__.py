"""Studies over many designs: maps, current matching, placements, loss waterfalls, energy yield,
one interface on its own, efficiency against concentration, and the chunk runner (in process,
local pool, Dask).
"""
