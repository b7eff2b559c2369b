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
from .results import CAUTION

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
  hxtrain check plant.yaml             validate only
  hxtrain compare study.yaml           variants side by side, specifications
  hxtrain sweep study.yaml --out s.csv sweeps over one or two key paths
  hxtrain cleaning plant.yaml          rank exchangers by what cleaning each gains"""


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

    study_help = "study file (YAML)"
    _subcommand(commands, "compare", "run a study's variants and specifications side by side",
                "Simulate a study's base case and every variant, print them in columns with differences from the "
                "base, and solve its specifications.", ("study", None, study_help), out=True)
    _subcommand(commands, "sweep", "run a study's sweeps over one or two key paths",
                "Simulate every point of each sweep in a study file; one row per point.",
                ("study", None, study_help), out=True)
    _subcommand(commands, "cleaning", "rank exchangers by what cleaning each alone gains",
                "For every fouled exchanger, simulate the case with that exchanger clean and rank them by the "
                "furnace duty saved.", ("case", "?", "case file (YAML); omit for the crude preheat demo"), out=True)
    bench = commands.add_parser("benchmark", help="measure scenario-solves per second, batch against one by one",
                                description="Solve many crude-flow scenarios of the crude preheat demo, as shipped "
                                            "and with fixed properties (constant cp, fixed UA), in one vectorized "
                                            "batch, in the same batch split over processes, and a few one by one; "
                                            "print the rates and their ratios.")
    bench.add_argument("--scenarios", type=int, default=20000, help="scenarios in the batch (default 20000)")
    bench.add_argument("--loop", type=int, default=5, help="single solves timed in the loop (default 5)")
    bench.add_argument("--workers", type=int, default=None,
                       help="processes for the split batch (default: the machine's CPU count)")
    bench.add_argument("--debug", action="store_true", help="show tracebacks on errors")
    _subcommand(commands, "check", "validate a case file without simulating it",
                "Read and check a case file: keys, values, units and connections.", ("case", None, "case file (YAML)"))
    return parser


def _subcommand(commands, name, summary, description, target, out=False):
    """A subcommand taking one file argument, optionally --out, and --debug."""
    parser = commands.add_parser(name, help=summary, description=description)
    dest, nargs, text = target
    parser.add_argument(dest, nargs=nargs, metavar=dest.upper(), help=text)
    if out:
        parser.add_argument("--out", metavar="PATH", help="also write the tables (.csv, .xlsx or .json)")
    parser.add_argument("--debug", action="store_true", help="show tracebacks on errors")
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


def _write(tables, args, notes):
    from .output import write_tables

    if args.out:
        written = write_tables(tables, args.out, notes)
        print(f"\nwrote {', '.join(str(p) for p in written)}")


def _compare(args) -> int:
    from hxtrain.network.study import load_study

    from .output import check_output_path
    from .studies import compare, solve_specification, specification_table, study_text

    if args.out:
        check_output_path(args.out)
    study = load_study(args.study)
    comparison = compare(study)
    specifications = [solve_specification(study, spec) for spec in study.specifications]
    print(study_text(study, comparison, specifications))
    tables = {"comparison": comparison.table, "findings": comparison.findings}
    if specifications:
        tables["specifications"] = specification_table(specifications)
    _write(tables, args, {"study": study.file, "title": study.title, "caution": CAUTION})
    return EXIT_OK


def _sweep(args) -> int:
    from hxtrain.network.study import load_study

    from .output import check_output_path
    from .studies import run_sweep

    if args.out:
        check_output_path(args.out)
    study = load_study(args.study)
    if not study.sweeps:
        raise CaseError("the study has no sweeps", file=study.file, path=("sweeps",))
    tables = {}
    for sweep in study.sweeps:
        tables[sweep.name] = run_sweep(study, sweep)
        print(f"\nSweep {sweep.name}\n{'-' * (6 + len(sweep.name))}")
        print(tables[sweep.name].to_string(index=False, float_format=lambda v: f"{v:,.3f}"))
    print(f"\nNOTE: {CAUTION}")
    _write(tables, args, {"study": study.file, "title": study.title, "caution": CAUTION})
    return EXIT_OK


def _cleaning(args) -> int:
    from .output import check_output_path
    from .studies import cleaning_ranking

    if args.out:
        check_output_path(args.out)
    path = args.case or demo_case_path(DEMO_CASES[0])
    ranking = cleaning_ranking(load_case(path))
    print(f"Cleaning one exchanger at a time: {path}")
    print(ranking.to_string(float_format=lambda v: f"{v:,.2f}") if len(ranking) else "no exchanger has fouling")
    print(f"\nNOTE: {CAUTION}")
    _write({"ranking": ranking}, args, {"case_file": str(path), "caution": CAUTION})
    return EXIT_OK


def _benchmark(args) -> int:
    from .benchmark import benchmark_text, run_benchmark

    if args.scenarios < 2 or args.loop < 1 or (args.workers is not None and args.workers < 1):
        raise CaseError("--scenarios must be at least 2, --loop and --workers at least 1")
    print(benchmark_text(run_benchmark(args.scenarios, args.loop, args.workers)))
    return EXIT_OK


COMMANDS = {"run": _run, "check": _check, "compare": _compare, "sweep": _sweep, "cleaning": _cleaning,
            "benchmark": _benchmark}


def main(argv=None) -> int:
    args = build_parser().parse_args(argv)
    try:
        return COMMANDS[args.command](args)
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
