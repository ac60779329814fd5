"""The series solve: the light I-V of each string, its global MPP (certified), Voc and Jsc; the
piecewise trace through tunnel junctions past their peak.
"""
