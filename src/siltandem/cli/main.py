"""Command line: ``siltandem run [STACK.toml] [options]``.

Exit status: 0 done, 2 bad input (a clear message, no traceback), 1 an internal fault.
"""
import argparse
import contextlib
from importlib import resources
from pathlib import Path
import sys
import warnings

import numpy as np

from siltandem.errors import CompileNotice, ModelWarning, StackError
from siltandem.text import number, printable

DEMO = "demo_dual.toml"


def demo_stack_path():
    """The bundled demo stack (shipped inside the package, mirrored in stacks/)."""
    return resources.files("siltandem").joinpath("data", DEMO)


def _parser():
    parser = argparse.ArgumentParser(
        prog="siltandem",
        description="Light I-V, efficiency and per-element losses of multi-junction solar "
                    "cells on silicon, from a stack file.")
    commands = parser.add_subparsers(dest="command", required=True, metavar="COMMAND")
    run = commands.add_parser("run", help="solve one stack and print its summary",
                              description="Solve one stack under its conditions and print the "
                                          "summary. Without a file, runs the bundled demo.")
    run.add_argument("stack", nargs="?", help="stack file (.toml); default: the bundled demo")
    run.add_argument("--spectrum", help="am1.5g (default), am1.5d, am0, or a CSV path "
                                        "(wavelength_nm, irradiance_W_m2_nm)")
    run.add_argument("--suns", help="concentration (default from the file, 1)")
    run.add_argument("--temperature", metavar="K",
                     help="cell temperature in kelvin (default from the file, 298.15)")
    run.add_argument("--json", metavar="PATH", help="write the result as JSON ('-' for stdout)")
    run.add_argument("--curve", metavar="PATH.csv", help="write the light I-V as CSV")
    run.add_argument("--plot", metavar="PATH.png|svg",
                     help="draw the light I-V (a layer stack: beside it the spectral figure)")
    run.add_argument("--points", default=401, help="points on the traced curve")
    run.add_argument("--sweep", choices=["up", "down"],
                     help="report what a terminal-voltage sweep measures (with hysteresis where a "
                          "tunnel junction is driven past its peak): --curve and --plot show it")
    run.add_argument("--suns-range", metavar="START:STOP:N",
                     help="solve at N concentrations from START to STOP suns (log-spaced) and "
                          "report efficiency against concentration; --plot draws it, --table "
                          "writes it")
    run.add_argument("--table", metavar="PATH.csv", help="with --suns-range: write the series")
    run.add_argument("--spectral", metavar="PATH.csv",
                     help="layer stacks: write per wavelength the reflectance, transmittance, "
                          "each layer's absorptance and each subcell's EQE")
    face = commands.add_parser(
        "interface", help="one isotype interface on its own: J-V and band diagram",
        description="Print an isotype interface's J-V (law convention: V > 0 lowers the "
                    "barrier) and where the stack operates it; --plot draws (a) its J-V and (b) "
                    "its band-edge diagram at equilibrium and at the MPP bias.")
    face.add_argument("stack", help="stack file (.toml)")
    face.add_argument("--layer", metavar="NAME",
                      help="the interface: its name, or in a layer stack the two layers it joins "
                           "('upper / lower') or one of them (default: the first isotype "
                           "interface)")
    face.add_argument("--placement", metavar="NAME",
                      help="in a layer stack with [[placement]] tables: the candidate to compile "
                           "(default: the first declared)")
    face.add_argument("--plot", metavar="PATH.png|svg", help="draw the J-V and band diagram")
    face.add_argument("--temperature", metavar="K", help="cell temperature")
    face.add_argument("--points", default=21, help="rows of the printed J-V")
    from siltandem.cli.studies import (add_energy_options, add_losses_command, add_placements_command,
                              add_study_options)

    match = commands.add_parser(
        "match", help="photocurrents and efficiency against one key; the current-matched value",
        description="Sweep one numeric key (--vary NAME.KEY=START:STOP:N); print each subcell's "
                    "photocurrent and the efficiency, and the value where two subcells' "
                    "photocurrents cross (root finding).")
    add_study_options(match)
    add_energy_options(match)
    design = commands.add_parser(
        "map", help="a 2-D design map over two keys, the optimum marked",
        description="Solve every design of a grid over two keys (--vary A --vary B); write the "
                    "grid (CSV/Parquet, one column per varied key named as given, then the "
                    "result columns) and draw a map of --column with iso-lines.")
    add_study_options(design)
    design.add_argument("--column", default="efficiency_pct",
                        help="the output column to map (default efficiency_pct)")
    add_losses_command(commands)
    add_placements_command(commands)
    from siltandem.cli.yield_command import add_yield_command

    add_yield_command(commands)
    library = commands.add_parser(
        "materials", help="list the materials library, or one material's properties",
        description="Without NAME: the materials in the library. With NAME (and --composition "
                    "for an alloy, or a name like Ga0.51In0.49P): its properties at 300 K with "
                    "the source of each value.")
    library.add_argument("name", nargs="?", help="a material name")
    library.add_argument("--composition", help="alloy composition x")
    return parser


def _materials(args):
    from siltandem.materials import MaterialError, describe_library, load_material

    if args.name is None:
        rows = describe_library()
        print("siltandem materials library (data files in src/siltandem/materials/)")
        width = max(len(r["name"]) for r in rows)
        for r in rows:
            x = f"  x = {r['composition_element']} fraction" if r["composition_element"] else ""
            print(f"  {r['name']:<{width}}  {r['formula']:<14} {r['description']}{x}")
        print("  show one: siltandem materials NAME [--composition X]")
        return 0
    try:
        material = load_material(args.name, args.composition)
    except MaterialError as exc:
        raise StackError(str(exc), where=f"material {args.name!r}",
                         fix="run `siltandem materials` for the list") from None
    print(f"{material.formula}: {material.note}" if getattr(material, "note", "") else
          material.formula)
    for label, value, unit, source_key in material.summary_rows():
        text = f"{value:.5g}" if isinstance(value, float) else str(value)
        source = material.source(source_key) if callable(getattr(material, "source", None)) \
            else ""
        print(f"  {label:<28} {text:>14} {unit:<10} {source}")
    for key in sorted(k for k in material.sources if k.startswith(("absorption", "ordering"))):
        print(f"  {key:<28} {material.sources[key]}")
    _recombination_rows(args.name, material)
    return 0


def _recombination_rows(name, material):
    """The layer compiler's radiative coefficient and doping-dependent mobilities, where the
    material's file gives them (materials/recombination.py)."""
    from siltandem.materials import recombination

    document = recombination.material_document(name, material)
    b = recombination.radiative_coefficient_cm3_s(material, document)
    if b is not None:
        print(f"  {'radiative coefficient B':<28} {b:>14.5g} {'cm^3 s^-1':<10} "
              f"{document['radiative'].get('source', '')}")
    for carrier in ("electron", "hole"):
        mu = recombination.minority_mobility_cm2_V_s(material, document, 1e17, carrier)
        if mu is not None:
            print(f"  {carrier + ' mobility at 1e17':<28} {mu:>14.5g} {'cm^2 V^-1 s^-1':<10} "
                  f"Caughey-Thomas; {recombination.mobility_source(material, document, carrier)}")


def _interface(args):
    from siltandem.files import save_figure_atomic
    from siltandem.circuit.compile import compile_stack
    from siltandem.studies.interface import choose_interface, interface_iv, plot_interface
    from siltandem.result.driver import run_stack
    from siltandem.stack.load import load_stack

    from siltandem.files import check_outputs
    from siltandem.stack.inputs import stack_inputs

    if args.plot and Path(args.plot).suffix.lower() not in {".png", ".svg", ".pdf"}:
        raise StackError(f"--plot {args.plot}: unsupported file type", where="--plot",
                         fix="give a path ending in .pdf or .png or .svg")
    stack = load_stack(args.stack)
    check_outputs([("--plot", args.plot)], stack_inputs(stack))
    stack, placement = _chosen_placement(stack, args.placement)
    name = choose_interface(compile_stack(stack), args.layer, file=stack.source,
                            placement=placement)
    result = run_stack(stack, temperature_K=args.temperature, curve_points=60)
    element = result.circuit.element(name)
    temperature = result.summary["conditions"]["temperature_K"]
    row = next(r for r in result.summary["interfaces"] if r["name"] == name)
    bias = row["drop_at_mpp_V"] * (1 if row["bias"] == "forward" else -1)
    print(f"siltandem — isotype interface {name!r} of {stack.name}")
    print(f"  carrier {row['carrier']}, barrier {number(row['barrier_eV'], '.4f')} eV above the "
          f"accumulation side's Fermi level, built-in {number(row['built_in_V'], '.4f')} V, "
          f"alpha {number(row['alpha'], '.4g')}")
    if np.isfinite(row["offset_eV"]):
        print(f"  band offset seen from the accumulation side {row['offset_eV']:+.4f} eV")
    print(f"  transport {row['transport']}"
          + (f" (E00 of the depletion side {1e3 * float(element.field_energy_eV[0, 0]):.2f} meV)"
             if row["transport"] == "thermionic-field" else ""))
    if row.get("offset_source"):
        print(f"  band offset from: {row['offset_source']}")
    sheet = float(np.ravel(element.sheet_charge)[0])
    if sheet != 0.0:
        print(f"  fixed interface sheet charge: reduced s = {sheet:+.4g} ("
              + ("attracts" if sheet > 0 else "repels") + " the majority carriers; key sheet_charge_cm2)")
    drop = row["drop_at_mpp_V"]
    print(f"  in the stack: {row['bias']} biased; "
          + (f"{1000 * drop:.2f} mV at the MPP" if np.isfinite(drop) else
             "no operating point through it (drop: none)")
          + f", {number(row['loss_W_m2'], '.3f')} W/m2, efficiency penalty "
          f"{number(row['efficiency_penalty_pct_abs'], '.3f')} % absolute"
          + ("  -- BLOCKS" if row["blocking"] else ""))
    v, j = interface_iv(element, temperature, points=args.points)
    print("")
    print("  interface voltage V   current mA/cm2   (V > 0 lowers the barrier)")
    for vi, ji in zip(v, j):
        print(f"  {number(vi, '+17.4f'):>17}   {number(ji / 10, '+14.6g'):>14}")
    if args.plot:
        axes = plot_interface(element, temperature, bias if np.isfinite(bias) else 0.0)
        save_figure_atomic(axes[0].figure, args.plot)
        print(f"  wrote {args.plot}")
    return 0


def _chosen_placement(stack, wanted):
    """The stack with the chosen [[placement]] inserted (default the first) and its name; the
    stack as it is, and None, when it declares none."""
    from siltandem.stack.placements import with_placement

    placements = stack.extra.get("placements") or ()
    if not placements:
        if wanted is not None:
            raise StackError(f"--placement {wanted!r}: the stack declares no [[placement]]",
                             file=stack.source, where="--placement",
                             fix="leave out --placement, or add [[placement]] tables to the file")
        return stack, None
    names = [p.name for p in placements]
    if wanted is not None and wanted not in names:
        raise StackError(f"no placement named {wanted!r}", file=stack.source, where="--placement",
                         fix="choose one of " + ", ".join(repr(n) for n in names))
    chosen = placements[names.index(wanted) if wanted is not None else 0]
    return with_placement(stack, chosen), chosen.name


def _pyplot():
    """matplotlib's pyplot, for a command that writes a figure file: ``main`` has already chosen
    the file-only backend (``_figures_offscreen``); the library's plot functions never do."""
    import matplotlib.pyplot as plt

    return plt


def _parse_range(text):
    """``START:STOP:N`` -> N concentrations, log-spaced; START and STOP in the range of the file's
    ``suns``, N in OPTION_SCHEMA's (the one schema, siltandem.options)."""
    from siltandem.stack.options import OPTION_SCHEMA, check_option
    from siltandem.stack.schema import CONDITION_SCHEMA

    shown = text if len(text) <= 60 else text[:57] + "..."
    parts = text.split(":")
    try:
        if len(parts) != 3:
            raise ValueError
        start, stop, count = float(parts[0]), float(parts[1]), int(parts[2])
    except ValueError:
        raise StackError(f"{shown!r} is not START:STOP:N", where="--suns-range",
                         fix="write for example --suns-range 1:2000:40") from None
    where = f"--suns-range {shown}"
    for value in (start, stop):
        check_option(CONDITION_SCHEMA["suns"], value, where=where)
    check_option(OPTION_SCHEMA["suns_range_count"], count, where=where, integer=True)
    if not start < stop:
        raise StackError(f"{shown!r}: START {start:g} is not below STOP {stop:g}",
                         where="--suns-range", fix="write for example --suns-range 1:2000:40")
    return np.geomspace(start, stop, count)


def _concentration(args, stack, suns):
    from siltandem.files import save_figure_atomic, write_atomic
    from siltandem.report.text import concentration_summary
    from siltandem.studies.concentration import concentration_series
    from siltandem.text import csv_safe

    series = concentration_series(stack, suns, spectrum=args.spectrum,
                                  temperature_K=args.temperature)
    to_stdout_json = args.json == "-"      # then stdout carries the JSON alone
    notices = sys.stderr if to_stdout_json else sys.stdout
    if not to_stdout_json:
        sys.stdout.write(concentration_summary(series, stack))
    if args.table:
        write_atomic(args.table, _csv_header(args, stack)
                     + csv_safe(series).to_csv(index=False, float_format="%.10g"))
        print(f"  wrote {args.table}", file=notices)
    if args.json:
        from siltandem.cli.studies import command_provenance
        from siltandem.result.record import json_text

        text = json_text({"stack": stack.name, **command_provenance(args, stack),
                          "series": series.to_dict(orient="records")})
        if to_stdout_json:
            sys.stdout.write(text)
        else:
            write_atomic(args.json, text)
            print(f"  wrote {args.json}", file=notices)
    if args.plot:
        from siltandem.report.plots import plot_concentration

        ax = plot_concentration(series, title=f"{stack.name}: efficiency against concentration")
        save_figure_atomic(ax.figure, args.plot)
        print(f"  wrote {args.plot}", file=notices)
    return 0


def _run(args):
    from siltandem.files import check_outputs, save_figure_atomic, write_atomic
    from siltandem.stack.inputs import stack_inputs
    from siltandem.stack.options import CLI_NAMES, CURVE_BYTES_PER_POINT, check_memory, check_study_memory
    from siltandem.report.text import sweep_summary, text_summary
    from siltandem.result.driver import run_stack
    from siltandem.stack.load import load_stack
    from siltandem.text import csv_safe

    for option, path in (("--curve", args.curve), ("--plot", args.plot),
                         ("--table", args.table), ("--spectral", args.spectral)):
        if path is None:
            continue
        allowed = {".png", ".svg", ".pdf"} if option == "--plot" else {".csv"}
        if Path(path).suffix.lower() not in allowed:
            raise StackError(f"{option} {path}: unsupported file type", where=option,
                             fix=f"give a path ending in {' or '.join(sorted(allowed))}")
    if args.suns_range:
        if args.suns is not None or args.sweep or args.curve:
            raise StackError("--suns-range goes without --suns, --sweep and --curve",
                             where="--suns-range", fix="use --table for the series' CSV")
        if args.spectral:
            raise StackError("--spectral goes with one run, not with --suns-range",
                             where="--spectral", fix="run once without --suns-range for the "
                             "spectral table (its fractions do not depend on the concentration)")
        suns = _parse_range(args.suns_range)
    elif args.table:
        raise StackError("--table goes with --suns-range", where="--table",
                         fix="add --suns-range START:STOP:N, or use --curve for the light I-V")
    path = args.stack
    if path is None:
        with resources.as_file(demo_stack_path()) as demo:
            stack = load_stack(demo)
    else:
        stack = load_stack(path)
    check_outputs([("--json", args.json), ("--curve", args.curve), ("--plot", args.plot),
                   ("--table", args.table), ("--spectral", args.spectral)],
                  stack_inputs(stack, spectrum=args.spectrum))
    if args.spectral and not stack.layers:
        raise StackError("--spectral needs a layer stack: an element stack has no layer optics "
                         "(no reflectance, transmittance or absorption per layer to write)",
                         file=stack.source, where="--spectral",
                         fix="describe the stack by its [[layer]] tables (materials and "
                             "thicknesses), or drop --spectral")
    if args.suns_range:
        check_study_memory(len(suns), names={**CLI_NAMES, "grid": "--suns-range"})
        return _concentration(args, stack, suns)
    check_memory(args.points * CURVE_BYTES_PER_POINT, what=f"a curve of {args.points} points",
                 where="--points", fix="give fewer --points")
    result = run_stack(stack, spectrum=args.spectrum, suns=args.suns,
                       temperature_K=args.temperature, curve_points=args.points)
    to_stdout_json = args.json == "-"
    if not to_stdout_json:
        sys.stdout.write(text_summary(result))
    if args.json:
        if to_stdout_json:
            sys.stdout.write(result.to_json())
        else:
            write_atomic(args.json, result.to_json())
            print(f"  wrote {args.json}")
    if args.sweep:
        swept = result.sweep(args.sweep, points=args.points)
        if not to_stdout_json:
            sys.stdout.write(sweep_summary(swept, args.sweep, result))
    if args.curve:
        table = swept if args.sweep else result.iv
        write_atomic(args.curve, _csv_header(args, stack)
                     + csv_safe(table).to_csv(index=False, float_format="%.10g"))
        print(f"  wrote {args.curve}", file=sys.stderr if to_stdout_json else sys.stdout)
    if args.spectral:
        write_atomic(args.spectral, _csv_header(args, stack) + csv_safe(
            result.spectral_table()).to_csv(index=False, float_format="%.10g"))
        print(f"  wrote {args.spectral}", file=sys.stderr if to_stdout_json else sys.stdout)
    if args.plot:
        from siltandem.report.plots import plot_iv, plot_spectral

        plt = _pyplot()
        layered = result.circuit.model is not None
        figure, axes = plt.subplots(1, 2 if layered else 1, figsize=(15, 4.8) if layered
                                    else (7, 4.8), squeeze=False, gridspec_kw={"wspace": 0.35})
        plot_iv(result, ax=axes[0, 0], sweeps=(args.sweep,) if args.sweep else ())
        if layered:
            plot_spectral(result, ax=axes[0, 1])
        save_figure_atomic(figure, args.plot)
        plt.close(figure)
        print(f"  wrote {args.plot}", file=sys.stderr if to_stdout_json else sys.stdout)
    return 0


def _json_alone(args, command):
    """Run a study command; with ``--json -`` its text goes to stderr and stdout carries only
    the JSON, as for ``run`` and ``yield``."""
    if getattr(args, "json", None) != "-":
        return command(args)
    args.json_stream = sys.stdout
    with contextlib.redirect_stdout(sys.stderr):
        return command(args)


def _figures_offscreen(args):
    """A command that writes a figure file draws it off screen: the command line (never a library
    function) selects matplotlib's file-only backend, before pyplot is imported."""
    if getattr(args, "plot", None):
        import matplotlib

        matplotlib.use("Agg")


def main(argv=None):
    args = _parser().parse_args(argv)
    _figures_offscreen(args)
    if _one_design(args):
        from siltandem.numerics.jit import interpret_kernels

        interpret_kernels()
    if args.command != "materials":
        from siltandem.solve import kernels

        if kernels.compiled_already() is False:
            print("siltandem: compiling the solver's kernels (the first run after installing or "
                  "updating; about 10-20 s, once)", file=sys.stderr, flush=True)
    try:
        from siltandem.stack.options import read_arguments

        read_arguments(args)       # every number given: the same ranges as the file keys
        # the commands print a result's warnings with it: not a second time through `warnings`
        with contextlib.redirect_stdout(_PrintableStream(sys.stdout)), warnings.catch_warnings(), \
                _study_notes():
            warnings.simplefilter("ignore", ModelWarning)
            warnings.simplefilter("ignore", CompileNotice)     # printed above, in the CLI's words
            return _command(args)
    except StackError as exc:
        print(f"siltandem: error: {exc}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print("siltandem: interrupted", file=sys.stderr)
        return 130
    except BrokenPipeError:   # output piped into a program that stopped reading (head, less)
        import os

        os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
        return 0


def _one_design(args):
    """True for a command that solves one design and exits (``run`` without ``--suns-range``,
    ``interface``): its kernels run interpreted, which starts about 0.5-0.8 s sooner than loading
    numba and its cached code (numerics/jit.py; the answer is the same)."""
    return args.command == "interface" or (args.command == "run" and not args.suns_range)


def _csv_header(args, stack):
    """The ``# key: value`` provenance lines heading every CSV output."""
    from siltandem.cli.studies import command_provenance
    from siltandem.result.record import provenance_lines

    return provenance_lines(command_provenance(args, stack))


@contextlib.contextmanager
def _study_notes():
    """The studies' notes (a folder of another stack's results: starting afresh) on stderr,
    --quiet or not: the library logs them (silent in the API), the command line shows them."""
    import logging

    logger = logging.getLogger("siltandem.studies.runner")
    handler = logging.StreamHandler(sys.stderr)
    handler.setFormatter(logging.Formatter("%(message)s"))
    level = logger.level
    logger.addHandler(handler)
    logger.setLevel(logging.INFO)
    try:
        yield
    finally:
        logger.removeHandler(handler)
        logger.setLevel(level)


class _PrintableStream:
    """stdout as the commands see it: names and numbers printed from files cannot carry
    control characters (terminal escape codes) to the screen (text.printable; line breaks and
    tabs stay)."""

    def __init__(self, stream):
        self._stream = stream

    def write(self, text):
        return self._stream.write(printable(text, keep_newlines=True))

    def __getattr__(self, name):
        return getattr(self._stream, name)


def _command(args):
    """Dispatch one parsed command; returns its exit status."""
    if args.command == "run":
        return _run(args)
    if args.command == "interface":
        return _interface(args)
    if args.command == "materials":
        return _materials(args)
    if args.command == "yield":
        from siltandem.cli.yield_command import run_yield

        return run_yield(args)
    if args.command == "placements":
        from siltandem.cli.studies import run_placements

        return _json_alone(args, run_placements)
    if args.command == "losses":
        from siltandem.cli.studies import run_losses

        return _json_alone(args, run_losses)
    if args.command in ("match", "map"):
        from siltandem.cli.studies import run_map, run_match

        return _json_alone(args, run_match if args.command == "match" else run_map)
    return 1


if __name__ == "__main__":
    sys.exit(main())
