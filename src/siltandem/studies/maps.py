"""Design maps: a grid over two varied keys, any output column, the optimum marked."""
import functools


from siltandem.report.plots import axis_label
from siltandem.result.record import provenance
from siltandem.studies.runner import run_chunks
from siltandem.studies.sweep import (check_study, design_table, evaluate_chunk, forget_study_reuse,
                                     resolved_light)
from siltandem.stack.inputs import input_files


def design_map(stack, first, second, *, workers=None, cluster=None, output=None, progress=False,
               chunk_rows=None, spectrum=None, suns=None, temperature_K=None):
    """Solve every design of the grid first x second; long-form DataFrame, one row per design.

    Columns: ``design``, the two varied columns (named as given, e.g. ``top.gap_eV``), then the
    result columns (``efficiency_pct``, ``voc_V``, ``jsc_mA_cm2``, ...). Silent unless
    ``progress=True`` (a progress line on stderr once the run has lasted 2 s; the command line's
    default), ``progress="tqdm"`` (a bar; a widget in a notebook) or ``progress=f(done, total)``.
    With ``output``, the folder reads back as exactly this table (``pandas.read_parquet``).
    """
    check_study(stack, [first, second], workers=workers, cluster=cluster,
                chunk_rows=chunk_rows, spectrum=spectrum, suns=suns, temperature_K=temperature_K)
    table = design_table([first, second])
    # the spectrum is read here and travels with every chunk: workers read no file
    function = functools.partial(evaluate_chunk, stack=stack, spectrum=spectrum, suns=suns,
                                 temperature_K=temperature_K,
                                 light=resolved_light(stack, spectrum=spectrum))
    try:
        return run_chunks(function, table, workers=workers, cluster=cluster, output=output,
                          progress=progress, chunk_rows=chunk_rows,
                          inputs=input_files(stack, spectrum=spectrum),
                          metadata=provenance(stack, spectrum=spectrum, suns=suns,
                                              temperature_K=temperature_K))
    finally:
        forget_study_reuse()        # the chunks' shared parts (sweep.study_reuse) go with the study


def optimum(table, column="efficiency_pct"):
    """The row of the grid with the largest ``column`` (NaN rows ignored)."""
    return table.loc[table[column].idxmax()]


def plot_map(table, first, second, column="efficiency_pct", ax=None, *, title=""):
    """Filled map of ``column`` over the two varied keys, iso-lines, the optimum marked."""
    if ax is None:
        import matplotlib.pyplot as plt

        _, ax = plt.subplots(figsize=(7, 5.5))
    x, y = first.values, second.values
    z = (table.sort_values("design")[column].to_numpy(dtype=float)
         .reshape(len(x), len(y)).T)
    filled = ax.contourf(x, y, z, levels=24, cmap="viridis")
    ax.figure.colorbar(filled, ax=ax, label=axis_label(column))
    lines = ax.contour(x, y, z, levels=10, colors="white", linewidths=0.6)
    ax.clabel(lines, fontsize=7, fmt="%.3g")
    best = optimum(table, column)
    ax.plot([best[first.column]], [best[second.column]], "*", ms=16, color="gold", mec="black")
    # the label points inwards from the optimum, on a white box, wherever the optimum lies
    x_mid = 0.5 * (x.min() + x.max())
    y_mid = 0.5 * (y.min() + y.max())
    ax.annotate(f"optimum {best[column]:.4g}\n{first.column} = {best[first.column]:.4g}\n"
                f"{second.column} = {best[second.column]:.4g}",
                (best[first.column], best[second.column]), textcoords="offset points",
                xytext=(12 if best[first.column] <= x_mid else -12,
                        -12 if best[second.column] >= y_mid else 12),
                ha="left" if best[first.column] <= x_mid else "right",
                va="top" if best[second.column] >= y_mid else "bottom", fontsize=8,
                color="black", bbox=dict(boxstyle="round", fc="white", alpha=0.85),
                arrowprops=dict(arrowstyle="-", color="white"))
    ax.set_xlabel(axis_label(first.column))
    ax.set_ylabel(axis_label(second.column))
    ax.set_title(title, fontsize=10)
    return ax
