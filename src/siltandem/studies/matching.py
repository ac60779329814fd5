"""Current matching: every subcell's photocurrent and the efficiency against one varied key.

The matched value is where two subcells' photocurrents cross, found by root finding
(scipy.optimize.brentq) on the optics alone, then solved for its efficiency. A layer's thickness
is searched on batched optics (:class:`ThicknessOptics`: the stack compiled once, many thicknesses
through the layer optics in one pass); other keys compile and illuminate a design per step. In a series string
the subcell with the lowest photocurrent limits the current (the current-matching condition of
multi-junction cells: Green, *Solar Cells*, 1982, ch. 10; Yamaguchi et al., Solar Energy 79,
78 (2005)), so in a stack of three or more subcells a crossing of two subcells matters only where
no third subcell lies below them: every match says whether its pair limits there.
"""
from dataclasses import replace
import itertools

import numpy as np
from scipy import optimize

from siltandem.studies.runner import run_chunks
from siltandem import units
from siltandem.result.record import provenance
from siltandem.studies.sweep import (check_study, design_table, evaluate_chunk, forget_study_reuse,
                                     photocurrents_at, resolved_light, solve_designs)
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
    try:
        table = run_chunks(function, table, workers=workers, cluster=cluster, output=output,
                           progress=progress, inputs=input_files(stack, spectrum=spectrum),
                           metadata=provenance(stack, **options))
    finally:
        forget_study_reuse()        # the chunks' shared parts (sweep.study_reuse) go with the study
    names = [c[: -len(".photocurrent_mA_cm2")] for c in table.columns
             if c.endswith(".photocurrent_mA_cm2")]
    x = table[variation.column].to_numpy()
    matches = []
    reuse = {}          # a layer stack's parts that the key leaves alone, built once
    optics = {}         # a thickness's batched optics, built at the first crossing
    # current matching is between subcells of one series string: strings wired apart (4
    # terminals, ...) carry independent currents
    string_of = _strings_of(stack)
    for a, b in itertools.combinations(names, 2):
        if string_of.get(a, 1) != string_of.get(b, 1):
            continue
        difference = (table[f"{a}.photocurrent_mA_cm2"] - table[f"{b}.photocurrent_mA_cm2"])
        d = difference.to_numpy()
        for k in np.flatnonzero(np.sign(d[:-1]) * np.sign(d[1:]) < 0):
            ends = [{n: float(table[f"{n}.photocurrent_mA_cm2"].iloc[j]) for n in names} for j in (k, k + 1)]
            if "batched" not in optics:
                optics["batched"] = thickness_optics(stack, variation.column, **options)
            batched = optics["batched"]
            if batched is not None and batched.agrees(x[k:k + 2], ends):
                value = batched.crossing(a, b, x[k], x[k + 1])
                currents = {n: float(c[0]) for n, c in batched([value]).items()}
            else:
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


class ThicknessOptics:
    """Every subcell's photocurrent [mA/cm2] of a layer stack for many thicknesses of one layer at
    once: the stack compiled once, the layer's thickness (and its subcell's quasi-neutral
    thickness, the depletion widths being set by the dopings alone) made a (B, 1) array, and one
    pass of the layer optics (optics.layers.layer_light) for all B values."""

    def __init__(self, model, layer, light):
        self.model, self.layer, self.light = model, layer, light

    def __call__(self, values_nm):
        from siltandem.optics.layers import layer_light

        values = np.asarray(values_nm, dtype=float).reshape(-1, 1)
        model, j = self.model, self.layer
        shift_m = (values - model.layers[j].thickness_nm) * 1e-9
        layers = list(model.layers)
        layers[j] = replace(layers[j], thickness_nm=values)
        cells = [replace(c, emitter_thickness_m=c.emitter_thickness_m + shift_m) if c.emitter == j else
                 replace(c, base_thickness_m=c.base_thickness_m + shift_m) if c.base == j else c
                 for c in model.subcells]
        wavelength = self.light.wavelength_nm
        lit = layer_light(replace(model, layers=tuple(layers), subcells=tuple(cells)), wavelength,
                          self.light.photon_flux)
        return {cell.name: units.ma_cm2(np.trapezoid(r.emitter_A_m2 + r.depletion_A_m2 + r.base_A_m2,
                                                     wavelength, axis=-1))
                for cell, r in zip(model.subcells, lit.collected)}

    def agrees(self, values_nm, tables):
        """Whether these optics give the table's photocurrents (each design compiled on its own)
        at ``values_nm`` to 1e-9 relative: the check that the one-compile shortcut holds there."""
        found = self(values_nm)
        return all(abs(found[n][i] - want[n]) <= 1e-9 * abs(want[n])
                   for i, want in enumerate(tables) for n in want)

    def crossing(self, a, b, low, high):
        """The thickness where subcells ``a`` and ``b`` have equal photocurrents, between ``low``
        and ``high`` (a sign change): scipy.optimize.brentq on these optics, one value per step
        (measured: a pass of B values costs about B/2 single passes, the Lambertian channel's
        arrays growing with B, so a batched grid to narrow the bracket first took longer than
        brentq's 8 steps)."""
        def gap(value):
            currents = self([value])
            return float(currents[a][0] - currents[b][0])

        return optimize.brentq(gap, low, high, xtol=1e-14, rtol=1e-15)


def thickness_optics(stack, column, *, spectrum=None, suns=None, temperature_K=None):
    """:class:`ThicknessOptics` for a varied layer thickness (``LAYER.thickness_nm``) of a layer
    stack whose layer lies below the coherent front and whose subcell has a depletion region; None
    otherwise (the root search then compiles a design per step: sweep.photocurrents_at)."""
    from siltandem.circuit.compile import compile_stack
    from siltandem.optics.layers import front_film_count
    from siltandem.studies.sweep import study_light

    name, _, key = column.rpartition(".")
    if not stack.layers or key != "thickness_nm":
        return None
    index = [layer.name for layer in stack.layers].index(name) if name in {
        layer.name for layer in stack.layers} else None
    if index is None:
        return None
    changes = {k: v for k, v in (("spectrum", spectrum), ("suns", suns),
                                 ("temperature_K", temperature_K)) if v is not None}
    circuit = compile_stack(replace(stack, conditions=replace(stack.conditions, **changes)))
    model = circuit.model
    j = [layer.name for layer in model.layers].index(name) if name in {
        layer.name for layer in model.layers} else None
    # above the first emitter a layer may join or leave the coherent front (front_film_count)
    if j is None or j < max(front_film_count(model), min(c.emitter for c in model.subcells)):
        return None
    cell = next((c for c in model.subcells if j in (c.emitter, c.base)), None)
    if cell is not None and not cell.depletion_width_m > 0:
        return None
    light = study_light(stack, spectrum=spectrum, suns=circuit.conditions.suns)
    return ThicknessOptics(model, j, light)
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

    ``weather`` is a path (``"demo"``: pvlib's TMY3 file) or a loaded Weather; the hourly light
    (sun, plane of array, SPECTRL2, cell temperature) is computed once and shared by every value.
    A layer stack's value is a layer design (sweep.layer_design): its optics per photon once per
    temperature bin and its hours solved as one batch (yield_year.annual_yield).
    """
    import sys

    from siltandem.studies.sweep import layer_design, with_values
    from siltandem.studies.sky import hourly_light
    from siltandem.studies.yield_year import annual_yield, weather_and_plane

    from siltandem.stack.options import check_plane

    check_plane(tilt_deg=tilt_deg, azimuth_deg=azimuth_deg)          # before any work
    year, tilt_deg, azimuth_deg = weather_and_plane(weather, tilt_deg, azimuth_deg)
    light = hourly_light(year, tilt_deg=tilt_deg, azimuth_deg=azimuth_deg)
    energies = []
    values = table[variation.column].to_numpy()
    for k, value in enumerate(values):
        if stack.layers:
            varied = layer_design(stack, {variation.column: value})
        else:
            varied = with_values(stack, {variation.column: np.array([value])})
        result = annual_yield(varied, year, tilt_deg=tilt_deg, azimuth_deg=azimuth_deg, light=light)
        energies.append(result.summary["annual_energy_kWh_m2"])
        if progress:
            print(f"\r  energy year {k + 1} / {len(values)}", end="", file=sys.stderr)
    if progress:
        print("", file=sys.stderr)
    return np.asarray(energies, dtype=float)
