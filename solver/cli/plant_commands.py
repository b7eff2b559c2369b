"""``hxtrain monitor`` and ``hxtrain schedule``: the train's state from plant data, and the
cleaning plan of least cost. Both print a report, write their tables with ``--out`` before
printing, and show a progress bar on standard error when it is a terminal."""

from __future__ import annotations

import sys

MONITOR_TABLES = ("today", "state", "windows", "measurements", "readings", "unmeasured", "instruments",
                  "persistently_off", "removed", "cost", "cost_shares", "fouling_laws", "cleanings", "projection",
                  "limit_dates", "skipped_rows")
SCHEDULE_TABLES = ("plan", "plan_by_month", "comparison", "steps", "fouling_laws", "search", "baseline_cleanings",
                   "limits", "baseline_limits")


def add_parsers(commands, subcommand):
    """The two commands' parsers (``subcommand``: the CLI's helper for a one-file command)."""
    subcommand(commands, "monitor", "the state of the train from plant data: fouling, its cost, instruments, "
                                    "projection",
               "Read a monitoring file and its historian data; reconcile every steady window against the network's "
               "balances (gross errors and persistently biased instruments removed); back-calculate each "
               "exchanger's U and fouling with its uncertainty; cost the fouling at the furnace; fit fouling laws "
               "and project the train forward to the dates its limits are reached.",
               ("monitoring", None, "monitoring file (YAML), e.g. cases/plant_data/crude_monitoring.yaml"), out=True)
    subcommand(commands, "schedule", "the cleaning plan of least total cost over a horizon, against baselines",
               "Read a schedule file; march the train through its horizon under cleaning plans; find the plan of "
               "least total cost (a cycle MILP about the trajectory, then local search on the network) and compare "
               "it with no cleaning, fixed intervals, a fouling threshold and the one-step ranking applied "
               "greedily.", ("schedule", None, "schedule file (YAML), e.g. cases/crude_schedule.yaml"), out=True)


class _Progress:
    """A progress bar on standard error when it is a terminal (tqdm): each stage or search round
    moves it on and names itself, with the best cost so far where there is one."""

    def __init__(self):
        from tqdm import tqdm

        self.bar = tqdm(total=None, desc="starting", unit=" step", leave=False, file=sys.stderr)

    def __call__(self, stage, *more):
        self.bar.set_description(str(stage))
        detail = [m for m in more if m not in (None, 0)]
        self.bar.set_postfix_str(" ".join(f"{m:,.0f}" if isinstance(m, float) else str(m) for m in detail))
        self.bar.update(1)

    def close(self):
        self.bar.close()


def _progress():
    return _Progress() if sys.stderr.isatty() else None


def _file_command(args, write, say_written, loaded, inputs, table_names, compute, report, tables, notes) -> int:
    """The shape both commands share: check the output path against the inputs, compute, write
    the tables (before printing), print the report; both in the units asked for (``--units``)
    with the case's ``settings.display_units`` applied over them."""
    from hxtrain.solver.reporting.display_units import current, using
    from hxtrain.solver.reporting.files import check_output_path
    from hxtrain.solver.simulation.results import CAUTION

    if args.out:
        check_output_path(args.out, inputs, list(table_names))
    progress = _progress()
    try:
        result = compute(loaded, progress=progress)
    finally:
        if progress is not None:
            progress.close()
    with using(current().with_case(loaded.case)):
        written = write(tables(result), args, {**notes, "caution": CAUTION}, inputs)
        print(report(result))
    say_written(written)
    return 0


def monitor_command(args, write, say_written) -> int:
    from hxtrain.network.monitoring_file import load_monitoring
    from hxtrain.solver.monitoring.monitor import monitor
    from hxtrain.solver.reporting.monitoring_text import monitoring_report, monitoring_tables

    m = load_monitoring(args.monitoring)
    inputs = {"monitoring file": m.file, "plant data": m.data_path, "case file": m.case.file}
    return _file_command(args, write, say_written, m, inputs, MONITOR_TABLES, monitor, monitoring_report,
                         monitoring_tables, {"monitoring_file": m.file, "title": m.title})


def schedule_command(args, write, say_written) -> int:
    from hxtrain.network.schedule_file import load_schedule
    from hxtrain.solver.reporting.schedule_text import schedule_report, schedule_tables
    from hxtrain.solver.scheduling.plan_cleanings import plan_cleanings

    s = load_schedule(args.schedule)
    inputs = {"schedule file": s.file, "case file": s.case.file, "monitoring file": s.monitoring_file}
    return _file_command(args, write, say_written, s, inputs, SCHEDULE_TABLES, plan_cleanings, schedule_report,
                         schedule_tables, {"schedule_file": s.file, "title": s.title})
