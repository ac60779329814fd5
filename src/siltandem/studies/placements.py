"""Ranking tunnel-junction placements: each candidate compiled, solved and compared.

A layer stack declares its candidates as ``[[placement]]`` tables (placements_spec.py): a named set
of layers inserted at a named position. ``auto=True`` instead takes the first candidate's junction
layer pair and tries it at every boundary where the pair's order fits its neighbours (the upper
neighbour of the pair's type, the lower of the other), made of the material as given, of the upper
neighbour's material, of the lower neighbour's material, and as a hetero pair of the two.
"""
from dataclasses import replace
import functools

import numpy as np

from siltandem.errors import StackError
from siltandem.materials import material_identity
from siltandem.studies.runner import run_chunks
from siltandem.stack.placements import Placement, with_placement


def auto_candidates(stack):
    """The first placement's pair at every sensible position, in four material versions."""
    placements = stack.extra.get("placements", ())
    if not placements:
        raise StackError("--auto needs one [[placement]] giving the junction's layer pair",
                         file=stack.source, fix="add a [[placement]] with two [[placement.layer]]")
    pair = placements[0].layers
    if len(pair) != 2 or pair[0].polarity == pair[1].polarity:
        raise StackError("--auto takes the first placement's two layers as the junction pair "
                         "(opposite types)", file=stack.source, where="placement 1",
                         fix="give exactly two layers, p++ and n++, in their order from the sun")
    candidates = []
    layers = stack.layers
    for i in range(len(layers) - 1):
        upper, lower = layers[i], layers[i + 1]
        if upper.polarity != pair[0].polarity or lower.polarity != pair[1].polarity:
            continue
        versions = {
            "as given": (pair[0], pair[1]),
            f"in {upper.material}": (replace(pair[0], material=upper.material,
                                             composition=upper.composition),
                                     replace(pair[1], material=upper.material,
                                             composition=upper.composition)),
            f"in {lower.material}": (replace(pair[0], material=lower.material,
                                             composition=lower.composition),
                                     replace(pair[1], material=lower.material,
                                             composition=lower.composition)),
            f"hetero {upper.material}/{lower.material}": (
                replace(pair[0], material=upper.material, composition=upper.composition),
                replace(pair[1], material=lower.material, composition=lower.composition)),
        }
        seen = set()
        for label, (a, b) in versions.items():
            key = (material_identity(a.material, a.composition),
                   material_identity(b.material, b.composition))
            if key in seen:
                continue
            seen.add(key)
            candidates.append(Placement(f"after {upper.name}, {label}", i, (a, b)))
    if not candidates:
        raise StackError(f"no boundary where a {pair[0].polarity}++/{pair[1].polarity}++ pair "
                         "fits its neighbours", file=stack.source,
                         fix="check the pair's order against the stack's polarity")
    return tuple(candidates)


def evaluate_candidates(chunk, *, stack, candidates, spectrum=None, suns=None,
                        temperature_K=None):
    """Chunk function: solve each candidate (one row per candidate index in ``design``).
    ``spectrum``: a name or path, or (from :func:`rank_placements`) the spectrum already read.
    The candidates of a chunk share one ``reuse`` dict (compile_stack, illuminate): the
    subcells, junctions, interfaces and absorption tables they have in common are built once,
    the same elements as each candidate's own compile would build. They are solved together
    (result.driver.compute_results): candidates whose circuits have one shape (the junction at
    a position that gives the same elements in the same order) as one batched solve, and the
    subcell-alone and element-removal strings of all of them grouped by shape, one batched
    solve per group; each candidate's numbers are bit for bit those of its solve alone."""
    from siltandem.result.driver import compute_results

    designs = [int(design) for design in chunk["design"].to_numpy()]
    found = compute_results([with_placement(stack, candidates[design]) for design in designs],
                            spectrum=spectrum, suns=suns, temperature_K=temperature_K,
                            curve_points=60, reuse={})
    rows = []
    for design, result in zip(designs, found):
        placement = candidates[design]
        row = {"design": design, "placement": placement.name}
        if isinstance(result, StackError):
            row.update({"efficiency_pct": np.nan, "problem": result.problem})
            rows.append(row)
            continue
        s = result.summary
        row.update({"efficiency_pct": s["efficiency_pct"], "voc_V": s["voc_V"],
                    "jsc_mA_cm2": s["jsc_mA_cm2"], "fill_factor_pct": s["fill_factor_pct"],
                    "limiting_subcell": next(c["name"] for c in s["subcells"] if c["limiting"]),
                    "regime": s["regime"], "problem": ""})
        inserted = {layer.name for layer in placement.layers}
        row["inserted_parasitic_mA_cm2"] = sum(p["absorbed_mA_cm2"] for p in s["parasitic"]
                                               if p["layer"] in inserted)
        for element in s["elements"]:
            if element["kind"] in ("tunnel", "isotype"):
                row[f"penalty:{element['name']}"] = element["efficiency_penalty_pct_abs"]
        row["tunnel_penalty_pct_abs"] = sum(e["efficiency_penalty_pct_abs"] for e in s["elements"]
                                            if e["kind"] == "tunnel")
        row["interface_penalty_pct_abs"] = sum(e["efficiency_penalty_pct_abs"]
                                               for e in s["elements"] if e["kind"] == "isotype")
        rows.append(row)
    import pandas as pd

    return pd.DataFrame(rows)


def rank_placements(stack, *, auto=False, workers=None, cluster=None, output=None,
                    progress=False, spectrum=None, suns=None, temperature_K=None):
    """Every candidate solved; a DataFrame ranked by efficiency (best first, rank column)."""
    import pandas as pd

    from siltandem.stack.options import check_conditions, check_study_options
    from siltandem.studies.sweep import resolved_light, study_light

    suns, temperature_K = check_conditions(suns=suns, temperature_K=temperature_K)
    workers, _ = check_study_options(workers=workers, cluster=cluster)
    study_light(stack, spectrum=spectrum, suns=suns)
    # the spectrum read here, on the client, at one sun: its table travels with every task, so
    # workers on a cluster read no file whatever their working folder (as design_map does)
    light = resolved_light(stack, spectrum=spectrum)
    candidates = auto_candidates(stack) if auto else stack.extra.get("placements", ())
    if not candidates:
        raise StackError("the stack declares no [[placement]] candidates", file=stack.source,
                         fix="add [[placement]] tables, or use --auto with one of them")
    table = pd.DataFrame({"design": np.arange(len(candidates), dtype=np.int64)})
    function = functools.partial(evaluate_candidates, stack=stack, candidates=candidates,
                                 spectrum=light, suns=suns, temperature_K=temperature_K)
    from siltandem.stack.inputs import input_files

    result = run_chunks(function, table, workers=workers, cluster=cluster, output=output,
                        progress=progress, chunk_rows=1 if (workers or cluster) else None,
                        inputs=input_files(stack, spectrum=spectrum))
    result = result.sort_values("efficiency_pct", ascending=False, na_position="last")
    result.insert(0, "rank", np.arange(1, len(result) + 1))
    return result.reset_index(drop=True)


def plot_placements(table, axes=None, *, title=""):
    """Side by side: each candidate's efficiency, and its junction and interface penalties.

    The efficiency axis starts at zero (bar lengths compare honestly); a candidate that could not
    be solved gets a hatched grey bar across the axis with its problem written on it.
    """
    if axes is None:
        import matplotlib.pyplot as plt

        _, axes = plt.subplots(1, 2, figsize=(12, 0.6 * len(table) + 2.5))
    left, right = axes
    names = table["placement"].tolist()[::-1]
    y = np.arange(len(names))
    efficiency = table["efficiency_pct"].to_numpy(dtype=float)[::-1]
    failed = ~np.isfinite(efficiency)
    finite = efficiency[~failed]
    top = 1.1 * finite.max() if len(finite) else 1.0
    left.barh(y[~failed], finite, color="tab:blue")
    for k, value in zip(y[~failed], finite):
        left.text(value, k, f" {value:.2f}", va="center", fontsize=8)
    problems = (table["problem"].tolist()[::-1] if "problem" in table else [""] * len(names))
    for k in y[failed]:
        left.barh(k, top, color="0.9", hatch="//", edgecolor="0.6")
        reason = str(problems[k]) if isinstance(problems[k], str) else ""
        left.text(0.01 * top, k, f"not solved: {reason}"[:90], va="center", fontsize=7)
    left.set_xlim(0, top)
    left.set_yticks(y)
    left.set_yticklabels(names, fontsize=8)
    left.set_xlabel("efficiency (%)")
    left.set_title(title or "placements, best on top", fontsize=10)
    tunnel = np.nan_to_num(table.get("tunnel_penalty_pct_abs", 0 * y).to_numpy(dtype=float)[::-1])
    interface = np.nan_to_num(table.get("interface_penalty_pct_abs", 0 * y).to_numpy(dtype=float)[::-1])
    right.barh(y, tunnel, color="tab:orange", label="tunnel junctions")
    right.barh(y, interface, left=tunnel, color="tab:red", label="isotype interfaces")
    right.set_xlim(0, max(1.1 * float(np.max(tunnel + interface, initial=0.0)), 0.1))
    right.set_yticks(y)
    right.set_yticklabels([])
    right.set_xlabel("efficiency penalty (% absolute)")
    right.legend(fontsize=8)
    for ax in axes:
        ax.grid(alpha=0.3, axis="x")
    return axes


def energy_of_candidates(stack, table, *, auto=False, weather, tilt_deg=None, azimuth_deg=None,
                         progress=False):
    """Add each candidate's annual energy (a yield year each) and rank by it (best first)."""
    import sys

    from siltandem.stack.options import check_plane
    from siltandem.studies.sky import hourly_light
    from siltandem.studies.yield_year import annual_yield, weather_and_plane

    check_plane(tilt_deg=tilt_deg, azimuth_deg=azimuth_deg)          # before any work
    candidates = auto_candidates(stack) if auto else stack.extra.get("placements", ())
    by_name = {c.name: c for c in candidates}
    # the year's hourly light (sun, plane, spectra, cell temperature) once for every candidate
    year, tilt_deg, azimuth_deg = weather_and_plane(weather, tilt_deg, azimuth_deg)
    light = hourly_light(year, tilt_deg=tilt_deg, azimuth_deg=azimuth_deg)
    energies = []
    for k, name in enumerate(table["placement"]):
        if not np.isfinite(table["efficiency_pct"].iloc[k]):
            energies.append(np.nan)
            continue
        result = annual_yield(with_placement(stack, by_name[name]), year, tilt_deg=tilt_deg,
                              azimuth_deg=azimuth_deg, light=light)
        energies.append(result.summary["annual_energy_kWh_m2"])
        if progress:
            print(f"\r  energy year {k + 1} / {len(table)}", end="", file=sys.stderr)
    if progress:
        print("", file=sys.stderr)
    out = table.assign(annual_energy_kWh_m2=energies)
    out = out.sort_values("annual_energy_kWh_m2", ascending=False, na_position="last")
    out["rank"] = np.arange(1, len(out) + 1)
    return out.reset_index(drop=True)
