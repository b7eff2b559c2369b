"""Helpers shared by the command-line tests."""

import os
import sys
from pathlib import Path


def hxtrain_command() -> list[str]:
    """The installed console script next to this interpreter, else ``python -m`` on the CLI module."""
    bindir = Path(sys.executable).parent
    for name in ("hxtrain", "hxtrain.exe"):
        script = bindir / name
        if script.is_file() and os.access(script, os.X_OK):
            return [str(script)]
    return [sys.executable, "-m", "hxtrain.solver.cli.main"]


def run_in_process(capsys, *args) -> tuple[int, str, str]:
    """``hxtrain ARGS`` in this process: (exit code, stdout, stderr); argparse's usage errors,
    --help and --version give their SystemExit code."""
    from hxtrain.solver.cli.main import main

    capsys.readouterr()
    try:
        code = main([str(a) for a in args])
    except SystemExit as exc:
        code = exc.code
    captured = capsys.readouterr()
    return code, captured.out, captured.err


CONSOLE_WIDTH = 120
"""The width a console report keeps to (``console_tables.WIDTH``, not imported here so that the
helpers load without the package)."""
WHOLE_LINES = ("!!", "case file: ", "monitoring file: ", "plant data file: ", "schedule file: ", "wrote ")
"""Lines printed whole: a file's path, to be copied (an installed demo's path is as long as the
place it is installed in), and a boxed limit's line."""


def fits_the_width(text: str, width: int = CONSOLE_WIDTH) -> bool:
    """Every line of a console report within ``width`` but those in :data:`WHOLE_LINES`."""
    return all(len(line) <= width for line in text.splitlines() if not line.startswith(WHOLE_LINES))
