"""What each passive element of a string costs: the string's maximum power with it removed.

The efficiency penalty of a resistor, tunnel junction or isotype interface is the MPP power of
its string solved again without that element, minus the string's own. Solving one string of
N - 1 elements per element costs N solves of O(N) each, O(N^2) in all (a thousand resistors took
minutes). Series elements commute (the string's voltage is the sum of theirs at the common
current), so the strings without one element of a group of alike elements (same class, same
non-numeric settings) differ only in their parameters: they are one batch of designs,

    design b = every element outside the group, and the group without its member b,

solved at once (the solver batches designs with no change of its numbers: a design's result
never depends on its batch). Inside a group, slot m of design b holds member m for m < b and
member m + 1 beyond. Resistors need no slots: their sum R_total - R_b is one resistor per design.
So a string costs one batched solve per group instead of one solve per element, with O(N)
element evaluations per pass.

The element order within the string changes (the group's slots take its first members'
places), which changes only the order in which the solver sums voltages: rounding.
"""
from dataclasses import fields, replace

import numpy as np

from siltandem.circuit.elements import Resistor
from siltandem.result.record import first_value
from siltandem.solve.series import solve_string


def removal_powers(string, temperature_K):
    """MPP power [W/m^2] of ``string`` without each of its non-subcell elements.

    Parameters
    ----------
    string : sequence of elements
        One series string of one design (every parameter of shape (1, 1)), photocurrents set.
    temperature_K : float

    Returns
    -------
    dict
        element name -> MPP power of the string without it (a float; NaN if that string has no
        operating point).
    """
    names, jobs = removal_plan(string)
    return removal_from(names, jobs, [solve_string(reduced, temperature_K)
                                      for _, reduced in jobs])


def removal_plan(string):
    """The strings :func:`removal_powers` solves: (the removable elements' names in current
    order, [(names of the members a string removes, that string)]). A group of alike members
    is one batched string (:func:`_without_each`); anything else one string per element."""
    string = list(string)
    removable = [e for e in string if e.kind != "subcell"]
    groups = {}
    for element in removable:
        groups.setdefault(_signature(element), []).append(element)
    jobs = []
    for members in groups.values():
        if len(members) == 1 or not all(_single_design(e) for e in members):
            for element in members:                    # one by one: a string per element
                jobs.append(((element.name,), [e for e in string if e is not element]))
            continue
        jobs.append((tuple(e.name for e in members), _without_each(string, members)))
    return [e.name for e in removable], jobs


def removal_from(names, jobs, solutions):
    """:func:`removal_powers`' answer from the solutions of :func:`removal_plan`'s strings."""
    powers = {}
    for (members, _), solution in zip(jobs, solutions):
        if len(members) == 1:
            powers[members[0]] = first_value(solution.mpp_W_m2)
            continue
        mpp = np.asarray(solution.mpp_W_m2, dtype=float).reshape(-1)
        powers.update({name: float(p) for name, p in zip(members, mpp)})
    return {name: powers[name] for name in names}


def _without_each(string, members):
    """One batched string: design b is ``string`` without ``members[b]``."""
    count = len(members)
    place = {id(e): k for k, e in enumerate(members)}
    if isinstance(members[0], Resistor):
        # one resistor per design holding the others' sum (prefix + suffix: no cancellation)
        values = np.array([float(np.ravel(e.series_ohm_m2)[0]) for e in members])
        before = np.concatenate([[0.0], np.cumsum(values)[:-1]])
        after = np.concatenate([np.cumsum(values[::-1])[::-1][1:], [0.0]])
        lumped = replace(members[0], series_ohm_m2=(before + after).reshape(-1, 1))
        slots = [lumped]
    else:
        slots = []
        for m in range(count - 1):
            # design b: member m below b, member m + 1 from b on
            picks = [members[m] if m < b else members[m + 1] for b in range(count)]
            slots.append(_stacked(picks, name=members[m].name))
    out, next_slot = [], iter(slots)
    for element in string:
        if id(element) not in place:
            out.append(element)
        elif place[id(element)] < len(slots):         # the group's first places hold its slots
            out.append(next(next_slot))
    return out


def _stacked(elements, *, name):
    """One element of the class of ``elements`` whose (B, 1) parameters are theirs, row by row."""
    first = elements[0]
    changes = {"name": name}
    for f in fields(first):
        if not f.init or f.name == "name":
            continue
        value = getattr(first, f.name)
        if isinstance(value, np.ndarray):
            changes[f.name] = np.concatenate([np.asarray(getattr(e, f.name), dtype=float)
                                              .reshape(1, -1) for e in elements], axis=0)
    return replace(first, **changes)


def _signature(element):
    """Elements that may share a batch: the same class and the same non-numeric settings."""
    settings = []
    for f in fields(element):
        if not f.init or not f.compare or f.name == "name":
            continue
        value = getattr(element, f.name)
        settings.append((f.name, "array" if isinstance(value, np.ndarray) else repr(value)))
    return (type(element), tuple(settings))


def _single_design(element):
    return all(np.size(getattr(element, f.name)) == 1 for f in fields(element)
               if f.init and isinstance(getattr(element, f.name), np.ndarray))
