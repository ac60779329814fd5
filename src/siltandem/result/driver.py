"""The main job end to end: ``run_stack(stack)`` = spectrum -> compile -> illuminate -> solve each
string -> :class:`~siltandem.result.record.Result`.

The Result object lives in ``record.py``, the rules of its summary in ``summary.py`` and the
passive elements' penalties in ``penalties.py``.
"""
from dataclasses import replace
import warnings

from siltandem.circuit.compile import compile_stack
from siltandem.optics.illuminate import illuminate
from siltandem.solve.kernels import notice_compiling
from siltandem.solve.series import solve_string, solve_strings
from siltandem.materials.spectra import get_spectrum, is_spectrum_object
from siltandem.result.record import Result, first_value, provenance
from siltandem.errors import ModelWarning
from siltandem.result.summary import missing_value_warnings, summarise


def run_stack(stack, *, spectrum=None, suns=None, temperature_K=None, curve_points=401):
    """Solve one stack: the main job.

    Every entry of the result's ``summary["warnings"]`` is also issued once through Python's
    :mod:`warnings` as a :class:`siltandem.ModelWarning` (filter it like any warning). Parameters
    and the Result as :func:`compute_result`, which solves without issuing them.
    """
    result = compute_result(stack, spectrum=spectrum, suns=suns, temperature_K=temperature_K,
                            curve_points=curve_points)
    for text in result.summary["warnings"]:
        warnings.warn(f"{result.summary['stack']}: {text}", ModelWarning, stacklevel=2)
    return result


def compute_result(stack, *, spectrum=None, suns=None, temperature_K=None, curve_points=401, reuse=None):
    """Solve one stack, listing its warnings in the summary only (studies and the command line,
    which report them themselves, call this; :func:`run_stack` issues them too).

    Parameters
    ----------
    stack : Stack
        From :func:`siltandem.stack.load_stack`.
    spectrum : str or pandas.Series or pandas.DataFrame or Spectrum, optional
        Override of ``[conditions] spectrum``: a name, a CSV path (relative to the working
        folder when given here), or a spectrum in memory (a Series of W/m2/nm indexed by
        wavelength in nm, e.g. ``pvlib.spectrum.get_reference_spectra()["global"]``; see
        :func:`siltandem.materials.spectra.spectrum_from_pandas`).
    suns : float, optional
        Override of ``[conditions] suns``.
    temperature_K : float, optional
        Override of ``[conditions] temperature_K``.
    curve_points : int
        Points of the traced light I-V per string.
    reuse : dict, optional
        Kept between the designs of one layer study (compile_stack, illuminate): parts equal
        between designs (subcells, junctions, interfaces, absorption tables) built once.
    """
    stack, conditions, light, circuit, note = _prepared(
        stack, spectrum=spectrum, suns=suns, temperature_K=temperature_K,
        curve_points=curve_points, reuse=reuse)
    temperature = conditions.temperature_K
    notice_compiling()
    strings, solutions = solve_strings(circuit.strings, circuit.subcells, temperature,
                                       curve_points=curve_points, solve=solve_string)
    alone = {cell.name: solve_string([cell], temperature) for cell in circuit.subcells}
    # the efficiency penalty of each passive element: the string solved again without it
    # (penalties.py: one batched solve per group of alike elements, not one solve per element)
    from siltandem.result.penalties import removal_powers

    without = {}
    for string, solution in zip(strings, solutions):
        for name, power in removal_powers(string, temperature).items():
            without[name] = power - first_value(solution.mpp_W_m2)
    return _finished(stack, conditions, light, circuit, solutions, alone, without, note,
                     spectrum=spectrum)


def _prepared(stack, *, spectrum, suns, temperature_K, curve_points, reuse):
    """One stack compiled and lit for :func:`compute_result`: (the stack solved, with its first
    declared placement if it has any; its conditions; the light; the lit circuit; the note
    saying which placement was solved, or None)."""
    from siltandem.stack.options import OPTION_SCHEMA, check_conditions, check_option

    suns, temperature_K = check_conditions(suns=suns, temperature_K=temperature_K)
    check_option(OPTION_SCHEMA["points"], curve_points, where="argument curve_points",
                 integer=True)
    placement_note = None
    if stack.extra.get("placements"):
        from siltandem.stack.placements import with_placement

        first = stack.extra["placements"][0]
        stack = with_placement(stack, first)
        placement_note = (f"solved with the first declared placement, {first.name!r}; "
                          "`siltandem placements` ranks them all")
    conditions = stack.conditions
    changes = {k: v for k, v in (("spectrum", spectrum), ("suns", suns),
                                 ("temperature_K", temperature_K)) if v is not None}
    conditions = replace(conditions, **changes)
    relative_to = None if spectrum is not None else stack.folder
    light = get_spectrum(conditions.spectrum, suns=conditions.suns, relative_to=relative_to,
                         where="spectrum" if spectrum is not None else "key conditions.spectrum",
                         origin=None if spectrum is not None else stack.source)
    if is_spectrum_object(conditions.spectrum):    # the JSON names an object by its label
        conditions = replace(conditions, spectrum=light.name)
    circuit = compile_stack(replace(stack, conditions=conditions), reuse)
    circuit = illuminate(circuit, light, reuse)
    return stack, conditions, light, circuit, placement_note


def _finished(stack, conditions, light, circuit, solutions, alone, without, placement_note, *,
              spectrum):
    """The Result of one solved stack (summary, warnings, provenance)."""
    summary = summarise(stack, conditions, light, circuit, solutions, alone, without)
    if placement_note:
        summary["warnings"].insert(0, placement_note)
    summary["warnings"].extend(missing_value_warnings(summary))
    summary.update(provenance(stack, spectrum=spectrum, suns=conditions.suns,
                              temperature_K=conditions.temperature_K))
    return Result(summary, None, circuit, solutions)


def compute_results(stacks, *, spectrum=None, suns=None, temperature_K=None, curve_points=401,
                    reuse=None):
    """:func:`compute_result` of several stacks (e.g. tunnel-junction placements of one layer
    stack), the alike solves of all of them batched: the circuits of one shape
    (result/batched.py ``circuit_key``: the same conditions and, in optical order, elements of
    the same class and non-numeric settings, whatever their names) as one batched solve, and
    every subcell-alone and element-removal string of every stack grouped by shape and solved
    one batch per group. Each Result is bit for bit :func:`compute_result` of its stack (the
    solver's answers never depend on the batch; tests/test_batched_results.py).

    Returns a list with, per stack, its Result, or the StackError that compiling, lighting or
    solving it raised (the other stacks are solved all the same). ``reuse``: as for
    :func:`compute_result`, shared by all the stacks.
    """
    from siltandem.errors import StackError
    from siltandem.result.batched import batches, circuit_key, solve_alike, solve_circuits
    from siltandem.result.penalties import removal_from, removal_plan
    from siltandem.stack.options import OPTION_SCHEMA, check_conditions, check_option

    check_conditions(suns=suns, temperature_K=temperature_K)      # the options: before any work
    check_option(OPTION_SCHEMA["points"], curve_points, where="argument curve_points",
                 integer=True)
    out, prepared = [None] * len(stacks), {}
    for k, stack in enumerate(stacks):
        try:
            prepared[k] = _prepared(stack, spectrum=spectrum, suns=suns,
                                    temperature_K=temperature_K, curve_points=curve_points,
                                    reuse=reuse)
        except StackError as exc:
            out[k] = exc
    groups = {}
    for k, (_, _, _, circuit, _) in prepared.items():
        groups.setdefault(circuit_key(circuit), []).append(k)
    notice_compiling()
    solved = {}
    for members in [run for group in groups.values() for run in batches(group, [1] * len(group))]:
        try:
            answers = solve_circuits([prepared[k][3] for k in members],
                                     curve_points=curve_points, solve=solve_string)
        except StackError:
            answers = []          # one by one: each stack's error is its own
            for k in members:
                try:
                    answers += solve_circuits([prepared[k][3]], curve_points=curve_points,
                                              solve=solve_string)
                except StackError as exc:
                    out[k] = exc
                    answers.append(None)
        solved.update({k: a for k, a in zip(members, answers) if a is not None})
    jobs, plans = [], {}
    for k, (strings, _) in solved.items():
        circuit, temperature = prepared[k][3], prepared[k][1].temperature_K
        alone = list(range(len(jobs), len(jobs) + len(circuit.subcells)))
        jobs += [([cell], temperature, 0) for cell in circuit.subcells]
        removals = []
        for string in strings:
            names, plan = removal_plan(string)
            removals.append((names, plan, list(range(len(jobs), len(jobs) + len(plan)))))
            jobs += [(reduced, temperature, 0) for _, reduced in plan]
        plans[k] = (alone, removals)
    answers = solve_alike(jobs)
    for k, (alone_jobs, removals) in plans.items():
        stack, conditions, light, circuit, note = prepared[k]
        strings, solutions = solved[k]
        mine = alone_jobs + [j for _, _, found in removals for j in found]
        failure = next((answers[j] for j in mine if isinstance(answers[j], StackError)), None)
        if failure is not None:
            out[k] = failure
            continue
        alone = {cell.name: answers[j] for cell, j in zip(circuit.subcells, alone_jobs)}
        without = {}
        for (names, plan, found), solution in zip(removals, solutions):
            for name, power in removal_from(names, plan, [answers[j] for j in found]).items():
                without[name] = power - first_value(solution.mpp_W_m2)
        out[k] = _finished(stack, conditions, light, circuit, solutions, alone, without, note,
                           spectrum=spectrum)
    return out
