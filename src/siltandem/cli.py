"""Command line: ``siltandem run [STACK.toml] [options]``.

Exit status: 0 done, 2 bad input (a clear message, no traceback), 1 an internal fault.
"""
import argparse
from importlib import resources
from pathlib import Path
import sys

from .errors import StackError

DEMO = "demo_dual.toml"


def demo_stack_path():
    """The bundled demo stack (shipped inside the package, mirrored in stacks/)."""
    return resources.files("siltandem").joinpath("data", DEMO)


def _positive(text):
    try:
        value = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r} is not a number") from None
    if not value > 0:
        raise argparse.ArgumentTypeError(f"{text!r} must be > 0")
    return value


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
    run.add_argument("--suns", type=_positive, help="concentration (default from the file, 1)")
    run.add_argument("--temperature", type=_positive, metavar="K",
                     help="cell temperature in kelvin (default from the file, 298.15)")
    run.add_argument("--json", metavar="PATH", help="write the result as JSON ('-' for stdout)")
    run.add_argument("--curve", metavar="PATH.csv", help="write the light I-V as CSV")
    run.add_argument("--plot", metavar="PATH.png|svg", help="draw the light I-V")
    run.add_argument("--points", type=int, default=401, help="points on the traced curve")
    run.add_argument("--sweep", choices=["up", "down"],
                     help="report what a terminal-voltage sweep measures (with hysteresis where a "
                          "tunnel junction is driven past its peak): --curve and --plot show it")
    return parser


def _run(args):
    from .files import save_figure_atomic, write_atomic
    from .report import sweep_summary, text_summary
    from .result import run_stack
    from .stack import load_stack

    for option, path in (("--curve", args.curve), ("--plot", args.plot)):
        if path is None:
            continue
        allowed = {".csv"} if option == "--curve" else {".png", ".svg", ".pdf"}
        if Path(path).suffix.lower() not in allowed:
            raise StackError(f"{option} {path}: unsupported file type", where=option,
                             fix=f"give a path ending in {' or '.join(sorted(allowed))}")
    if args.points < 20:
        raise StackError(f"--points {args.points} is too few", where="--points",
                         fix="give at least 20 points")
    path = args.stack
    if path is None:
        with resources.as_file(demo_stack_path()) as demo:
            stack = load_stack(demo)
    else:
        stack = load_stack(path)
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
        write_atomic(args.curve, table.to_csv(index=False, float_format="%.10g"))
        print(f"  wrote {args.curve}", file=sys.stderr if to_stdout_json else sys.stdout)
    if args.plot:
        from .plots import plot_iv

        ax = plot_iv(result, sweeps=(args.sweep,) if args.sweep else ())
        save_figure_atomic(ax.figure, args.plot)
        print(f"  wrote {args.plot}", file=sys.stderr if to_stdout_json else sys.stdout)
    return 0


def main(argv=None):
    args = _parser().parse_args(argv)
    try:
        if args.command == "run":
            return _run(args)
    except StackError as exc:
        print(f"siltandem: error: {exc}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print("siltandem: interrupted", file=sys.stderr)
        return 130
    return 1


if __name__ == "__main__":
    sys.exit(main())
