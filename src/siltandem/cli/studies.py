"""Command-line studies: ``siltandem match`` and ``siltandem map``."""
from pathlib import Path
import sys

import numpy as np

from siltandem.errors import StackError
from siltandem.text import number


def add_energy_options(parser):
    parser.add_argument("--by", choices=["efficiency", "energy"], default="efficiency",
                        help="rank by efficiency at the stack's conditions (default) or by "
                             "annual energy over a weather file's year")
    parser.add_argument("--weather", metavar="FILE.csv|demo",
                        help="with --by energy: a TMY3 weather file (demo: the one pvlib ships)")
    parser.add_argument("--tilt", metavar="DEG", help="with --by energy: plane tilt")
    parser.add_argument("--azimuth", metavar="DEG",
                        help="with --by energy: plane azimuth (clockwise from north)")


def _check_energy(args):
    if args.by == "energy" and not args.weather:
        raise StackError("--by energy needs --weather FILE (or --weather demo)", where="--by",
                         fix="add --weather demo for the TMY3 file pvlib ships")
    if args.by != "energy" and args.weather:
        raise StackError("--weather goes with --by energy", where="--weather",
                         fix="add --by energy, or leave out --weather")
    for option, value in (("--tilt", args.tilt), ("--azimuth", args.azimuth)):
        if args.by != "energy" and value is not None:
            raise StackError(f"{option} goes with --by energy", where=option,
                             fix=f"add --by energy --weather FILE, or leave out {option}")


def _weather(args):
    """The weather year of --by energy, read before any work (a bad file fails at once)."""
    if args.by != "energy":
        return None
    from siltandem.materials.weather import read_weather

    return read_weather(args.weather)


def _weather_input(args):
    if getattr(args, "by", None) != "energy" or not args.weather:
        return []
    from siltandem.materials.weather import demo_weather_path

    path = demo_weather_path() if args.weather == "demo" else Path(args.weather)
    return [("the weather file", path)]


def add_study_options(parser):
    parser.add_argument("stack", help="stack file (.toml)")
    parser.add_argument("--vary", action="append", required=True, metavar="NAME.KEY=START:STOP:N",
                        help="a numeric key of a named element, over N values")
    parser.add_argument("--workers", help="local worker processes")
    parser.add_argument("--cluster", metavar="ADDRESS",
                        help="address of a running dask.distributed scheduler (tcp://host:port)")
    parser.add_argument("--out", metavar="FOLDER",
                        help="write results chunk by chunk (Parquet) into FOLDER; a rerun of the "
                             "same command resumes from what is there")
    parser.add_argument("--csv", metavar="PATH.csv", help="write the table as CSV")
    parser.add_argument("--parquet", metavar="PATH.parquet", help="write the table as Parquet")
    parser.add_argument("--plot", metavar="PATH.png|svg", help="draw the study")
    parser.add_argument("--json", metavar="PATH", help="write the summary as JSON ('-' stdout)")
    parser.add_argument("--spectrum", help="override the stack's spectrum")
    parser.add_argument("--suns", help="override the concentration")
    parser.add_argument("--temperature", metavar="K", help="override the temperature")
    parser.add_argument("--quiet", action="store_true", help="no progress line")


def _check_paths(args):
    for option, path, allowed in (("--csv", args.csv, {".csv"}),
                                  ("--parquet", getattr(args, "parquet", None), {".parquet"}),
                                  ("--plot", args.plot, {".png", ".svg", ".pdf"})):
        if path is not None and Path(path).suffix.lower() not in allowed:
            raise StackError(f"{option} {path}: unsupported file type", where=option,
                             fix=f"give a path ending in {' or '.join(sorted(allowed))}")
    if getattr(args, "parquet", None) or getattr(args, "out", None):
        from siltandem.studies.runner import require_parquet

        require_parquet("--parquet" if getattr(args, "parquet", None) else "--out")
    workers, cluster = getattr(args, "workers", None), getattr(args, "cluster", None)
    if workers is not None and cluster:
        raise StackError("--workers and --cluster exclude each other", where="--workers",
                         fix="give one of them")
    if cluster is not None:
        from siltandem.stack.options import check_cluster_address

        check_cluster_address(cluster, where="--cluster", in_process=False)


def _check_outputs(args, stack):
    """Every output of the study against the files it reads, before any work."""
    from siltandem.files import check_outputs
    from siltandem.stack.inputs import stack_inputs

    check_outputs([(option, getattr(args, option[2:], None))
                   for option in ("--csv", "--parquet", "--plot", "--json")],
                  stack_inputs(stack, spectrum=args.spectrum) + _weather_input(args),
                  folders=[("--out", getattr(args, "out", None))])


def _connect(args):
    """The dask client of --cluster (short connect timeout, one message), or None."""
    if not getattr(args, "cluster", None):
        return None
    from siltandem.stack.options import connect_cluster

    return connect_cluster(args.cluster)


def command_provenance(args, stack):
    """The provenance of a command's outputs (result.record.provenance with its overrides)."""
    from siltandem.result.record import provenance

    return provenance(stack, spectrum=getattr(args, "spectrum", None),
                      suns=getattr(args, "suns", None),
                      temperature_K=getattr(args, "temperature", None))


def _write_outputs(args, table, summary, figure=None, *, stack):
    from siltandem.files import save_figure_atomic, write_atomic
    from siltandem.result.record import json_text, parquet_bytes, provenance_lines
    from siltandem.text import csv_safe

    record = command_provenance(args, stack)
    if args.csv:
        write_atomic(args.csv, provenance_lines(record)
                     + csv_safe(table).to_csv(index=False, float_format="%.10g"))
        print(f"  wrote {args.csv}")
    if args.parquet:
        write_atomic(args.parquet, parquet_bytes(table, record))
        print(f"  wrote {args.parquet}")
    if args.json:
        text = json_text({**summary, **record})
        if args.json == "-":
            getattr(args, "json_stream", sys.stdout).write(text)
        else:
            write_atomic(args.json, text)
            print(f"  wrote {args.json}")
    if figure is not None and args.plot:
        save_figure_atomic(figure, args.plot)
        print(f"  wrote {args.plot}")


def _options(args, client=None):
    return dict(workers=args.workers, cluster=client, output=args.out,
                progress=not args.quiet, spectrum=args.spectrum, suns=args.suns,
                temperature_K=args.temperature)


def _check_study(args, stack, variations):
    """The study's options, memory and designs (studies.sweep.check_study) before any work,
    naming the command-line options."""
    from siltandem.stack.options import CLI_NAMES
    from siltandem.studies.sweep import check_study

    check_study(stack, variations, workers=args.workers, cluster=args.cluster,
                spectrum=args.spectrum, suns=args.suns, temperature_K=args.temperature,
                names=CLI_NAMES)


def _check_column(column, stack, variations):
    """``map --column``: a numeric result column of this stack, known before the study runs."""
    from siltandem.circuit.compile import compile_stack
    from siltandem.studies.sweep import RESULT_COLUMNS

    if stack.layers:
        names = [cell.name for cell in compile_stack(stack).subcells]
    else:
        names = [e.name for e in stack.elements if e.kind == "subcell"]
    numeric = ([v.column for v in variations] + RESULT_COLUMNS
               + [f"{name}.photocurrent_mA_cm2" for name in names])
    shown = column if len(column) <= 60 else column[:57] + "..."
    if column in ("limiting_subcell", "regime"):
        raise StackError(f"--column {shown!r} holds text, not numbers: it cannot be mapped",
                         where="--column", fix="map one of " + ", ".join(numeric))
    if column not in numeric:
        raise StackError(f"--column {shown!r} is not a result column", where="--column",
                         fix="one of " + ", ".join(numeric))
    if stack.conditions.strings > 1 and column in RESULT_COLUMNS[1:]:
        raise StackError(f"--column {column!r} is per string, and this stack has "
                         f"{stack.conditions.strings} strings: the map would be empty",
                         where="--column",
                         fix="map efficiency_pct or a subcell's photocurrent")


def _print_match_table(stack, variation, table):
    """Every row of the matching table: the varied value, each subcell's photocurrent, the
    efficiency and the limiting subcell."""
    photocurrent_columns = [c for c in table.columns if c.endswith(".photocurrent_mA_cm2")]
    print(f"siltandem — current matching of {stack.name} over {variation.column}")
    print("")
    header = [variation.column] + [c.removesuffix(".photocurrent_mA_cm2") + " mA/cm2"
                                   for c in photocurrent_columns] + ["efficiency %", "limiting"]
    print("  " + "  ".join(f"{h:>14}" for h in header))
    for _, row in table.iterrows():
        cells = [number(row[variation.column], ".5g")] + [number(row[c], ".4f")
                                                          for c in photocurrent_columns]
        cells += [number(row["efficiency_pct"], ".3f"), str(row["limiting_subcell"])]
        print("  " + "  ".join(f"{c:>14}" for c in cells))
    print("")


def _print_matches(matches, variation, strings=1):
    """Each matched pair of subcells, or a hint to widen the range."""
    if strings > 1:
        print(f"  {strings} strings wired apart: only subcells of one string are matched (the strings "
              "carry independent currents)")
    if matches:
        for m in matches:
            a, b = m["subcells"]
            print(f"  matched: {a} = {b} at {variation.column} = "
                  f"{number(m['value'], '.8g')} ({number(m['photocurrent_mA_cm2'], '.4f')} "
                  f"mA/cm2), efficiency {number(m['efficiency_pct'], '.3f')} %")
            if m["pair_limits"]:
                print("           this pair limits the string's current there: a current match")
            else:
                print(f"           this pair does not limit: {m['limiting_subcell']} has a lower "
                      "photocurrent there and sets the string's current;\n"
                      f"           matching {a} and {b} does not raise it")
    else:
        print("  no two subcells' photocurrents cross in this range: widen it" if strings == 1 else
              "  no two subcells of one string cross in this range (a string of one subcell has none "
              "to match)")


def _best_efficiency(table, variation):
    """The row of the best efficiency on the grid (None if no design found an operating point),
    printed."""
    found = table["efficiency_pct"].notna().any()
    best = table["efficiency_pct"].idxmax() if found else None
    if found:
        print(f"  best efficiency on the grid: {number(table['efficiency_pct'][best], '.3f')} % "
              f"at {variation.column} = {number(table[variation.column][best], '.6g')}")
    else:
        print("  best efficiency on the grid: none (no design found an operating point)")
    return best


def _best_energy(args, stack, variation, table, weather):
    """``--by energy``: the annual energy of every value (added to ``table`` as
    ``annual_energy_kWh_m2``) and the best of them, printed; None without it."""
    if args.by != "energy":
        return None
    from siltandem.studies.matching import energy_by_value

    table["annual_energy_kWh_m2"] = energy_by_value(
        stack, variation, table, weather=weather, tilt_deg=args.tilt,
        azimuth_deg=args.azimuth, progress=not args.quiet)
    top = table["annual_energy_kWh_m2"].idxmax()
    by_energy = {"value": float(table[variation.column][top]),
                 "annual_energy_kWh_m2": float(table["annual_energy_kWh_m2"][top])}
    print(f"  best annual energy on the grid: "
          f"{number(by_energy['annual_energy_kWh_m2'], '.2f')} kWh/m2 at {variation.column} = "
          f"{number(by_energy['value'], '.6g')} (weather {args.weather})")
    return by_energy


def _match_figure(stack, variation, table, matches, by_energy):
    """The matching figure, with the annual energy on a second axis under ``--by energy``."""
    from siltandem.studies.matching import plot_matching

    axes = plot_matching(table, variation, matches,
                         title=f"{stack.name}: current matching over {variation.column}")
    if by_energy is not None:
        twin = axes[1].twinx()
        twin.plot(table[variation.column], table["annual_energy_kWh_m2"], color="tab:green",
                  label="annual energy")
        twin.set_ylabel("annual energy (kWh/m²)", color="tab:green")
    return axes[0].figure


def run_match(args):
    """``siltandem match``: one varied key, the values where two subcells' photocurrents
    cross, the best design by efficiency (or by annual energy); returns the exit code 0."""
    from siltandem.stack.load import load_stack
    from siltandem.studies.matching import match_currents
    from siltandem.studies.sweep import parse_vary

    _check_paths(args)
    _check_energy(args)
    if len(args.vary) != 1:
        raise StackError(f"match takes one --vary, got {len(args.vary)}", where="--vary",
                         fix="use `siltandem map` for two keys")
    stack = load_stack(args.stack)
    _check_outputs(args, stack)
    variation = parse_vary(args.vary[0], stack)
    _check_study(args, stack, [variation])
    weather = _weather(args)
    client = _connect(args)
    try:
        table, matches = match_currents(stack, variation, **_options(args, client))
    finally:
        if client is not None:
            client.close()
    _print_match_table(stack, variation, table)
    _print_matches(matches, variation, stack.conditions.strings)
    best = _best_efficiency(table, variation)
    by_energy = _best_energy(args, stack, variation, table, weather)
    figure = _match_figure(stack, variation, table, matches, by_energy) if args.plot else None
    summary = {"stack": stack.name, "varied": variation.column, "matches": matches,
               "best": None if best is None else {
                   "value": float(table[variation.column][best]),
                   "efficiency_pct": float(table["efficiency_pct"][best])},
               "best_by_energy": by_energy}
    _write_outputs(args, table, summary, figure, stack=stack)
    return 0


def run_map(args):
    from siltandem.stack.load import load_stack
    from siltandem.studies.maps import design_map, optimum, plot_map
    from siltandem.studies.sweep import parse_vary

    _check_paths(args)
    if len(args.vary) != 2:
        raise StackError(f"map takes two --vary, got {len(args.vary)}", where="--vary",
                         fix="give --vary A=... --vary B=...; use `siltandem match` for one key")
    stack = load_stack(args.stack)
    _check_outputs(args, stack)
    first, second = (parse_vary(v, stack) for v in args.vary)
    if first.column == second.column:
        raise StackError(f"both --vary name {first.column}", where="--vary",
                         fix="vary two different keys")
    column = args.column
    _check_column(column, stack, [first, second])
    _check_study(args, stack, [first, second])
    client = _connect(args)
    try:
        table = design_map(stack, first, second, **_options(args, client))
    finally:
        if client is not None:
            client.close()
    values = table[column]
    found = values.notna().any()
    best = optimum(table, column) if found else None
    print(f"siltandem — design map of {stack.name}: {first.column} x {second.column} "
          f"({len(table)} designs)")
    if found:
        print(f"  optimum {column} = {number(best[column], '.6g')} at {first.column} = "
              f"{number(best[first.column], '.6g')}, {second.column} = "
              f"{number(best[second.column], '.6g')}")
    else:
        print(f"  optimum: none (no design has a value of {column})")
    failed = int(np.count_nonzero(~np.isfinite(table["efficiency_pct"].to_numpy(dtype=float))))
    if failed:
        print(f"  warning: {failed} designs found no operating point (their cells are empty in "
              "the CSV, null in JSON)")
    figure = None
    if args.plot:
        ax = plot_map(table, first, second, column,
                      title=f"{stack.name}: {column} over {first.column} x {second.column}")
        figure = ax.figure
    summary = {"stack": stack.name, "varied": [first.column, second.column], "column": column,
               "designs": len(table), "failed": failed,
               "optimum": None if best is None else {
                   k: (float(best[k]) if isinstance(best[k], (int, float, np.floating))
                       else str(best[k])) for k in table.columns if k != "design"}}
    _write_outputs(args, table, summary, figure, stack=stack)
    return 0


def add_losses_command(commands):
    losses = commands.add_parser(
        "losses", help="loss waterfall from the detailed-balance limit down to the stack",
        description="From the detailed-balance limit of the same gaps (each subcell at its own "
                    "MPP) down to the stack's efficiency, one step per loss, each computed by "
                    "removing that loss and solving again; the steps add up to the total.")
    losses.add_argument("stack", help="stack file (.toml)")
    losses.add_argument("--plot", metavar="PATH.png|svg", help="draw the waterfall")
    losses.add_argument("--json", metavar="PATH", help="write the waterfall as JSON ('-' stdout)")
    losses.add_argument("--csv", metavar="PATH.csv", help="write the steps as CSV")
    losses.add_argument("--spectrum", help="override the stack's spectrum")
    losses.add_argument("--suns", help="override the concentration")
    losses.add_argument("--temperature", metavar="K", help="override the temperature")


def run_losses(args):
    import pandas as pd

    from siltandem.stack.load import load_stack
    from siltandem.studies.losses import loss_waterfall, plot_waterfall

    args.parquet = None
    _check_paths(args)
    stack = load_stack(args.stack)
    _check_outputs(args, stack)
    waterfall = loss_waterfall(stack, spectrum=args.spectrum, suns=args.suns,
                               temperature_K=args.temperature)
    print(f"siltandem — loss waterfall of {stack.name}")
    print(f"  limit {number(waterfall['limit_pct'], '8.3f'):>8} %   "
          f"({waterfall['limit_definition']})")
    for step in waterfall["steps"]:
        print(f"  - {number(step['loss_pct_abs'], '7.3f'):>7} %   {step['loss']:<40} -> "
              f"{number(step['efficiency_after_pct'], '.3f')} %")
    print(f"  stack {number(waterfall['efficiency_pct'], '8.3f'):>8} %   (total loss "
          f"{number(waterfall['limit_pct'] - waterfall['efficiency_pct'], '.3f')} % absolute = the sum of "
          f"the steps; they close to {number(waterfall['check_pct'], '.1e')} %)")
    figure = None
    if args.plot:
        figure = plot_waterfall(waterfall).figure
    _write_outputs(args, pd.DataFrame(waterfall["steps"]), waterfall, figure, stack=stack)
    return 0


def add_placements_command(commands):
    placements = commands.add_parser(
        "placements", help="rank tunnel-junction placements declared in a layer stack",
        description="Compile and solve each [[placement]] candidate (a named set of layers "
                    "inserted at a named position); rank them by efficiency with every "
                    "interface's and junction's penalty. --auto tries the first candidate's "
                    "layer pair at every boundary where it fits.")
    placements.add_argument("stack", help="layer stack file (.toml) with [[placement]] tables")
    placements.add_argument("--auto", action="store_true",
                            help="try the first candidate's pair at every sensible position")
    for option, meta, text in (("--csv", "PATH.csv", "write the ranked table as CSV"),
                               ("--parquet", "PATH.parquet", "write it as Parquet"),
                               ("--plot", "PATH.png|svg", "draw the comparison"),
                               ("--json", "PATH", "write the ranking as JSON ('-' stdout)"),
                               ("--out", "FOLDER", "chunk files, resumable"),
                               ("--cluster", "ADDRESS", "a dask.distributed scheduler"),
                               ("--spectrum", None, "override the spectrum")):
        placements.add_argument(option, metavar=meta, help=text)
    placements.add_argument("--workers", help="local worker processes")
    placements.add_argument("--suns", help="override the concentration")
    placements.add_argument("--temperature", metavar="K", help="cell temperature")
    placements.add_argument("--quiet", action="store_true", help="no progress line")
    add_energy_options(placements)


def run_placements(args):
    from siltandem.stack.load import load_stack
    from siltandem.studies.placements import plot_placements, rank_placements

    _check_paths(args)
    _check_energy(args)
    stack = load_stack(args.stack)
    if not stack.layers:
        raise StackError("placements are declared in layer stacks", file=stack.source,
                         fix="write the stack as [[layer]] tables with [[placement]] candidates")
    _check_outputs(args, stack)
    weather = _weather(args)
    client = _connect(args)
    try:
        table = rank_placements(stack, auto=args.auto, **_options(args, client))
    finally:
        if client is not None:
            client.close()
    if args.by == "energy":
        from siltandem.studies.placements import energy_of_candidates

        table = energy_of_candidates(stack, table, auto=args.auto, weather=weather,
                                     tilt_deg=args.tilt, azimuth_deg=args.azimuth,
                                     progress=not args.quiet)
    print(f"siltandem — tunnel-junction placements of {stack.name}"
          + (f", ranked by annual energy (weather {args.weather})" if args.by == "energy"
             else ""))
    print("")
    energy = "annual_energy_kWh_m2" in table.columns
    print(f"  {'rank':>4}  {'placement':<40} {'efficiency %':>12} {'Voc V':>8} {'FF %':>6} "
          f"{'junctions %':>11} {'interfaces %':>12}  limiting"
          + ("   energy kWh/m2" if energy else ""))
    for _, row in table.iterrows():
        if not np.isfinite(row["efficiency_pct"]):
            print(f"  {row['rank']:>4}  {row['placement']:<40} {'-':>12}  {row['problem']}")
            continue
        print(f"  {row['rank']:>4}  {row['placement']:<40} "
              f"{number(row['efficiency_pct'], '12.3f'):>12} "
              f"{number(row['voc_V'], '8.4f'):>8} {number(row['fill_factor_pct'], '6.2f'):>6} "
              f"{number(row['tunnel_penalty_pct_abs'], '11.3f'):>11} "
              f"{number(row['interface_penalty_pct_abs'], '12.3f'):>12}  "
              f"{row['limiting_subcell']}"
              + (f"   {number(row['annual_energy_kWh_m2'], '.2f')}" if energy else ""))
    print("  (junctions / interfaces: efficiency regained by removing them, % absolute)")
    figure = None
    if args.plot:
        figure = plot_placements(table, title=f"{stack.name}: placements")[0].figure
    summary = {"stack": stack.name, "ranking": table.to_dict(orient="records")}
    _write_outputs(args, table, summary, figure, stack=stack)
    return 0
