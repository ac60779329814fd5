"""Current matching: every subcell's photocurrent and the efficiency against one varied key.

The matched value is where two subcells' photocurrents cross, found by root finding
(scipy.optimize.brentq) on the optics alone, then solved for its efficiency. In a series string
the subcell with the lowest photocurrent limits the current (the current-matching condition of
multi-junction cells: Green, *Solar Cells*, 1982, ch. 10; Yamaguchi et al., Solar Energy 79,
78 (2005)), so in a stack of three or more subcells a crossing of two subcells matters only where
no third subcell lies below them: every match says whether its pair limits there.
"""
import itertools

import numpy as np
from scipy import optimize

from siltandem.studies.runner import run_chunks
from siltandem.result.record import provenance
from siltandem.studies.sweep import (check_study, design_table, evaluate_chunk, photocurrents_at,
                                     resolved_light, solve_designs)
from siltandem.stack.inputs import input_files


def match_currents(stack, variation, *, workers=None, cluster=None, output=None, progress=False,
                   spectrum=None, suns=None, temperature_K=None):
    """Sweep one key; find where subcell photocurrents cross.

    Returns
    -------
    table : pandas.DataFrame
        One row per value: the varied column, the result columns, each subcell's photocurrent.
    matches : list of dict
        Per crossing: ``subcells`` (the pair), ``value`` (of the varied key), ``photocurrent_mA_cm2``
        and the solved ``efficiency_pct`` there; ``limiting_subcell`` (the subcell of the lowest
        photocurrent there) and ``pair_limits`` (True when no other subcell's photocurrent is
        below the pair's, i.e. the crossing is a current match of the whole string).
    """
    import functools

    check_study(stack, [variation], workers=workers, cluster=cluster, spectrum=spectrum,
                suns=suns, temperature_K=temperature_K)
    options = dict(spectrum=spectrum, suns=suns, temperature_K=temperature_K)
    table = design_table([variation])
    function = functools.partial(evaluate_chunk, stack=stack, **options,
                                 light=resolved_light(stack, spectrum=spectrum))
    table = run_chunks(function, table, workers=workers, cluster=cluster, output=output,
                       progress=progress, inputs=input_files(stack, spectrum=spectrum),
                       metadata=provenance(stack, **options))
    names = [c[: -len(".photocurrent_mA_cm2")] for c in table.columns
             if c.endswith(".photocurrent_mA_cm2")]
    x = table[variation.column].to_numpy()
    matches = []
    reuse = {}          # a layer stack's parts that the key leaves alone, built once
    # current matching is between subcells of one series string: strings wired apart (4
    # terminals, ...) carry independent currents
    string_of = _strings_of(stack)
    for a, b in itertools.combinations(names, 2):
        if string_of.get(a, 1) != string_of.get(b, 1):
            continue
        difference = (table[f"{a}.photocurrent_mA_cm2"] - table[f"{b}.photocurrent_mA_cm2"])
        d = difference.to_numpy()
        for k in np.flatnonzero(np.sign(d[:-1]) * np.sign(d[1:]) < 0):
            def gap(value, a=a, b=b):
                currents = photocurrents_at(stack, variation.column, value, **options,
                                            reuse=reuse)
                return currents[a] - currents[b]
            value = optimize.brentq(gap, x[k], x[k + 1], xtol=1e-14, rtol=1e-15)
            currents = photocurrents_at(stack, variation.column, value, **options, reuse=reuse)
            solved = solve_designs(stack, {variation.column: np.array([value])}, **options)
            matches.append({"subcells": [a, b], "value": value,
                            "photocurrent_mA_cm2": currents[a],
                            "efficiency_pct": float(solved["efficiency_pct"][0]),
                            **pair_limits(_same_string(currents, string_of, a), a, b)})
        exact = np.flatnonzero(d == 0)
        for k in exact:
            solved = table.iloc[k]
            currents = {n: float(solved[f"{n}.photocurrent_mA_cm2"]) for n in names}
            matches.append({"subcells": [a, b], "value": float(x[k]),
                            "photocurrent_mA_cm2": currents[a],
                            "efficiency_pct": float(solved["efficiency_pct"]),
                            **pair_limits(_same_string(currents, string_of, a), a, b)})
    return table, matches


def _strings_of(stack):
    """Subcell name -> its string number (one compile of the stack as written)."""
    if stack.conditions.strings == 1:
        return {}
    from siltandem.circuit.compile import compile_stack

    return {cell.name: cell.string for cell in compile_stack(stack).subcells}


def _same_string(currents, string_of, name):
    """The photocurrents of the subcells in ``name``'s string."""
    own = string_of.get(name, 1)
    return {n: j for n, j in currents.items() if string_of.get(n, 1) == own}


def pair_limits(currents, a, b):
    """``limiting_subcell`` (the lowest photocurrent of ``currents``, name -> mA/cm2) and
    ``pair_limits``: whether the crossing pair ``a``, ``b`` is that lowest (to one part in 1e9:
    the pair's two currents are equal there to the root finder's tolerance)."""
    lowest = min(currents, key=currents.get)
    pair = min(currents[a], currents[b])
    limits = all(currents[n] >= pair * (1 - 1e-9) for n in currents if n not in (a, b))
    return {"limiting_subcell": a if limits else lowest, "pair_limits": bool(limits)}


def plot_matching(table, variation, matches, axes=None, *, title=""):
    """Two panels sharing the varied axis: photocurrents (matched points marked), efficiency."""
    if axes is None:
        import matplotlib.pyplot as plt

        _, axes = plt.subplots(2, 1, figsize=(7, 6.5), sharex=True)
    top, bottom = axes
    x = table[variation.column]
    for k, column in enumerate(c for c in table.columns if c.endswith(".photocurrent_mA_cm2")):
        top.plot(x, table[column], color=f"C{k}", label=column.removesuffix(".photocurrent_mA_cm2"))
    for m in matches:
        top.plot([m["value"]], [m["photocurrent_mA_cm2"]], "o", mfc="white", mec="red", mew=2)
        top.annotate(f"matched at {m['value']:.5g}", (m["value"], m["photocurrent_mA_cm2"]),
                     textcoords="offset points", xytext=(6, 8), fontsize=8, color="red")
        bottom.axvline(m["value"], color="red", lw=0.8, ls="--")
    top.set_ylabel("photocurrent (mA/cm²)")
    top.legend(fontsize=8)
    top.grid(alpha=0.3)
    top.set_title(title, fontsize=10)
    bottom.plot(x, table["efficiency_pct"], color="black")
    best = table["efficiency_pct"].idxmax()
    bottom.plot([x[best]], [table["efficiency_pct"][best]], "*", ms=12, color="gold", mec="black",
                label=f"best {table['efficiency_pct'][best]:.2f} % at {x[best]:.5g}")
    bottom.set_xlabel(variation.column)
    bottom.set_ylabel("efficiency (%)")
    bottom.legend(fontsize=8)
    bottom.grid(alpha=0.3)
    return axes


def energy_by_value(stack, variation, table, *, weather, tilt_deg=None, azimuth_deg=None,
                    progress=False):
    """Annual energy [kWh/m2] for every value of the sweep (one yield year per value).

    ``weather`` is a path (``"demo"``: pvlib's TMY3 file) or a loaded Weather. Element stacks
    only (the yield year of a layer stack is not yet supported).
    """
    import sys

    from siltandem.studies.sweep import with_values
    from siltandem.studies.yield_year import annual_yield
    from siltandem.materials.weather import Weather, read_weather

    if stack.layers:
        from siltandem.errors import StackError

        raise StackError("ranking by energy needs an element stack (the yield year of a layer "
                         "stack is not yet supported)", file=stack.source,
                         fix="rank by efficiency, or describe the stack with [[element]] tables")
    year = weather if isinstance(weather, Weather) else read_weather(weather)
    energies = []
    values = table[variation.column].to_numpy()
    for k, value in enumerate(values):
        varied = with_values(stack, {variation.column: np.array([value])})
        result = annual_yield(varied, year, tilt_deg=tilt_deg, azimuth_deg=azimuth_deg)
        energies.append(result.summary["annual_energy_kWh_m2"])
        if progress:
            print(f"\r  energy year {k + 1} / {len(values)}", end="", file=sys.stderr)
    if progress:
        print("", file=sys.stderr)
    return np.asarray(energies, dtype=float)
