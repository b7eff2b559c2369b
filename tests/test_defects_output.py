"""Regression tests for the "files and messages" defects of the output and the command line.

Each test names the defect it guards against: file modes, stale CSV companions, XLSX sheet
names, the summary and the "about" sheet, an output path that is an input, a closed standard
output, Ctrl-C and SIGTERM at start-up and while writing, a failed workbook write, and numerical
RuntimeWarnings on stderr.
"""

from __future__ import annotations

import gc
import hashlib
import json
import os
import signal
import subprocess
import sys
import textwrap
import time
from pathlib import Path

import openpyxl
import pandas as pd
import pytest
from cli_helpers import hxtrain_command, run_in_process

from hxtrain.network.reading import read_document
from hxtrain.solver.reporting import files as output_module
from hxtrain.solver.demos import DEMO_CASES, demo_case_path

COOLING = demo_case_path("product_cooling")
CRUDE_STUDY = demo_case_path("crude_preheat").with_name("crude_preheat_study.yaml")
ENV = {**os.environ, "PYTHONIOENCODING": "utf-8"}


run_cli = run_in_process


def snapshot(folder: Path) -> dict[str, bytes]:
    return {p.name: p.read_bytes() for p in sorted(folder.iterdir()) if p.is_file()}


def temporaries(folder: Path) -> list[str]:
    return [p.name for p in folder.iterdir() if p.name.endswith(".tmp")]


def write_study(folder: Path, sweeps: dict, name="study.yaml") -> Path:
    """A study of the product cooling demo with the given sweeps (name -> cooling water flows)."""
    lines = [f"base: {COOLING}", "sweeps:"]
    for sweep, flows in sweeps.items():
        lines += [f"  {sweep}:", "    grid:", f"      streams.cooling_water.flow: {list(flows)}"]
    path = folder / name
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


@pytest.fixture()
def umask():
    """Set the process umask for one test (restored afterwards)."""
    previous = os.umask(0o022)
    os.umask(previous)
    yield lambda mask: os.umask(mask)
    os.umask(previous)


def mode(path: Path) -> int:
    return path.stat().st_mode & 0o777


# ----------------------------------------------------------------------------- file modes


@pytest.mark.parametrize("mask", [0o022, 0o077])
@pytest.mark.parametrize("suffix", [".csv", ".xlsx", ".json"])
def test_new_output_files_get_the_mode_the_umask_gives(mask, suffix, tmp_path, capsys, umask):
    """Defect: every output was written 0600 whatever the umask (mkstemp's mode)."""
    umask(mask)
    code, out, err = run_cli(capsys, "run", "--demo", "feed_effluent", "--out", tmp_path / f"r{suffix}")
    assert code == 0, err
    files = list(tmp_path.iterdir())
    assert files
    assert {p.name: mode(p) for p in files} == {p.name: 0o666 & ~mask for p in files}


@pytest.mark.parametrize("suffix", [".csv", ".json"])
def test_a_replaced_output_keeps_its_mode(suffix, tmp_path, capsys, umask):
    """Defect: a 0644 file was replaced by a 0600 one."""
    umask(0o077)
    target = tmp_path / f"r{suffix}"
    target.write_text("old")
    target.chmod(0o644)
    companion = tmp_path / "r_streams.csv"
    if suffix == ".csv":
        companion.write_text("old")
        companion.chmod(0o640)
    code, out, err = run_cli(capsys, "run", "--demo", "feed_effluent", "--out", target)
    assert code == 0, err
    assert mode(target) == 0o644
    if suffix == ".csv":
        assert mode(companion) == 0o640
        assert mode(tmp_path / "r_tears.csv") == 0o600  # new files: 0666 less the umask 077


# ----------------------------------------------------------------------------- stale CSV companions


def test_companions_of_an_earlier_set_are_removed_and_other_files_kept(tmp_path, capsys):
    """Defect: stale companion CSVs from an earlier run stayed beside the new ones."""
    target = tmp_path / "r.csv"
    code, out, err = run_cli(capsys, "sweep", write_study(tmp_path, {"low": [60, 70], "high": [90, 95]}),
                             "--out", target)
    assert code == 0, err
    assert (tmp_path / "r_high.csv").is_file()
    (tmp_path / "r_notes.csv").write_text("the user's own file\n")
    code, out, err = run_cli(capsys, "sweep", write_study(tmp_path, {"low": [60, 80]}, "one.yaml"), "--out", target)
    assert code == 0, err
    assert not (tmp_path / "r_high.csv").exists(), "a companion of the earlier set was left beside the new one"
    assert "removed" in out and "r_high.csv" in out
    assert (tmp_path / "r_notes.csv").read_text() == "the user's own file\n"
    assert list(pd.read_csv(target)["streams.cooling_water.flow_kg_s"]) == [60, 80]


@pytest.mark.parametrize("refused", ["r.csv", "r_streams.csv", "r_tears.csv"])
def test_a_file_of_a_set_that_may_not_be_replaced_leaves_the_earlier_set_whole(refused, tmp_path, capsys, monkeypatch):
    """Defect: where one file of a CSV set could not be replaced (an immutable file), the files
    renamed before it were already new: a mixed set on disk, and the message named the set's
    first file. Now every file there before is as it was, no new file is left, and the message
    names the file that failed."""
    target = tmp_path / "r.csv"
    assert run_cli(capsys, "run", "--out", target)[0] == 0
    before = snapshot(tmp_path)
    rename = os.replace

    def refusing(source, destination):
        if Path(destination).name == refused or Path(source).name == refused:
            raise PermissionError(1, "Operation not permitted", str(tmp_path / refused))
        return rename(source, destination)

    monkeypatch.setattr(output_module.os, "replace", refusing)
    code, out, err = run_cli(capsys, "run", "--units", "us", "--out", target)
    assert code == 2 and "Traceback" not in err
    assert str(tmp_path / refused) in err and "Operation not permitted" in err and "as they were" in err
    assert snapshot(tmp_path) == before and not temporaries(tmp_path)


def test_a_companion_changed_since_hxtrain_wrote_it_is_kept_and_named(tmp_path, capsys):
    target = tmp_path / "r.csv"
    assert run_cli(capsys, "sweep", write_study(tmp_path, {"low": [60], "high": [90]}), "--out", target)[0] == 0
    (tmp_path / "r_high.csv").write_text("edited by hand\n")
    code, out, err = run_cli(capsys, "sweep", write_study(tmp_path, {"low": [60]}, "one.yaml"), "--out", target)
    assert code == 0, err
    assert (tmp_path / "r_high.csv").read_text() == "edited by hand\n"
    assert "r_high.csv" in out and "not part of this one" in out


def test_a_listing_never_removes_a_file_hxtrain_did_not_write(tmp_path):
    """A forged or stale listing: only companions of the path whose content matches are removed."""
    folder = tmp_path / "out"
    folder.mkdir()
    (folder / "other.csv").write_text("x\n")
    (tmp_path / "outside.csv").write_text("x\n")
    (folder / "r_mine.csv").write_text("y\n")
    digest = hashlib.sha256(b"x\n").hexdigest()  # that of other.csv and outside.csv, not of r_mine.csv
    (folder / ".r.csv.sha256").write_text(f"{digest}  other.csv\n{digest}  ../outside.csv\n{digest}  r_mine.csv\n")
    written = output_module.write_tables({"t": pd.DataFrame({"a": [1]})}, folder / "r.csv", {})
    assert (folder / "other.csv").exists() and (tmp_path / "outside.csv").exists()
    assert (folder / "r_mine.csv").read_text() == "y\n"
    assert written.removed == [] and written.kept == [folder / "r_mine.csv"]


# ----------------------------------------------------------------------------- XLSX sheet names


def test_sweeps_sharing_their_first_31_characters_keep_two_sheets(tmp_path, capsys):
    """Defect: two sweep names sharing their first 31 characters collapsed into one sheet."""
    first, second = "cooling_water_flow_against_rundown_low", "cooling_water_flow_against_rundown_high"
    assert first[:31] == second[:31]
    target = tmp_path / "s.xlsx"
    code, out, err = run_cli(capsys, "sweep", write_study(tmp_path, {first: [60, 70], second: [90, 95, 100]}),
                             "--out", target)
    assert code == 0, err
    sheets = pd.read_excel(target, sheet_name=None, index_col=0)
    data = [name for name in sheets if name not in ("about", "limits")]
    assert len(data) == 2 and all(len(name) <= 31 for name in data)
    flows = sorted(list(sheets[name]["streams.cooling_water.flow_kg_s"]) for name in data)
    assert flows == [[60, 70], [90, 95, 100]]
    about = dict(sheets["about"].reset_index().values)
    assert any(first in str(value) for value in about.values()) and any(second in str(v) for v in about.values())


def test_sheet_names_follow_excels_rules(tmp_path):
    names = ["a/b", "A:B", "about", "x" * 40, "x" * 40 + "y", "[what?]", "History"]
    tables = {name: pd.DataFrame({"which": [k]}) for k, name in enumerate(names)}
    output_module.write_tables(tables, tmp_path / "t.xlsx", {"title": "sheet names"})
    book = openpyxl.load_workbook(tmp_path / "t.xlsx")
    sheets = book.sheetnames
    assert sheets[0] == "about" and len(sheets) == len(names) + 1
    assert len({s.casefold() for s in sheets}) == len(sheets)
    for sheet in sheets:
        assert len(sheet) <= 31 and not set(sheet) & set("[]:*?/\\")
    assert [book[s]["B2"].value for s in sheets[1:]] == list(range(len(names)))


# ----------------------------------------------------------------------------- summary and about sheet


def read_summary(target: Path) -> dict:
    suffix = target.suffix
    if suffix == ".json":
        document = json.loads(target.read_text(encoding="utf-8"))
        assert not set(document["summary"]) & set(document["balance"]), "a quantity appears twice"
        return {**document["summary"], **document["balance"]}
    if suffix == ".csv":
        lines = (target.with_name("r_summary.csv")).read_text(encoding="utf-8").splitlines()[1:]
        pairs = [line.split(",", 1) for line in lines]
    else:
        sheet = openpyxl.load_workbook(target)["summary"]
        pairs = [(row[0], row[1]) for row in sheet.iter_rows(min_row=2, values_only=True)]
    names = [name for name, _ in pairs]
    assert len(names) == len(set(names)), f"a quantity appears twice: {names}"
    return dict(pairs)


@pytest.mark.parametrize("suffix", [".csv", ".xlsx", ".json"])
def test_summary_lists_each_quantity_once_and_counts_as_whole_numbers(suffix, tmp_path, capsys):
    """Defects: relative_imbalance twice in the summary; counts written as floats (1.0)."""
    target = tmp_path / f"r{suffix}"
    assert run_cli(capsys, "run", "--out", target)[0] == 0
    summary = read_summary(target)
    assert "relative_imbalance" in summary
    for count in ("limit_violations", "warnings", "iterations"):
        value = summary[count]
        if suffix == ".csv":
            assert value.isdigit(), f"{count} written as {value!r}"
        else:
            assert type(value) is int, f"{count} written as {value!r}"
    assert int(summary["limit_violations"]) == 1  # the demo's E-112 design temperature


def test_sweep_counts_are_whole_numbers_in_files_and_on_screen(tmp_path, capsys):
    study = write_study(tmp_path, {"water": [60, 90]})
    code, out, err = run_cli(capsys, "sweep", study, "--out", tmp_path / "s.csv")
    assert code == 0, err
    lines = out.splitlines()
    header = next(line for line in lines if "limit violations" in line)
    rows = lines[lines.index(header) + 2:lines.index(header) + 4]  # the block's rows, under the units line
    assert len(rows) == 2
    for row in rows:
        for count in ("limit violations", "warnings"):  # columns are right-aligned under their names
            cell = row[:header.index(count) + len(count)].split()[-1]
            assert cell.isdigit(), f"{count} printed as {cell!r}"
    text = (tmp_path / "s.csv").read_text().splitlines()
    columns = text[0].split(",")
    for line in text[1:]:
        cells = line.split(",")
        assert cells[columns.index("limit_violations")].isdigit() and cells[columns.index("warnings")].isdigit()
    assert run_cli(capsys, "sweep", study, "--out", tmp_path / "s.json")[0] == 0
    rows = json.loads((tmp_path / "s.json").read_text())["water"]
    assert all(type(row["limit_violations"]) is int and type(row["warnings"]) is int for row in rows)


def test_the_about_sheet_is_rows_of_words_and_values(tmp_path, capsys):
    """Defect: the about sheet held Python dict text."""
    target = tmp_path / "r.xlsx"
    assert run_cli(capsys, "run", "--out", target)[0] == 0
    sheet = openpyxl.load_workbook(target)["about"]
    rows = [row for row in sheet.iter_rows(values_only=True)]
    assert rows[0] == ("item", "value")
    about = dict(rows[1:])
    for item in ("title", "case file", "date written", "hxtrain version", "caution", "converged", "message",
                 "heat recovered (kW)", "limit violations", "relative imbalance"):
        assert item in about, item
    assert about["converged"] == "yes" and about["limit violations"] == 1
    assert isinstance(about["heat recovered (kW)"], float)
    for value in about.values():
        assert not any(mark in str(value) for mark in ("{", "}", "':")), f"Python text in the about sheet: {value}"


# ----------------------------------------------------------------------------- output that is an input


def json_copy(source: Path, target: Path) -> Path:
    """The case or study as JSON (valid YAML), so that it has an output extension."""
    target.write_text(json.dumps(read_document(source).data), encoding="utf-8")
    return target


def test_output_that_is_the_case_file_is_refused(tmp_path, capsys):
    """Defect: `hxtrain run plant.json --out plant.json` replaced the case with its results."""
    case = json_copy(COOLING, tmp_path / "plant.json")
    (tmp_path / "link.json").symlink_to(case)
    os.link(case, tmp_path / "hard.json")
    before = snapshot(tmp_path)
    for out_name in ("plant.json", "link.json", "hard.json", "./plant.json"):
        code, out, err = run_cli(capsys, "run", case, "--out", tmp_path / out_name)
        assert code == 2, (out_name, err)
        assert out_name.lstrip("./") in err and "input" in err and out == ""
    assert run_cli(capsys, "cleaning", case, "--out", case)[0] == 2
    assert snapshot(tmp_path) == before
    assert run_cli(capsys, "run", case, "--out", tmp_path / "results.json")[0] == 0


def test_output_that_is_a_study_or_its_base_case_is_refused(tmp_path, capsys):
    base = json_copy(COOLING, tmp_path / "base.json")
    study = tmp_path / "study.json"
    study.write_text(json.dumps({"base": "base.json", "sweeps": {"w": {"grid": {"streams.cooling_water.flow": [60]}}},
                                 "variants": {"v": {"changes": [{"scale": "streams.cooling_water.flow", "by": 1.1}]}}}))
    before = snapshot(tmp_path)
    for command in ("sweep", "compare"):
        for target, role in ((study, "study file"), (base, "base case")):
            code, out, err = run_cli(capsys, command, study, "--out", target)
            assert code == 2, err
            assert target.name in err and role in err
    assert snapshot(tmp_path) == before


def test_a_csv_companion_that_is_an_input_is_refused(tmp_path, capsys):
    case = json_copy(COOLING, tmp_path / "r_streams.csv")
    before = snapshot(tmp_path)
    code, out, err = run_cli(capsys, "run", case, "--out", tmp_path / "r.csv")
    assert code == 2 and "r_streams.csv" in err and "companion" in err
    assert snapshot(tmp_path) == before


# ----------------------------------------------------------------------------- closed standard output


def test_a_closed_stdout_is_quiet_and_the_file_is_complete(tmp_path):
    """Defect: `... --out x.json | head` ended in an internal error and x.json was never written."""
    target = tmp_path / "x.json"
    process = subprocess.Popen([*hxtrain_command(), "run", "--out", str(target)], stdout=subprocess.PIPE,
                               stderr=subprocess.PIPE, env=ENV)
    process.stdout.close()  # the reader goes away before anything is printed
    err = process.stderr.read().decode()
    process.wait(timeout=120)
    assert process.returncode == 141, err
    assert err == ""
    assert len(json.loads(target.read_text(encoding="utf-8"))["units"]) > 12


def test_piped_into_head(tmp_path):
    target = tmp_path / "x.json"
    command = " ".join(f"'{part}'" for part in [*hxtrain_command(), "run", "--out", str(target)])
    result = subprocess.run(["bash", "-c", f"{command} | head -1; exit ${{PIPESTATUS[0]}}"], capture_output=True,
                            text=True, timeout=120, env=ENV)
    assert result.returncode in (0, 141), result.stderr
    assert result.stderr == ""
    assert result.stdout.startswith("hxtrain: ")
    assert json.loads(target.read_text(encoding="utf-8"))["converged"] is True


# ----------------------------------------------------------------------------- Ctrl-C and SIGTERM


def test_importing_the_command_loads_no_numerical_library():
    """Start-up light: Ctrl-C before main's try could only print a traceback while these load."""
    code = ("import sys, hxtrain.solver.cli.main\n"
            "heavy = sorted(m for m in ('numpy', 'pandas', 'scipy', 'networkx', 'pint', 'yaml') if m in sys.modules)\n"
            "print(heavy)\n"
            "from hxtrain.solver import simulate, demo_case_path\n"
            "print(simulate(demo_case_path('feed_effluent')).converged)\n")
    result = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=120, env=ENV)
    assert result.stdout.split("\n")[:2] == ["[]", "True"], result.stdout + result.stderr


def test_ctrl_c_at_start_up_prints_one_line():
    """Defect: Ctrl-C during start-up printed a KeyboardInterrupt traceback."""
    interrupted = 0
    for delay in (0.2, 0.35, 0.5, 0.7, 1.0):
        # the child starts with Ctrl-C's default action even where this test runs with SIGINT
        # ignored (a job started in the background by a shell without job control), which
        # hxtrain rightly leaves alone
        process = subprocess.Popen([*hxtrain_command(), "run"], stdout=subprocess.DEVNULL, stderr=subprocess.PIPE,
                                   env=ENV, preexec_fn=lambda: signal.signal(signal.SIGINT, signal.SIG_DFL))
        time.sleep(delay)
        process.send_signal(signal.SIGINT)
        err = process.communicate(timeout=120)[1].decode()
        assert "Traceback" not in err and "Exception ignored" not in err, f"after {delay} s:\n{err}"
        assert process.returncode in (130, -signal.SIGINT, 0), (delay, process.returncode, err)
        if process.returncode == 130:
            assert err == "interrupted\n"
            interrupted += 1
    assert interrupted, "no attempt was interrupted inside hxtrain"


HELPER = """
import os, signal, sys
from hxtrain.solver.reporting import files as output
from hxtrain.solver.cli.main import main

real = os.fdopen


class Handle:
    def __init__(self, handle):
        self.handle, self.written = handle, 0

    def write(self, data):
        self.written += len(data)
        if self.written > {limit}:
            {action}
        return self.handle.write(data)

    def __getattr__(self, name):
        return getattr(self.handle, name)

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        return self.handle.__exit__(*exc)


output.os.fdopen = lambda *a, **k: Handle(real(*a, **k))
sys.exit(main(sys.argv[1:]))
"""


def run_helper(tmp_path, action, *args, limit=2000):
    script = tmp_path / "helper.py"
    script.write_text(HELPER.format(limit=limit, action=action), encoding="utf-8")
    return subprocess.run([sys.executable, str(script), *map(str, args)], capture_output=True, text=True,
                          timeout=180, env=ENV, cwd=tmp_path)


@pytest.mark.parametrize("suffix", [".xlsx", ".csv"])
def test_sigterm_while_writing_leaves_no_temporary_file(suffix, tmp_path):
    """Defect: SIGTERM during a write left a hidden temporary file."""
    folder = tmp_path / "out"
    folder.mkdir()
    target = folder / f"x{suffix}"
    target.write_text("old results\n")
    # each CSV of the set is a file of its own, the smallest a few hundred bytes: stop early
    result = run_helper(tmp_path, "os.kill(os.getpid(), signal.SIGTERM)", "run", "--demo", "feed_effluent", "--out", target,
                        limit=200)
    assert result.returncode == 143, result.stderr
    assert result.stderr == "terminated (SIGTERM)\n"
    assert snapshot(folder) == {"x" + suffix: b"old results\n"}, "a temporary file was left or the old file changed"


def test_sigterm_at_any_moment_of_a_run_with_a_workbook(tmp_path):
    target = tmp_path / "x.xlsx"
    for delay in (0.3, 1.0, 1.8):
        process = subprocess.Popen([*hxtrain_command(), "run", "--out", str(target)], stdout=subprocess.DEVNULL,
                                   stderr=subprocess.PIPE, env=ENV)
        time.sleep(delay)
        process.send_signal(signal.SIGTERM)
        err = process.communicate(timeout=120)[1].decode()
        assert process.returncode in (143, 0, -signal.SIGTERM), (delay, err)
        assert "Traceback" not in err and "Exception ignored" not in err, err
        assert temporaries(tmp_path) == []


@pytest.mark.parametrize("failure,code,message", [
    ("raise OSError(28, 'No space left on device')", 2, "the output cannot be written (No space left on device)"),
    ("raise KeyboardInterrupt", 130, "interrupted"),
], ids=["full disk", "Ctrl-C"])
def test_a_failed_workbook_write_prints_one_line_and_keeps_the_old_file(failure, code, message, tmp_path):
    """Defect: a full disk or Ctrl-C while an .xlsx was written printed a stray "Exception ignored
    ... ZipFile" traceback."""
    folder = tmp_path / "out"
    folder.mkdir()
    target = folder / "x.xlsx"
    target.write_bytes(b"old workbook")
    result = run_helper(tmp_path, failure, "run", "--out", target)
    assert result.returncode == code, result.stderr
    assert len(result.stderr.strip().splitlines()) == 1 and message in result.stderr, result.stderr
    assert snapshot(folder) == {"x.xlsx": b"old workbook"}


def test_a_failed_workbook_write_leaves_no_unclosed_archive(tmp_path, capsys, monkeypatch):
    """The same in-process: nothing is left for the garbage collector to complain about."""
    unraisable = []
    monkeypatch.setattr(sys, "unraisablehook", unraisable.append)
    real = os.fdopen

    class Full:
        def __init__(self, handle):
            self.handle = handle

        def write(self, data):
            raise OSError(28, "No space left on device")

        def __getattr__(self, name):
            return getattr(self.handle, name)

        def __enter__(self):
            return self

        def __exit__(self, *exc):
            return self.handle.__exit__(*exc)

    monkeypatch.setattr(output_module.os, "fdopen", lambda *a, **k: Full(real(*a, **k)))
    code, out, err = run_cli(capsys, "run", "--demo", "feed_effluent", "--out", tmp_path / "x.xlsx")
    gc.collect()
    assert code == 2 and "cannot be written" in err
    assert unraisable == []
    assert list(tmp_path.iterdir()) == []


# ----------------------------------------------------------------------------- RuntimeWarnings


@pytest.mark.filterwarnings("error::RuntimeWarning")
@pytest.mark.parametrize("demo", DEMO_CASES)
def test_the_demos_raise_no_runtime_warning(demo):
    """Every demo, clean against fouled and the cleaning ranking, with RuntimeWarnings as errors."""
    from hxtrain.solver.studies.clean_vs_fouled import compare_clean_and_fouled
    from hxtrain.solver.simulation.results import simulate
    from hxtrain.solver.studies import cleaning_ranking

    assert simulate(demo_case_path(demo)).converged
    compare_clean_and_fouled(demo_case_path(demo))
    cleaning_ranking(demo_case_path(demo))


@pytest.mark.filterwarnings("error::RuntimeWarning")
def test_the_demo_study_raises_no_runtime_warning():
    from hxtrain.network.study import load_study
    from hxtrain.solver.studies import compare, run_sweep, solve_specification

    study = load_study(CRUDE_STUDY)
    compare(study)
    for spec in study.specifications:
        solve_specification(study, spec)
    for sweep in study.sweeps:
        run_sweep(study, sweep)


def test_a_runtime_warning_never_reaches_stderr(tmp_path):
    """Safety net: a RuntimeWarning raised anywhere in a command is not printed; Python's -W
    option still makes it visible (here: an error, exit 1) for finding its source."""
    script = tmp_path / "warn.py"
    script.write_text(textwrap.dedent("""
        import sys
        import numpy as np
        from hxtrain.solver.simulation import results
        from hxtrain.solver.cli.main import main

        real = results.simulate

        def simulate(*args, **kwargs):
            np.log(np.array([-1.0, 0.0]))
            return real(*args, **kwargs)

        results.simulate = simulate
        sys.exit(main(["run", "--demo", "feed_effluent"]))
        """), encoding="utf-8")
    quiet = subprocess.run([sys.executable, str(script)], capture_output=True, text=True, timeout=120, env=ENV)
    assert quiet.returncode == 0 and quiet.stderr == "", quiet.stderr
    loud = subprocess.run([sys.executable, "-W", "error::RuntimeWarning", str(script)], capture_output=True,
                          text=True, timeout=120, env=ENV)
    assert loud.returncode == 1 and "RuntimeWarning" in loud.stderr


# ----------------------------------------------------------------------------- help


def test_help_names_every_exit_code(capsys):
    code, out, err = run_cli(capsys, "--help")
    assert code == 0
    for number in ("0", "1", "2", "3", "130", "141", "143"):
        assert f"{number} " in out.split("exit codes:")[1], number
