"""The derate command: parse arguments, call the stages, map errors to exit codes."""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

from . import __version__
from . import exitcodes
from .errors import DerateError, NetlistError
from .report.console import make_console


def _add_netlist_safety(p: argparse.ArgumentParser) -> None:
    p.add_argument("--allow-control", action="store_true",
                   help="UNSAFE: accept .control blocks, '*#' lines and file-reading models in the netlist "
                        "(derate never runs control commands; only for netlists you trust)")
    p.add_argument("--allow-outside-includes", action="store_true",
                   help="follow .include/.lib paths that leave the project root")
    p.add_argument("--root", metavar="DIR",
                   help="project root that includes must stay inside (default: the netlist's folder)")


def _add_output_flags(p: argparse.ArgumentParser) -> None:
    p.add_argument("--no-color", action="store_true", help="no colour in terminal output (NO_COLOR is honoured too)")
    p.add_argument("--quiet", "-q", action="store_true", help="print nothing but errors (for CI)")


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="derate",
        description="Capacitor derating review from a SPICE netlist, simulated with ngspice.",
        epilog=exitcodes.EPILOG, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--version", action="version", version=f"derate {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")

    p = sub.add_parser("lint", help="check a netlist's topology and values without simulating",
                       epilog=exitcodes.EPILOG, formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("netlist", help="SPICE netlist (ngspice dialect)")
    p.add_argument("--format", choices=("text", "json"), default="text", help="output format (default: text)")
    _add_netlist_safety(p)
    _add_output_flags(p)
    p.set_defaults(func=cmd_lint)
    return parser


def _read_options(args):
    from .netlist import ReadOptions
    return ReadOptions(allow_control=args.allow_control, allow_outside_includes=args.allow_outside_includes,
                       root=args.root)


def cmd_lint(args) -> int:
    from .netlist import build_graph, lint, load_circuit
    from .report.lint_report import lint_json, render_lint_table

    circuit = load_circuit(args.netlist, _read_options(args))
    graph = build_graph(circuit)
    findings = lint(circuit)
    if args.format == "json":
        sys.stdout.write(lint_json(args.netlist, findings, len(circuit.elements), graph.number_of_nodes()))
    else:
        console = make_console(args.no_color, args.quiet)
        render_lint_table(console, args.netlist, findings, len(circuit.elements), graph.number_of_nodes())
    return exitcodes.FINDINGS if any(f.severity == "error" for f in findings) else exitcodes.PASS


def main(argv: list[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    if not getattr(args, "func", None):
        parser.print_help()
        return exitcodes.USAGE
    err = make_console(getattr(args, "no_color", False), stderr=True)
    try:
        return args.func(args)
    except DerateError as exc:
        label = "unsafe netlist" if type(exc).__name__ == "UnsafeNetlistError" else "error"
        err.print(f"[bold red]{label}:[/] {_escape(str(exc))}")
        return exc.exit_code
    except KeyboardInterrupt:
        err.print("interrupted")
        return 130
    except BrokenPipeError:
        return exitcodes.PASS


def _escape(text: str) -> str:
    from rich.markup import escape
    return escape(text)


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
