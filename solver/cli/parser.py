"""The ``hxtrain`` command line: its commands, options and help (:func:`build_parser`). Building
the parser loads argparse only: no numerical library and no part of the case model, so that
``--help`` and ``--version`` answer at once."""

from __future__ import annotations

import functools

from hxtrain.solver import package_version

DESCRIPTION = """\
Rate a network of heat exchangers, heaters, coolers, mixers and splitters described in a YAML
case file: every stream temperature, every duty, the furnace and utility loads, and every limit
violated. Results are screening estimates; mechanical limits, safety and operating decisions rest
with qualified engineers and the applicable codes and standards."""

EPILOG = """\
exit codes: 0 done, 2 bad input (message names the file and key path), 3 did not converge,
4 the Dask cluster failed during a study, 1 internal error, 130 interrupted (Ctrl-C),
143 stopped by SIGTERM, 141 standard output closed early (e.g. by "| head"; files given with
--out are written first and complete).
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
                "For every fouled exchanger or air cooler, simulate the case with it clean and rank them by the "
                "furnace duty saved.", ("case", "?", "case file (YAML); omit for the crude preheat demo"), out=True)
    bench = commands.add_parser("benchmark", help="measure scenario-solves per second, batch against one by one",
                                description="Solve many crude-flow scenarios of the crude preheat demo, as shipped "
                                            "and with fixed properties (constant cp, fixed UA), in one vectorized "
                                            "batch, in the same batch allowed several processes (it says how many "
                                            "it used), and a few one by one; print the rates and their ratios.")
    bench.add_argument("--scenarios", type=int, default=None, help="scenarios in the batch (default 20000)")
    bench.add_argument("--loop", type=int, default=None, help="single solves timed in the loop (default 5)")
    bench.add_argument("--workers", type=int, default=None,
                       help="processes the split batch may use (default: the machine's CPU count)")
    bench.add_argument("--plant-data", action="store_true",
                       help="instead: reconcile and back-calculate a year of hourly plant-data windows of the crude "
                            "demo, timed beside the batch solve of the same windows")
    bench.add_argument("--windows", type=int, default=None, help="windows for --plant-data (default 8760)")
    bench.add_argument("--sizes", nargs="?", const="10,100,1000,3000,10000", metavar="N,N,...",
                       help="instead: the size ladder, networks of these many units (default "
                            "10,100,1000,3000,10000) in four shapes, seconds and peak memory per stage and the "
                            "fitted exponent")
    bench.add_argument("--properties", choices=("varying", "fixed"), default=None,
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
