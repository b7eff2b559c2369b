"""The ``hxtrain`` command.

Exit codes: 0 done; 2 bad input (case file, output path, usage); 3 temperatures did not converge;
1 an internal error (a bug: please report it with the case file; ``--debug`` shows the traceback);
130 interrupted (Ctrl-C); 143 stopped by SIGTERM; 141 the standard output was closed before the
report was printed in full (``... | head``): output files are written before the report, so they
are complete. An interrupt or SIGTERM prints one line and removes any temporary file.

Start-up is light: at import this module loads only ``os`` and ``sys`` (both loaded with the
interpreter) and the lazy :mod:`hxtrain.solver` package; argparse, the numerical libraries and
the case model are imported inside :func:`main`, so an interrupt from there on is handled, and
an error that an interrupt causes inside a library's import (numpy turns it into an ImportError)
is reported as the interrupt. What comes before this module runs is Python's own start-up (a
few tens of milliseconds), where Python itself answers Ctrl-C. ``--help`` and ``--version`` load
neither numpy nor the case model. Numerical RuntimeWarnings are not shown (their sources are
guarded where they arise; ``--debug`` or Python's ``-W`` option shows any that remain).
"""

from __future__ import annotations

import os
import sys
import functools

from hxtrain.solver import package_version

EXIT_OK, EXIT_INTERNAL, EXIT_BAD_INPUT, EXIT_NOT_CONVERGED = 0, 1, 2, 3
EXIT_INTERRUPTED, EXIT_BROKEN_PIPE, EXIT_TERMINATED = 130, 141, 143
"""128 + the signal's number, as a shell reports a process ended by SIGINT, SIGPIPE, SIGTERM."""

DESCRIPTION = """\
Rate a network of heat exchangers, heaters, coolers, mixers and splitters described in a YAML
case file: every stream temperature, every duty, the furnace and utility loads, and every limit
violated. Results are screening estimates; mechanical limits, safety and operating decisions rest
with qualified engineers and the applicable codes and standards."""

EPILOG = """\
exit codes: 0 done, 2 bad input (message names the file and key path), 3 did not converge,
1 internal error, 130 interrupted (Ctrl-C), 143 stopped by SIGTERM, 141 standard output closed
early (e.g. by "| head"; files given with --out are written first and complete).
examples:
  hxtrain run                          run the bundled crude preheat demo
  hxtrain run --demo feed_effluent     run another bundled demo
  hxtrain run plant.yaml --out res.xlsx
  hxtrain check plant.yaml             validate only
  hxtrain compare study.yaml           variants side by side, specifications
  hxtrain sweep study.yaml --out s.csv sweeps over one or two key paths
  hxtrain uncertainty study.yaml       Monte Carlo: P10/P50/P90 and what moves the furnace duty
  hxtrain sweep study.yaml --scheduler tcp://host:8786   the batches on a Dask cluster
  hxtrain benchmark --sizes            the size ladder: 10 to 10,000 units in four shapes
  hxtrain cleaning plant.yaml          rank exchangers by what cleaning each gains
  hxtrain monitor plant_monitoring.yaml   fouling from plant data, its cost, instruments, projection
  hxtrain schedule cleaning_plan.yaml     the cleaning plan of least cost against baselines
  hxtrain report plant.yaml --units us    one HTML file with pictures (--out report.html)
  hxtrain schema case                     the JSON Schema of case files, for editors"""


class Terminated(BaseException):
    """Raised by the SIGTERM handler :func:`main` installs, so that a SIGTERM unwinds like Ctrl-C:
    ``finally`` blocks run and temporary files are removed (not an Exception: no handler for
    errors catches it)."""


class _DemoNames:
    """The choices of ``--demo``, looked up when argparse first needs them (``run --help``, or
    checking a given name), so that building the parser loads no part of the case model."""

    @staticmethod
    def _names():
        from hxtrain.solver.demos import DEMO_CASES

        return DEMO_CASES

    def __contains__(self, name):
        return name in self._names()

    def __iter__(self):
        return iter(self._names())


@functools.lru_cache(maxsize=1)
def build_parser():
    """The argument parser, built once per process (~4 ms a build; argparse keeps no state
    between parses, and a test suite calls :func:`main` thousands of times)."""
    import argparse

    parser = argparse.ArgumentParser(prog="hxtrain", description=DESCRIPTION, epilog=EPILOG,
                                     formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--version", action=_version_action(argparse), help="show the version and exit")
    commands = parser.add_subparsers(dest="command", metavar="COMMAND", required=True)

    run = commands.add_parser("run", help="simulate a case and print the results",
                              description="Simulate a case, print its tables, optionally write them to a file.")
    run.add_argument("case", nargs="?", metavar="CASE", help="case file (YAML); omit to run a bundled demo")
    run.add_argument("--demo", choices=_DemoNames(), default=None, metavar="NAME",  # a metavar: not listed at build
                     help="run a bundled demo case instead of a file: %(choices)s (with no CASE and no --demo: "
                          "the first)")
    run.add_argument("--out", metavar="PATH",
                     help="also write the results: .csv (one file per table: PATH, PATH_streams.csv, "
                          "PATH_findings.csv, PATH_tears.csv, PATH_summary.csv, listed in .PATH.sha256), .xlsx "
                          "(an about sheet, then one sheet per table) or .json (one document); written before "
                          "the report is printed")
    run.add_argument("--against-clean", action="store_true",
                     help="also rate the case with every fouling resistance at zero and show what fouling costs "
                          "per exchanger and at the furnace")
    run.add_argument("--debug", action="store_true", help="show tracebacks on errors")
    _display_options(run)

    study_help = "study file (YAML)"
    _subcommand(commands, "compare", "run a study's variants and specifications side by side",
                "Simulate a study's base case and every variant, print them in columns with differences from the "
                "base, and solve its specifications.", ("study", None, study_help), out=True)
    _cluster_options(_subcommand(commands, "sweep", "run a study's sweeps over one or two key paths",
                                    "Simulate every point of each sweep in a study file; one row per point.",
                                    ("study", None, study_help), out=True))
    uncertainty = _subcommand(commands, "uncertainty", "Monte Carlo over a study's uncertain inputs",
                              "Draw the study's 'uncertainty' inputs (normal, uniform or triangular, bounded), "
                              "solve every sample in one batch, print P10/P50/P90 of the totals and of every "
                              "unit's duty and outlets, and which input moves the furnace duty most.",
                              ("study", None, study_help), out=True)
    uncertainty.add_argument("--samples", type=int, help="samples to draw (default: the study's, or 1000)")
    uncertainty.add_argument("--seed", type=int, help="seed of the draw (default: the study's, or 1)")
    _cluster_options(uncertainty)
    _subcommand(commands, "cleaning", "rank exchangers by what cleaning each alone gains",
                "For every fouled exchanger, simulate the case with that exchanger clean and rank them by the "
                "furnace duty saved.", ("case", "?", "case file (YAML); omit for the crude preheat demo"), out=True)
    bench = commands.add_parser("benchmark", help="measure scenario-solves per second, batch against one by one",
                                description="Solve many crude-flow scenarios of the crude preheat demo, as shipped "
                                            "and with fixed properties (constant cp, fixed UA), in one vectorized "
                                            "batch, in the same batch allowed several processes (it says how many "
                                            "it used), and a few one by one; print the rates and their ratios.")
    bench.add_argument("--scenarios", type=int, default=20000, help="scenarios in the batch (default 20000)")
    bench.add_argument("--loop", type=int, default=5, help="single solves timed in the loop (default 5)")
    bench.add_argument("--workers", type=int, default=None,
                       help="processes the split batch may use (default: the machine's CPU count)")
    bench.add_argument("--plant-data", action="store_true",
                       help="instead: reconcile and back-calculate a year of hourly plant-data windows of the crude "
                            "demo, timed beside the batch solve of the same windows")
    bench.add_argument("--windows", type=int, default=8760, help="windows for --plant-data (default 8760)")
    bench.add_argument("--sizes", nargs="?", const="10,100,1000,3000,10000", metavar="N,N,...",
                       help="instead: the size ladder, networks of these many units (default "
                            "10,100,1000,3000,10000) in four shapes, seconds and peak memory per stage and the "
                            "fitted exponent")
    bench.add_argument("--properties", choices=("varying", "fixed"), default="varying",
                       help="for --sizes: cp varying with temperature (default) or constant")
    bench.add_argument("--debug", action="store_true", help="show tracebacks on errors")
    _subcommand(commands, "check", "validate a case file without simulating it",
                "Read and check a case file: keys, values, units and connections.", ("case", None, "case file (YAML)"))
    from .plant_commands import add_parsers

    add_parsers(commands, _subcommand)
    report = _subcommand(commands, "report", "one self-contained HTML report of a case or a study, with pictures",
                         "Simulate a case (or a study's base and variants) and write one HTML file that opens "
                         "offline: the caution, violated limits first, totals, the network with its temperatures, "
                         "temperature profiles, a T-Q picture per exchanger, the tables; for a study the variants "
                         "side by side.", ("target", "?", "case or study file (YAML); omit for a bundled demo"))
    report.add_argument("--demo", choices=_DemoNames(), default=None, metavar="NAME",
                        help="report on a bundled demo case: %(choices)s")
    report.add_argument("--out", metavar="PATH", help="the HTML file to write (default: report.html)")
    _display_options(report, wide=False)
    schema = commands.add_parser("schema", help="print the JSON Schema of a file kind (for editors)",
                                 description="Print the JSON Schema of case, study, monitoring or schedule files, "
                                             "for an editor's YAML language server (see README, Reports).")
    schema.add_argument("kind", choices=("case", "study", "monitoring", "schedule"), metavar="KIND",
                        help="case, study, monitoring or schedule")
    schema.add_argument("--debug", action="store_true", help="show tracebacks on errors")
    return parser


def _version_action(argparse):
    """``--version``, with the version looked up only when asked for: reading the installed
    package's metadata costs ~0.05-0.1 s, which every other command would pay at start."""

    class ShowVersion(argparse.Action):
        def __init__(self, option_strings, dest, help=None):
            super().__init__(option_strings, dest=argparse.SUPPRESS, default=argparse.SUPPRESS, nargs=0, help=help)

        def __call__(self, parser, namespace, values, option_string=None):
            print(f"hxtrain {package_version()}")
            parser.exit()

    return ShowVersion


def _display_options(parser, wide=True):
    """--units (and --wide) of the commands that show results."""
    parser.add_argument("--units", choices=("si", "us"), default="si",
                        help="show values in SI (default) or US customary units (°F, MMBtu/h, lb/h, psi, ...); a "
                             "case's settings.display_units chooses per quantity")
    if wide:
        parser.add_argument("--wide", action="store_true",
                            help="print every column of every table (by default tables fit 120 columns)")


def _cluster_options(parser):
    """--scheduler / --local-cluster of the commands that run batches (hxtrain.solver.studies.distributed)."""
    group = parser.add_mutually_exclusive_group()
    group.add_argument("--scheduler", metavar="ADDRESS",
                       help="solve the batches on the Dask cluster of this scheduler (e.g. tcp://10.0.0.5:8786); "
                            "needs pip install \"hxtrain[cluster]\"")
    group.add_argument("--local-cluster", type=int, metavar="N",
                       help="start a local Dask cluster of N worker processes for the batches, closed at the end")


def _subcommand(commands, name, summary, description, target, out=False):
    """A subcommand taking one file argument, optionally --out, and --debug."""
    parser = commands.add_parser(name, help=summary, description=description)
    dest, nargs, text = target
    parser.add_argument(dest, nargs=nargs, metavar=dest.upper(), help=text)
    if out:
        parser.add_argument("--out", metavar="PATH", help="also write the tables (.csv, .xlsx or .json)")
        _display_options(parser)
    parser.add_argument("--debug", action="store_true", help="show tracebacks on errors")
    return parser


def _case_path(args):
    from hxtrain.solver.demos import DEMO_CASES, demo_case_path

    if args.case and args.demo:
        from hxtrain.network import CaseError

        raise CaseError("give either a case file or --demo, not both")
    if args.case:
        return args.case
    return demo_case_path(args.demo or DEMO_CASES[0])


def _study_inputs(study) -> dict:
    return {"study file": study.file, "base case": study.base.file}


def _write(tables, args, notes, inputs):
    """Write the tables when --out was given (before anything is printed); the files written."""
    if not args.out:
        return None
    from hxtrain.solver.reporting.files import write_tables

    return write_tables(tables, args.out, notes, inputs)


def _say_written(written):
    if written is not None:
        print(f"\n{written.describe()}")


def _run(args) -> int:
    from hxtrain.solver.reporting.files import RUN_TABLES, check_output_path, write_results
    from hxtrain.solver.reporting.text import text_report

    from hxtrain.solver.studies.clean_vs_fouled import FOULING_TABLES, compare_clean_and_fouled, comparison_text

    path = _case_path(args)
    inputs = {"case file": path}
    if args.out:
        check_output_path(args.out, inputs, RUN_TABLES + (FOULING_TABLES if args.against_clean else ()))
    extra = None
    if args.against_clean:
        comparison = compare_clean_and_fouled(path)
        result = comparison.fouled
        report = text_report(result, comparison_text(comparison))
        extra = comparison.tables()
    else:
        from hxtrain.solver.simulation.results import simulate

        result = simulate(path)
        report = text_report(result)
    written = write_results(result, args.out, inputs, extra) if args.out else None
    print(report)
    _say_written(written)
    return EXIT_OK


def _check(args) -> int:
    from hxtrain.network import build_network, load_case

    case = load_case(args.case)
    net = build_network(case)
    print(f"{args.case}: ok — {len(net.units)} units, {len(net.segments)} stream segments, "
          f"{len(case.exchangers)} exchangers; flows balance.")
    return EXIT_OK


def _load_study_for(args, table_names):
    """The study, with --out checked first on its own and then against the study's files."""
    from hxtrain.network.study import load_study

    from hxtrain.solver.reporting.files import check_output_path

    if args.out:
        check_output_path(args.out)
    study = load_study(args.study)
    if args.out:
        check_output_path(args.out, _study_inputs(study), table_names(study))
    return study


def _compare(args) -> int:
    from hxtrain.solver.simulation.results import CAUTION
    from hxtrain.solver.studies import compare, solve_specification, specification_table, study_text

    study = _load_study_for(args, lambda s: ["comparison", "findings"] + (["specifications"] if s.specifications else []))
    comparison = compare(study)
    specifications = [solve_specification(study, spec) for spec in study.specifications]
    tables = {"comparison": comparison.table, "findings": comparison.findings}
    if specifications:
        tables["specifications"] = specification_table(specifications)
    written = _write(tables, args, {"study": study.file, "title": study.title, "caution": CAUTION},
                     _study_inputs(study))
    print(study_text(study, comparison, specifications))
    _say_written(written)
    return EXIT_OK


def _sweep(args) -> int:
    from hxtrain.network import CaseError

    from hxtrain.solver.reporting.files import with_whole_counts
    from hxtrain.solver.reporting.text import boxed
    from hxtrain.solver.simulation.results import CAUTION
    from hxtrain.solver.studies import run_sweep

    study = _load_study_for(args, lambda s: [sweep.name for sweep in s.sweeps])
    if not study.sweeps:
        raise CaseError("the study has no sweeps", file=study.file, path=("sweeps",))
    from hxtrain.solver.studies.distributed import cluster_for

    with cluster_for(args):
        tables = {sweep.name: run_sweep(study, sweep) for sweep in study.sweeps}
    written = _write(tables, args, {"study": study.file, "title": study.title, "caution": CAUTION},
                     _study_inputs(study))
    for name, table in tables.items():
        print(f"\nSweep {name}\n{'-' * (6 + len(name))}")
        shown = with_whole_counts(table.drop(columns=["message", "status_text"]))
        print(shown.to_string(index=False, float_format=lambda v: f"{v:,.3f}", na_rep="NaN"))
        failed = table[~table["success"].astype(bool)]
        print("\n".join(boxed(f"POINTS OF SWEEP {name} WITH NO ANSWER",
                               (f"point {k + 1}: {m}" for k, m in zip(failed.index, failed["message"])))))
    print(f"\nNOTE: {CAUTION}")
    _say_written(written)
    return EXIT_OK


def _cleaning(args) -> int:
    from hxtrain.network import load_case

    from hxtrain.solver.demos import DEMO_CASES, demo_case_path
    from hxtrain.solver.reporting.files import check_output_path
    from hxtrain.solver.simulation.results import CAUTION
    from hxtrain.solver.studies import cleaning_ranking

    path = args.case or demo_case_path(DEMO_CASES[0])
    inputs = {"case file": path}
    if args.out:
        check_output_path(args.out, inputs, ["ranking"])
    ranking = cleaning_ranking(load_case(path))
    written = _write({"ranking": ranking}, args, {"case_file": str(path), "caution": CAUTION}, inputs)
    print(f"Cleaning one exchanger at a time: {path}")
    print(ranking.to_string(float_format=lambda v: f"{v:,.2f}") if len(ranking) else "no exchanger has fouling")
    print(f"\nNOTE: {CAUTION}")
    _say_written(written)
    return EXIT_OK


def _benchmark(args) -> int:
    from hxtrain.network import CaseError

    from hxtrain.solver.simulation.benchmark import benchmark_text, run_benchmark

    if args.scenarios < 2 or args.loop < 1 or (args.workers is not None and args.workers < 1) or args.windows < 30:
        raise CaseError("--scenarios must be at least 2, --loop and --workers at least 1, --windows at least 30")
    if args.plant_data:
        from hxtrain.solver.monitoring.benchmark import plant_data_benchmark_text, run_plant_data_benchmark

        print(plant_data_benchmark_text(run_plant_data_benchmark(args.windows)))
        return EXIT_OK
    if args.sizes:
        from hxtrain.solver.simulation.size_benchmark import ladder, ladder_text

        try:
            sizes = [int(n) for n in args.sizes.split(",")]
        except ValueError:
            raise CaseError(f"--sizes takes whole numbers separated by commas, got {args.sizes!r}") from None
        if not sizes or min(sizes) < 10:
            raise CaseError("--sizes: each size must be at least 10 units")
        print(ladder_text(ladder(sizes, properties=args.properties), args.properties))
        return EXIT_OK
    print(benchmark_text(run_benchmark(args.scenarios, args.loop, args.workers)))
    return EXIT_OK


def _uncertainty(args) -> int:
    from hxtrain.solver.studies.monte_carlo import uncertainty_command

    return uncertainty_command(args, _write, _say_written)


def _monitor(args) -> int:
    from .plant_commands import monitor_command

    return monitor_command(args, _write, _say_written)


def _schedule(args) -> int:
    from .plant_commands import schedule_command

    return schedule_command(args, _write, _say_written)


def _report(args) -> int:
    from hxtrain.solver.reporting.html_report import report_command

    return report_command(args)


def _schema(args) -> int:
    from hxtrain.solver.reporting.schema import schema_text

    print(schema_text(args.kind))
    return EXIT_OK


COMMANDS = {"run": _run, "check": _check, "compare": _compare, "sweep": _sweep, "cleaning": _cleaning,
            "benchmark": _benchmark, "monitor": _monitor, "schedule": _schedule, "report": _report,
            "schema": _schema, "uncertainty": _uncertainty}


HANDLER_PROCESS: list = []
"""The process that set the signal handlers (forked workers inherit them)."""
SIGNALS_RECEIVED: list = []
"""SIGINT and SIGTERM caught while :func:`main` runs, in order. An error raised while one unwinds
the program (numpy turns an interrupt during its import into an ImportError) is reported as
that signal, never as a fault in hxtrain."""


def main(argv=None) -> int:
    """Run the command; returns the exit code (``--help``, ``--version`` and usage errors exit
    through argparse's SystemExit)."""
    args = handlers = None
    SIGNALS_RECEIVED.clear()
    unraisable_hook = sys.unraisablehook
    try:
        handlers = _catch_signals()
        sys.unraisablehook = functools.partial(_unraisable, unraisable_hook, lambda: handlers is not None)
        args = build_parser().parse_args(argv)
        code = _dispatch(args)
        _stop_if_signalled()
        sys.stdout.flush()  # here, not at exit: a reader that has gone away is handled below
        return code
    except (KeyboardInterrupt, Terminated):
        return _stopped(args)
    except BrokenPipeError:
        _discard_stdout()
        return EXIT_BROKEN_PIPE
    except SystemExit:
        if _stdout_gone():
            return EXIT_BROKEN_PIPE
        raise
    except BaseException:
        if SIGNALS_RECEIVED:
            return _stopped(args)
        raise
    finally:
        _restore_signals(handlers)
        handlers = None
        sys.unraisablehook = unraisable_hook


def _dispatch(args) -> int:
    import warnings

    from hxtrain.network import CaseError

    from hxtrain.solver.simulation.engine import ConvergenceError  # light: each command loads what it needs

    _stop_if_signalled()
    try:
        with warnings.catch_warnings():
            if not sys.warnoptions and not args.debug:
                warnings.simplefilter("ignore", RuntimeWarning)
            from hxtrain.solver.reporting.display_units import Display, using

            with using(Display(getattr(args, "units", "si"), wide=getattr(args, "wide", False))):
                return COMMANDS[args.command](args)
    except Exception as exc:
        if SIGNALS_RECEIVED or isinstance(exc, BrokenPipeError):
            raise  # main reports the signal, or the closed standard output
        if isinstance(exc, CaseError):
            _complain(args, f"error: {exc}")
            return EXIT_BAD_INPUT
        if isinstance(exc, ConvergenceError):
            _complain(args, f"not converged: {exc}")
            return EXIT_NOT_CONVERGED
        # a bug: say so plainly; --debug gives the traceback
        _complain(args, f"internal error ({type(exc).__name__}: {exc}). This is a fault in hxtrain, not in the "
                        "case; please report it with the case file. Run with --debug for the traceback.")
        return EXIT_INTERNAL


def _complain(args, message):
    if getattr(args, "debug", False):
        import traceback

        traceback.print_exc()
    print(message, file=sys.stderr)


def _stopped(args) -> int:
    """One line for the signal that stopped the run (Ctrl-C when none was noted: an interrupt
    raised before the handlers were set, or by other code)."""
    if SIGNALS_RECEIVED and _is_sigterm(SIGNALS_RECEIVED[-1]):
        _complain(args, "terminated (SIGTERM)")
        return EXIT_TERMINATED
    _complain(args, "interrupted")
    return EXIT_INTERRUPTED


def _catch_signals() -> dict:
    """Note SIGINT and SIGTERM and raise KeyboardInterrupt and :class:`Terminated` for them;
    returns the handlers to restore. SIGINT is taken over only from Python's default handler
    (an ignored SIGINT, as in a background job, stays ignored); nothing is set where signals
    cannot be (not the main thread, or a platform without SIGTERM)."""
    import signal

    previous = {}
    HANDLER_PROCESS[:] = [os.getpid()]
    for name, handler in (("SIGINT", _interrupted), ("SIGTERM", _terminated)):
        number = getattr(signal, name, None)
        try:
            if number is None or (name == "SIGINT" and signal.getsignal(number) is not signal.default_int_handler):
                continue
            previous[number] = signal.signal(number, handler)
        except (ValueError, OSError):
            continue
    return previous


def _stop_if_signalled():
    """Stop now if a signal was caught but its exception went nowhere: a C extension's module
    initialisation that runs Python code (numpy's, scipy's) can clear it, and the import goes on."""
    if SIGNALS_RECEIVED:
        raise Terminated() if _is_sigterm(SIGNALS_RECEIVED[-1]) else KeyboardInterrupt()


def _is_sigterm(number) -> bool:
    import signal

    return number == getattr(signal, "SIGTERM", None)


def _interrupted(signum, frame):
    _leave_quietly_if_worker(EXIT_INTERRUPTED)
    SIGNALS_RECEIVED.append(signum)
    raise KeyboardInterrupt


def _terminated(signum, frame):
    _leave_quietly_if_worker(EXIT_TERMINATED)
    SIGNALS_RECEIVED.append(signum)
    raise Terminated()


def _leave_quietly_if_worker(code):
    """In a worker process forked from the command (a batch split over processes), which
    inherits these handlers: end it without a traceback; the command itself, which gets the same
    Ctrl-C from the terminal, reports it once."""
    if HANDLER_PROCESS and os.getpid() != HANDLER_PROCESS[-1]:
        raise SystemExit(code)


def _interrupt_again(signum, handlers_in_place):
    """The signal once more, to the main thread, while :func:`main`'s handlers are in place."""
    import _thread

    if handlers_in_place():
        _thread.interrupt_main(signum)


def _unraisable(hook, handlers_in_place, unraisable):
    """An interrupt raised where Python cannot pass it on (a weakref callback, a ``__del__``)
    would be lost, and printed as "Exception ignored in ...": deliver it to the main thread again
    instead, from another thread a moment later (from here it would be raised inside this hook
    and lost again); the handler then runs at the main thread's next ordinary step. Anything
    else goes to ``hook``, the hook in place before :func:`main`."""
    if isinstance(unraisable.exc_value, (KeyboardInterrupt, Terminated)) and SIGNALS_RECEIVED:
        import threading

        again = threading.Timer(0.01, _interrupt_again, (SIGNALS_RECEIVED[-1], handlers_in_place))
        again.daemon = True
        again.start()
        return
    hook(unraisable)


def _restore_signals(previous):
    import signal

    for number, handler in (previous or {}).items():
        signal.signal(number, signal.SIG_DFL if handler is None else handler)


def _stdout_gone() -> bool:
    """Flush the standard output; True when its reader has gone away (the rest is discarded)."""
    try:
        sys.stdout.flush()
    except BrokenPipeError:
        _discard_stdout()
        return True
    return False


def _discard_stdout():
    """Point the standard output at the null device, so that what is left in its buffer does not
    fail again when Python flushes it at exit (Python's documented treatment of a closed pipe)."""
    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
        os.close(devnull)
    except (AttributeError, OSError, ValueError):  # not a real file (a test's capture)
        pass


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
