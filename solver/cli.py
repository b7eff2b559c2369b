"""The ``hxtrain`` command.

Exit codes: 0 done; 2 bad input (case file, output path, usage); 3 temperatures did not converge;
1 an internal error (a bug: please report it with the case file; ``--debug`` shows the traceback).
"""

from __future__ import annotations

import argparse
import sys
import traceback
from importlib.metadata import PackageNotFoundError, version

from hxtrain.network import CaseError, load_case

from .demos import DEMO_CASES, demo_case_path
from .engine import ConvergenceError

EXIT_OK, EXIT_INTERNAL, EXIT_BAD_INPUT, EXIT_NOT_CONVERGED = 0, 1, 2, 3

DESCRIPTION = """\
Rate a network of heat exchangers, heaters, coolers, mixers and splitters described in a YAML
case file: every stream temperature, every duty, the furnace and utility loads, and every limit
violated. Results are screening estimates; mechanical limits, safety and operating decisions rest
with qualified engineers and the applicable codes and standards."""

EPILOG = """\
exit codes: 0 done, 2 bad input (message names the file and key path), 3 did not converge,
1 internal error.
examples:
  hxtrain run                          run the bundled crude preheat demo
  hxtrain run --demo feed_effluent     run another bundled demo
  hxtrain run plant.yaml --out res.xlsx
  hxtrain check plant.yaml             validate only"""


def _package_version():
    try:
        return version("hxtrain")
    except PackageNotFoundError:  # pragma: no cover - running from a source tree
        return "unknown"


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(prog="hxtrain", description=DESCRIPTION, epilog=EPILOG,
                                     formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--version", action="version", version=f"hxtrain {_package_version()}")
    commands = parser.add_subparsers(dest="command", metavar="COMMAND", required=True)

    run = commands.add_parser("run", help="simulate a case and print the results",
                              description="Simulate a case, print its tables, optionally write them to a file.")
    run.add_argument("case", nargs="?", metavar="CASE", help="case file (YAML); omit to run a bundled demo")
    run.add_argument("--demo", choices=DEMO_CASES, default=None,
                     help=f"run a bundled demo case instead of a file (default with no CASE: {DEMO_CASES[0]})")
    run.add_argument("--out", metavar="PATH",
                     help="also write the results: .csv (one file per table: PATH, PATH_streams.csv, "
                          "PATH_findings.csv, PATH_tears.csv, PATH_summary.csv), .xlsx (one sheet per table) "
                          "or .json (one document)")
    run.add_argument("--against-clean", action="store_true",
                     help="also rate the case with every fouling resistance at zero and show what fouling costs "
                          "per exchanger and at the furnace")
    run.add_argument("--debug", action="store_true", help="show tracebacks on errors")

    check = commands.add_parser("check", help="validate a case file without simulating it",
                                description="Read and check a case file: keys, values, units and connections.")
    check.add_argument("case", metavar="CASE", help="case file (YAML)")
    check.add_argument("--debug", action="store_true", help="show tracebacks on errors")
    return parser


def _case_path(args):
    if args.case and args.demo:
        raise CaseError("give either a case file or --demo, not both")
    if args.case:
        return args.case
    return demo_case_path(args.demo or DEMO_CASES[0])


def _run(args) -> int:
    from .output import check_output_path, write_results
    from .report import text_report
    from .results import simulate

    path = _case_path(args)
    if args.out:
        check_output_path(args.out)
    if args.against_clean:
        from .fouling import compare_clean_and_fouled, comparison_text

        comparison = compare_clean_and_fouled(path)
        result = comparison.fouled
        print(text_report(result, comparison_text(comparison)))
    else:
        result = simulate(path)
        print(text_report(result))
    if args.out:
        written = write_results(result, args.out)
        print(f"\nwrote {', '.join(str(p) for p in written)}")
    return EXIT_OK


def _check(args) -> int:
    from hxtrain.network import build_network

    case = load_case(args.case)
    net = build_network(case)
    print(f"{args.case}: ok — {len(net.units)} units, {len(net.segments)} stream segments, "
          f"{len(case.exchangers)} exchangers; flows balance.")
    return EXIT_OK


def main(argv=None) -> int:
    args = build_parser().parse_args(argv)
    try:
        return _run(args) if args.command == "run" else _check(args)
    except CaseError as exc:
        _complain(args, f"error: {exc}")
        return EXIT_BAD_INPUT
    except ConvergenceError as exc:
        _complain(args, f"not converged: {exc}")
        return EXIT_NOT_CONVERGED
    except KeyboardInterrupt:
        _complain(args, "interrupted")
        return 130
    except Exception as exc:  # a bug: say so plainly; --debug gives the traceback
        _complain(args, f"internal error ({type(exc).__name__}: {exc}). This is a fault in hxtrain, not in the "
                        "case; please report it with the case file. Run with --debug for the traceback.")
        return EXIT_INTERNAL


def _complain(args, message):
    if getattr(args, "debug", False):
        traceback.print_exc()
    print(message, file=sys.stderr)


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
