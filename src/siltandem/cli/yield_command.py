"""Command line: ``siltandem yield STACK.toml --weather FILE`` (energy over a typical year).

``add_yield_command(commands)`` adds the subcommand to the main parser's subparsers;
``run_yield(args)`` runs it; ``siltandem.cli.main`` handles errors and exit status for every command.
"""
from pathlib import Path
import sys

from siltandem.errors import StackError

PLOT_SUFFIXES = {".png", ".svg", ".pdf"}


def _pairs(values, option, what):
    """``["top=GaAs", ...]`` -> {"top": "GaAs"}; StackError naming the option otherwise."""
    out = {}
    for text in values or []:
        name, sep, value = text.partition("=")
        if not sep or not name.strip() or not value.strip():
            raise StackError(f"{option} {text!r} is not NAME={what}", where=option,
                             fix=f"write {option} <subcell name>={what}, e.g. {option} "
                                 + ("top=Ga0.51In0.49P" if what == "MATERIAL" else
                                    "top=top_eqe.csv"))
        if name.strip() in out:
            raise StackError(f"{option} names subcell {name.strip()!r} twice", where=option,
                             fix="give each subcell once")
        out[name.strip()] = value.strip()
    return out


def add_yield_command(commands):
    """Add ``yield`` to the subparsers of the main parser; returns its parser."""
    from siltandem.studies.plane import ANGLE_LOSSES, TRACKINGS
    from siltandem.studies.sky import MOUNTING, SCALINGS, SKY_MODELS

    parser = commands.add_parser(
        "yield", help="energy over a typical year from an hourly weather file",
        description="Solve a stack for every hour with sun of a TMY3, TMY2 or EPW weather file: sun "
                    "position, plane-of-array irradiance, a SPECTRL2 spectrum scaled to it and "
                    "the cell temperature, all hours in one batched solve. Prints the annual "
                    "energy, the energy-weighted efficiency, which subcell limits the current "
                    "for how long, two- against four-terminal wiring and a monthly table.")
    parser.add_argument("stack", help="stack file (.toml) with [[element]] tables")
    parser.add_argument("--weather", required=True, metavar="FILE|demo",
                        help="TMY3, TMY2 or EPW weather file, the format told from its first "
                             "lines (read with pvlib.iotools.read_tmy3, read_tmy2 or read_epw); "
                             "'demo' is the Greensboro, NC TMY3 file pvlib ships")
    parser.add_argument("--tilt", metavar="DEG",
                        help="plane tilt from horizontal (default: the latitude)")
    parser.add_argument("--azimuth", metavar="DEG",
                        help="plane azimuth clockwise from north (default: facing the equator)")
    parser.add_argument("--sky-model", default="perez", choices=SKY_MODELS,
                        help="sky-diffuse transposition model (default perez)")
    parser.add_argument("--mounting", default=MOUNTING,
                        help="SAPM cell-temperature parameter set: open_rack_glass_glass "
                             "(default), close_mount_glass_glass, open_rack_glass_polymer, "
                             "insulated_back_glass_polymer")
    parser.add_argument("--albedo",
                        help="ground albedo 0..1 (default: the file's, 0.2 where missing)")
    parser.add_argument("--scaling", default="total", choices=SCALINGS,
                        help="total (default): SPECTRL2's summed clear-sky spectrum scaled to the "
                             "hour's measured plane-of-array irradiance. components: its direct, "
                             "sky-diffuse and ground-reflected spectra each scaled to its own "
                             "measured part, which gives overcast hours the deep blue of a clear "
                             "sky's diffuse light that clouds do not have (demo triple: 27.50 %% "
                             "against 32.90 %% energy-weighted efficiency); a bound, not an "
                             "estimate")
    parser.add_argument("--tracking", default="fixed", choices=TRACKINGS,
                        help="fixed plane (default) or a one-axis tracker with backtracking "
                             "(pvlib.tracking.singleaxis); with one-axis, --tilt and --azimuth "
                             "are the axis's (default 0 and 180: horizontal, north-south)")
    parser.add_argument("--max-rotation", default=None, metavar="DEG",
                        help="the tracker's largest rotation from flat (default 60)")
    parser.add_argument("--ground-coverage", default=None, metavar="RATIO",
                        help="the tracker rows' ground coverage ratio, for backtracking "
                             "(default 2/7, pvlib's)")
    parser.add_argument("--angle-losses", default="none", choices=ANGLE_LOSSES,
                        help="angle-of-incidence losses of a cover: none (default, the stack as "
                             "written), glass (pvlib.iam.physical, n 1.526, 2 mm) or martin-ruiz "
                             "(pvlib.iam.martin_ruiz, a_r 0.16); the diffuse parts take pvlib's "
                             "diffuse integrals")
    parser.add_argument("--measured-spectra", metavar="FILE.csv",
                        help="measured plane-of-array spectra instead of SPECTRL2's shapes: "
                             "column time (the weather's stamps with their UTC offset), then "
                             "one column per wavelength in nm, W/m2/nm; every hour with light")
    parser.add_argument("--gap-material", action="append", metavar="SUBCELL=MATERIAL",
                        help="the subcell's gap follows the cell temperature like this library "
                             "material's (Varshni); repeat for several subcells")
    parser.add_argument("--eqe", action="append", metavar="SUBCELL=FILE.csv",
                        help="the subcell's photocurrent from its measured external quantum "
                             "efficiency (columns wavelength_nm, eqe); repeat for several")
    parser.add_argument("--split-losses", action="store_true",
                        help="also solve the subcells in series without the other elements, to "
                             "tell how much of the mismatch loss those elements cost (one more "
                             "batched solve)")
    parser.add_argument("--json", metavar="PATH", help="write the summary as JSON ('-' stdout)")
    parser.add_argument("--csv", metavar="PATH.csv", help="write the hourly table")
    parser.add_argument("--plot", metavar="PATH.png|svg",
                        help="draw energy by month and the limiting subcell through a summer "
                             "and a winter day")
    return parser


def run_yield(args):
    """Run ``siltandem yield``; returns the exit status (StackError propagates to the caller)."""
    from siltandem.files import check_outputs, save_figure_atomic, write_atomic
    from siltandem.stack.inputs import stack_inputs
    from siltandem.stack.load import load_stack
    from siltandem.studies.yield_year import annual_yield
    from siltandem.studies.yield_report import hourly_table, plot_yield, text_summary
    from siltandem.studies.sky import temperature_parameters
    from siltandem.materials.weather import demo_weather_path
    from siltandem.text import csv_safe

    for option, path, allowed in (("--csv", args.csv, {".csv"}),
                                  ("--plot", args.plot, PLOT_SUFFIXES)):
        if path is not None and Path(path).suffix.lower() not in allowed:
            raise StackError(f"{option} {path}: unsupported file type", where=option,
                             fix=f"give a path ending in {' or '.join(sorted(allowed))}")
    gap_materials = _pairs(args.gap_material, "--gap-material", "MATERIAL")
    eqe = _pairs(args.eqe, "--eqe", "FILE.csv")
    temperature_parameters(args.mounting)          # a name pvlib knows, before any work
    stack = load_stack(args.stack)
    weather = demo_weather_path() if args.weather == "demo" else Path(args.weather)
    check_outputs([("--json", args.json), ("--csv", args.csv), ("--plot", args.plot)],
                  stack_inputs(stack) + [("the weather file", weather)]
                  + ([("the measured-spectra file", Path(args.measured_spectra))]
                     if args.measured_spectra else [])
                  + [(f"the quantum-efficiency file of subcell {name!r} (--eqe)", Path(path))
                     for name, path in eqe.items()])
    # everything the year needs, read and checked before its hours are computed
    from siltandem.circuit.compile import compile_stack
    from siltandem.studies.yield_year import eqe_tables, gap_laws
    from siltandem.materials.weather import read_weather

    names = [cell.name for cell in compile_stack(stack).subcells]
    gap_laws(gap_materials, names)
    eqe_tables(eqe, names)
    from siltandem.materials.hourly_spectra import measured_spectra
    from siltandem.studies.plane import check_tracking

    check_tracking(args.tracking, args.max_rotation, args.ground_coverage, args.angle_losses)
    measured = (measured_spectra(args.measured_spectra) if args.measured_spectra else None)
    year = read_weather(args.weather)
    result = annual_yield(stack, year, tilt_deg=args.tilt, azimuth_deg=args.azimuth,
                          sky_model=args.sky_model, mounting=args.mounting, albedo=args.albedo,
                          scaling=args.scaling, gap_materials=gap_materials, eqe=eqe,
                          split_losses=args.split_losses, tracking=args.tracking,
                          max_rotation_deg=(None if args.max_rotation is None
                                            else float(args.max_rotation)),
                          ground_coverage=(None if args.ground_coverage is None
                                           else float(args.ground_coverage)),
                          angle_losses=args.angle_losses, measured_spectra=measured)
    to_stdout_json = args.json == "-"
    notices = sys.stderr if to_stdout_json else sys.stdout
    if not to_stdout_json:
        sys.stdout.write(text_summary(result))
    if args.json:
        if to_stdout_json:
            sys.stdout.write(result.to_json())
        else:
            write_atomic(args.json, result.to_json())
            print(f"  wrote {args.json}", file=notices)
    if args.csv:
        from siltandem.result.record import provenance_lines

        header = provenance_lines({k: result.summary[k] for k in
                                   ("siltandem_version", "stack_sha256", "light")})
        write_atomic(args.csv, header + csv_safe(hourly_table(result)).to_csv(
            index=False, float_format="%.10g"))
        print(f"  wrote {args.csv}", file=notices)
    if args.plot:
        axes = plot_yield(result)
        save_figure_atomic(axes[0].figure, args.plot)
        print(f"  wrote {args.plot}", file=notices)
    return 0

