"""The ``hxtrain`` command.

Exit codes: 0 done; 2 bad input (case file, output path, usage); 3 temperatures did not converge;
4 the Dask cluster a study ran on failed while it ran (no result); 1 an internal error (a bug:
please report it with the case file; ``--debug`` shows the traceback);
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

import sys
import functools

from .memory import keep_freed_memory
from .parser import build_parser
from .signals import (EXIT_BROKEN_PIPE, EXIT_INTERRUPTED, EXIT_TERMINATED, SIGNALS_RECEIVED, Terminated,
                      catch_signals, discard_stdout, is_sigterm, restore_signals, stdout_gone, stop_if_signalled,
                      unraisable)

EXIT_OK, EXIT_INTERNAL, EXIT_BAD_INPUT, EXIT_NOT_CONVERGED = 0, 1, 2, 3

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
        from hxtrain.solver.reporting.display_units import adopt_case_units

        comparison = compare_clean_and_fouled(path)
        result = comparison.fouled
        adopt_case_units(getattr(result.network, "case", None))
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
    counted = [(len(case.exchangers), "exchanger", "exchangers"), (len(case.air_coolers), "air cooler", "air coolers")]
    kinds = ", ".join(f"{n} {one if n == 1 else many}" for n, one, many in counted if n or one == "exchanger")
    print(f"{args.case}: ok — {len(net.units)} units, {len(net.segments)} stream segments, {kinds}; flows balance.")
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
    from hxtrain.solver.studies import compare, solve_specifications, specification_table, study_text

    study = _load_study_for(args, lambda s: ["comparison", "findings"] + (["specifications"] if s.specifications else []))
    _adopt_study_units(study)
    comparison = compare(study)
    specifications = solve_specifications(study)
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

    from hxtrain.solver.reporting.console_tables import TELL_APART, render
    from hxtrain.solver.reporting.display_units import current
    from hxtrain.solver.reporting.files import with_whole_counts
    import pandas as pd

    from hxtrain.solver.reporting.text import boxed, limit_counts, limits_over_scenarios, note_lines, \
        paths_of_the_case, warnings_over_scenarios
    from hxtrain.solver.simulation.results import CAUTION
    from hxtrain.solver.studies import run_sweep
    from hxtrain.solver.studies.sweeps import grid_columns_with_units

    study = _load_study_for(args, lambda s: [sweep.name for sweep in s.sweeps] + [_limits_name(s)])
    if not study.sweeps:
        raise CaseError("the study has no sweeps", file=study.file, path=("sweeps",))
    _adopt_study_units(study)
    from hxtrain.solver.studies.distributed import cluster_for

    with cluster_for(args):
        # the swept values named with their unit (streams.crude.flow_kg_s): converted like any result
        tables = {sweep.name: (table := run_sweep(study, sweep)).rename(columns=grid_columns_with_units(sweep, table))
                  for sweep in study.sweeps}
    # each sweep's grid columns: the swept values as told apart (a bypass of 0.001 is not 0.00)
    grids = {sweep.name: list(tables[sweep.name].columns[:len(sweep.grid)]) for sweep in study.sweeps}
    # each sweep's violated limits, counted over its points, in the files as on the console
    limits = pd.concat([limit_counts(table).rename(columns={"scenarios": "points", "rows": "point_numbers"})
                        .assign(sweep=name) for name, table in tables.items()], ignore_index=True)
    written = _write({**tables, _limits_name(study): limits[["sweep", *limits.columns[:-1]]]}, args,
                     {"study": study.file, "title": study.title, "caution": CAUTION}, _study_inputs(study))
    display = current()
    for name, table in tables.items():
        print(f"\nSweep {name}\n{'-' * (6 + len(name))}")
        print(render(with_whole_counts(table.drop(columns=["message", "status_text", "violated_limits",
                                                           "warning_names"], errors="ignore")), display,
                     digits={"relative_imbalance": ".1e", **dict.fromkeys(grids[name], TELL_APART)}))
        failed = table[~table["success"].astype(bool)]
        print("\n".join(boxed(f"POINTS OF SWEEP {name} WITH NO ANSWER ({paths_of_the_case(study)})",
                               (f"point {k + 1}: {display.message(m)}"
                                for k, m in zip(failed.index, failed["message"])))))
        print("\n".join(limits_over_scenarios(table, f"points of sweep {name}", display, name_rows="point")
                        + warnings_over_scenarios(table, f"points of sweep {name}", display, name_rows="point")))
    print("\n" + "\n".join(note_lines(current())))
    _say_written(written)
    return EXIT_OK


def _adopt_study_units(study):
    """The study's base case's ``settings.display_units`` over the command's units, for the rest
    of the command."""
    from hxtrain.solver.reporting.display_units import adopt_case_units

    adopt_case_units(study.case())


def _limits_name(study) -> str:
    """The name of a sweep's limits table: ``limits``, unless a sweep is called that."""
    return "limits" if "limits" not in {sweep.name for sweep in study.sweeps} else "violated_limits"


def _cleaning(args) -> int:
    from hxtrain.network import load_case

    from hxtrain.solver.demos import DEMO_CASES, demo_case_path
    from hxtrain.solver.reporting.console_tables import render
    from hxtrain.solver.reporting.display_units import adopt_case_units, current
    from hxtrain.solver.reporting.files import check_output_path
    from hxtrain.solver.reporting.text import boxed, note_lines
    from hxtrain.solver.simulation.results import CAUTION, simulate
    from hxtrain.solver.studies import cleaning_ranking

    path = args.case or demo_case_path(DEMO_CASES[0])
    inputs = {"case file": path}
    if args.out:
        check_output_path(args.out, inputs, ["ranking", "limits"])
    case = load_case(path)
    adopt_case_units(case)
    fouled = simulate(case)
    ranking = cleaning_ranking(case, fouled)
    limits = _cleaning_limits(fouled, ranking, current())
    written = _write({"ranking": ranking, "limits": limits}, args, {"case_file": str(path), "caution": CAUTION}, inputs)
    print(f"hxtrain cleaning, one exchanger at a time: {case.title or path}")
    print(f"case file: {path}")  # whole, to be copied; the tables keep to the width
    shown = ranking.drop(columns="standing_limits_when_clean", errors="ignore")  # in the box below, in full
    print(render(shown, current()) if len(ranking) else "no exchanger or air cooler has fouling")
    new = limits.loc[limits["limit_is"] == "new", "cleaned"].nunique()
    print("\n".join(boxed("LIMITS VIOLATED", _cleaning_limit_lines(limits), count=f"{len(fouled.limits)} as it is, "
                                                                                  f"{new} new with one cleaning, each "
                                                                                  "cleaning's standing ones")))
    print("\n" + "\n".join(note_lines(current())))
    _say_written(written)
    return EXIT_OK


def _cleaning_limits(fouled, ranking, display):
    """The limits of the console's box as a table, worded in ``display``'s units: the case's own
    as it is, then each cleaning's new ones and the standing ones it moves, one row each."""
    import pandas as pd

    rows = [("none (as it is)", "as it is", f"{r.unit}: {display.message(r.message)}", r.key)
            for r in fouled.limits.itertuples()]
    for row in ranking.itertuples():
        for column, when in (("new_limits_when_clean", "new"), ("standing_limits_when_clean", "still")):
            if getattr(row, column, ""):
                rows.append((row.exchanger, when, display.message(getattr(row, column)), ""))
    return pd.DataFrame(rows, columns=["cleaned", "limit_is", "limit", "key"])


def _cleaning_limit_lines(limits) -> list[str]:
    """The box's lines from :func:`_cleaning_limits`: the limits the case violates as it is
    (standing: every cleaned case but those that cure them violates them too), then each
    cleaning's new ones, in full (the table cuts them short), and each standing one it moves."""
    return [f"as it is: {r.limit}  [{r.key}]" if r.limit_is == "as it is" else f"{r.limit_is} with {r.cleaned} clean: "
            f"{r.limit}" for r in limits.itertuples()]


def _benchmark(args) -> int:
    from hxtrain.network import CaseError

    from hxtrain.solver.simulation.benchmark import benchmark_text, run_benchmark

    mode = "--plant-data" if args.plant_data else "--sizes" if args.sizes else None
    if args.plant_data and args.sizes:
        raise CaseError("give one of --plant-data and --sizes: each is a benchmark of its own")
    for option, value, used_by in (("--scenarios", args.scenarios, None), ("--loop", args.loop, None),
                                   ("--workers", args.workers, None), ("--windows", args.windows, "--plant-data"),
                                   ("--properties", args.properties, "--sizes")):
        if value is not None and used_by != mode:
            what = used_by or "the scenario benchmark (without --plant-data or --sizes)"
            raise CaseError(f"{option} is for {what}, not for {mode or 'the scenario benchmark'}")
    args.scenarios = 20000 if args.scenarios is None else args.scenarios
    args.loop = 5 if args.loop is None else args.loop
    args.windows = 8760 if args.windows is None else args.windows
    args.properties = args.properties or "varying"
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


def main(argv=None) -> int:
    """Run the command; returns the exit code (``--help``, ``--version`` and usage errors exit
    through argparse's SystemExit)."""
    args = handlers = None
    SIGNALS_RECEIVED.clear()
    unraisable_hook = sys.unraisablehook
    try:
        handlers = catch_signals()
        sys.unraisablehook = functools.partial(unraisable, unraisable_hook, lambda: handlers is not None)
        args = build_parser().parse_args(argv)
        keep_freed_memory()
        code = _dispatch(args)
        stop_if_signalled()
        sys.stdout.flush()  # here, not at exit: a reader that has gone away is handled below
        return code
    except (KeyboardInterrupt, Terminated):
        return _stopped(args)
    except BrokenPipeError:
        discard_stdout()
        return EXIT_BROKEN_PIPE
    except SystemExit:
        if stdout_gone():
            return EXIT_BROKEN_PIPE
        raise
    except BaseException:
        if SIGNALS_RECEIVED:
            return _stopped(args)
        raise
    finally:
        restore_signals(handlers)
        handlers = None
        sys.unraisablehook = unraisable_hook


def _dispatch(args) -> int:
    import warnings

    from hxtrain.network import CaseError

    from hxtrain.solver.simulation.engine import ConvergenceError  # light: each command loads what it needs

    stop_if_signalled()
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
            _complain(args, f"not converged: {_input_of(args)}{exc}")
            return EXIT_NOT_CONVERGED
        if getattr(exc, "exit_code", None):  # a failure outside hxtrain and the input: a cluster lost mid-run
            _complain(args, f"error: {exc}")
            return exc.exit_code
        # a bug: say so plainly; --debug gives the traceback
        _complain(args, f"internal error ({type(exc).__name__}: {exc}). This is a fault in hxtrain, not in the "
                        "case; please report it with the case file. Run with --debug for the traceback.")
        return EXIT_INTERNAL


def _input_of(args) -> str:
    """'FILE: ', the input a command's message is about ('' where it names none)."""
    named = next((getattr(args, k) for k in ("case", "study", "monitoring", "schedule") if getattr(args, k, None)),
                 None)
    return f"{named}: " if named else ""


def _complain(args, message):
    if getattr(args, "debug", False):
        import traceback

        traceback.print_exc()
    print(message, file=sys.stderr)


def _stopped(args) -> int:
    """One line for the signal that stopped the run (Ctrl-C when none was noted: an interrupt
    raised before the handlers were set, or by other code). What an event loop still logs as it
    is torn down (Dask's tasks cancelled, their exceptions never retrieved) is not for the user:
    the line is."""
    import logging

    for name in ("asyncio", *(n for n in list(logging.root.manager.loggerDict) if n.split(".")[0] == "distributed")):
        logging.getLogger(name).setLevel(logging.CRITICAL + 1)
    if SIGNALS_RECEIVED and is_sigterm(SIGNALS_RECEIVED[-1]):
        _complain(args, "terminated (SIGTERM)")
        return EXIT_TERMINATED
    _complain(args, "interrupted")
    return EXIT_INTERRUPTED


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
