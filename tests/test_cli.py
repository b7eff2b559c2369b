"""The ``hxtrain`` command: demos, output files, exit codes, help, the limit banner, atomic writes.

Exit codes (solver/cli.py): 0 done, 2 bad input, 3 not converged, 1 internal error. Most tests call
``hxtrain.solver.cli.main.main`` in-process; the default demo run and one failure go through the real
console script in a subprocess.
"""

from __future__ import annotations

import json
import os
import re
import subprocess
import sys
from pathlib import Path

import pandas as pd
import pytest
from cli_helpers import hxtrain_command, run_in_process

from hxtrain.network import CaseError

from hxtrain.solver.reporting import files as output_module
from hxtrain.solver.demos import DEMO_CASES, demo_case_path

CRUDE_TAGS = [f"E-{n}" for n in range(101, 113)]
CAUTION = "Screening estimates"
BANNER = re.compile(r"LIMITS? VIOLATED")
CSV_TABLES = ("streams", "findings", "tears", "summary")


# ----------------------------------------------------------------------------- helpers




def run_subprocess(*args, cwd=None, timeout=180) -> subprocess.CompletedProcess:
    env = {**os.environ, "PYTHONIOENCODING": "utf-8"}
    return subprocess.run([*hxtrain_command(), *map(str, args)], capture_output=True, text=True,
                          encoding="utf-8", errors="replace", timeout=timeout, env=env, cwd=cwd)


run_inprocess = run_in_process


def snapshot(folder: Path) -> dict[str, bytes]:
    return {str(p.relative_to(folder)): p.read_bytes() for p in sorted(folder.rglob("*")) if p.is_file()}


@pytest.fixture(scope="module")
def default_run(tmp_path_factory):
    """``hxtrain run`` with no case, through the console script, from an empty folder."""
    folder = tmp_path_factory.mktemp("default_run")
    result = run_subprocess("run", cwd=folder)
    return result, folder


def blocks(text: str) -> list[str]:
    """The output split at blank lines, empty blocks dropped."""
    return [b for b in re.split(r"\n\s*\n", text.strip()) if b.strip()]


# ----------------------------------------------------------------------------- the default demo


def test_run_without_case_runs_the_crude_demo(default_run):
    result, folder = default_run
    assert result.returncode == 0, result.stderr
    assert "Traceback" not in result.stderr
    out = result.stdout
    for tag in CRUDE_TAGS:
        assert re.search(rf"^{re.escape(tag)}\s", out, re.MULTILINE), f"{tag} is not a row of the exchanger table"
    assert "Exchangers" in out
    assert CAUTION in out and "qualified" in out
    assert "crude_preheat.yaml" in out
    assert list(folder.iterdir()) == [], "a run without --out wrote files"


def test_exchanger_table_lists_the_twelve_exchangers_in_order(default_run):
    out = default_run[0].stdout
    table = next(b for b in blocks(out) if b.startswith("Exchangers"))  # the first exchanger table
    rows = re.findall(r"^(E-\d{3})\s", table, re.MULTILINE)
    assert rows == CRUDE_TAGS


def test_crude_demo_banner_for_e112_is_the_last_block(default_run):
    """The demo rates E-112's crude side low on purpose; the banner must come after every
    table, as the last block of the output, and name E-112."""
    out = default_run[0].stdout
    matches = list(BANNER.finditer(out))
    assert len(matches) == 1, "expected exactly one limit banner"
    banner_at = matches[0].start()
    for heading in ("Exchangers", "Heaters and coolers", "Stream segments", "Tear streams", "Totals"):
        position = out.find(heading)
        assert 0 <= position < banner_at, f"the '{heading}' section is not before the banner"
    last = blocks(out)[-1]
    assert BANNER.search(last), f"the banner is not in the last block:\n{last}"
    assert "E-112" in last and "design_temperature" in last
    tail = out[out.rfind("\n", 0, banner_at) + 1:].strip().splitlines()
    assert all(line.startswith("!") for line in tail), "something follows the banner block:\n" + "\n".join(tail)


@pytest.mark.parametrize("demo", ["feed_effluent", "product_cooling"])
def test_other_demos_run(demo, capsys):
    code, out, err = run_inprocess(capsys, "run", "--demo", demo)
    assert code == 0, err
    assert "Traceback" not in err
    assert f"{demo}.yaml" in out
    assert CAUTION in out
    assert "converged" in out


def test_named_crude_demo_gives_the_default_output(default_run, capsys):
    code, out, err = run_inprocess(capsys, "run", "--demo", "crude_preheat")
    assert code == 0, err
    assert out.strip() == default_run[0].stdout.strip()


@pytest.mark.parametrize("demo", DEMO_CASES)
def test_check_accepts_each_demo(demo, capsys):
    code, out, err = run_inprocess(capsys, "check", demo_case_path(demo))
    assert code == 0, err
    assert "ok" in out
    assert err == ""


def test_unknown_demo_is_a_usage_error(capsys):
    code, out, err = run_inprocess(capsys, "run", "--demo", "no_such_demo")
    assert code == 2
    assert "no_such_demo" in err


def test_case_and_demo_together_is_bad_input(tmp_path, capsys):
    case = tmp_path / "case.yaml"
    case.write_bytes(demo_case_path("feed_effluent").read_bytes())
    out_file = tmp_path / "results.json"
    code, out, err = run_inprocess(capsys, "run", case, "--demo", "feed_effluent", "--out", out_file)
    assert code == 2
    assert "--demo" in err
    assert not out_file.exists()


# ----------------------------------------------------------------------------- output files


def test_out_json(tmp_path, capsys):
    target = tmp_path / "results.json"
    code, out, err = run_inprocess(capsys, "run", "--out", target)
    assert code == 0, err
    assert str(target) in out or target.name in out
    document = json.loads(target.read_text(encoding="utf-8"))
    for key in ("units", "streams", "findings", "summary"):
        assert key in document, key
    units = {row["unit"]: row for row in document["units"]}
    assert set(CRUDE_TAGS) <= set(units)
    assert units["E-101"]["duty_kw"] > 0
    assert isinstance(document["findings"], list)
    assert "limit_violations" in document["summary"]
    assert len(document["streams"]) >= 12
    assert document["converged"] is True
    assert CAUTION in document["caution"]
    assert sorted(p.name for p in tmp_path.iterdir()) == ["results.json"]


def test_out_csv_writes_one_readable_file_per_table(tmp_path, capsys):
    target = tmp_path / "results.csv"
    code, out, err = run_inprocess(capsys, "run", "--out", target)
    assert code == 0, err
    expected = ["results.csv"] + [f"results_{name}.csv" for name in CSV_TABLES] + [".results.csv.sha256"]
    assert sorted(p.name for p in tmp_path.iterdir()) == sorted(expected)
    units = pd.read_csv(target, index_col=0)
    assert set(CRUDE_TAGS) <= set(units.index)
    assert "duty_kw" in units.columns
    streams = pd.read_csv(tmp_path / "results_streams.csv")
    assert {"segment", "flow_kg_s", "temperature_c"} <= set(streams.columns)
    findings = pd.read_csv(tmp_path / "results_findings.csv")
    assert {"unit", "severity", "message"} <= set(findings.columns)
    summary = pd.read_csv(tmp_path / "results_summary.csv", index_col=0)
    assert "heat_recovered_kw" in summary.index
    tears = pd.read_csv(tmp_path / "results_tears.csv")
    assert len(tears) >= 1


def test_out_xlsx(tmp_path, capsys):
    target = tmp_path / "results.xlsx"
    code, out, err = run_inprocess(capsys, "run", "--demo", "product_cooling", "--out", target)
    assert code == 0, err
    sheets = pd.read_excel(target, sheet_name=None, index_col=0)
    for name in ("units", "streams", "findings", "summary"):
        assert name in sheets, sheets.keys()
    assert {"E-301", "A-302", "E-303", "E-304"} <= set(sheets["units"].index)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["results.xlsx"]


def test_out_overwrites_an_existing_file(tmp_path, capsys):
    target = tmp_path / "results.json"
    target.write_text("old")
    code, out, err = run_inprocess(capsys, "run", "--demo", "feed_effluent", "--out", target)
    assert code == 0, err
    assert json.loads(target.read_text())["units"]
    assert sorted(p.name for p in tmp_path.iterdir()) == ["results.json"]


@pytest.mark.parametrize("name", ["results.txt", "results", "results.json.bak", "results.xls"])
def test_unknown_output_extension_is_bad_input(name, tmp_path, capsys):
    code, out, err = run_inprocess(capsys, "run", "--out", tmp_path / name)
    assert code == 2
    assert "Traceback" not in err
    assert name in err and ".json" in err
    assert out == "", "the case was simulated before the output path was checked"
    assert list(tmp_path.iterdir()) == []


def test_missing_output_folder_is_bad_input(tmp_path, capsys):
    target = tmp_path / "no_such_folder" / "results.json"
    code, out, err = run_inprocess(capsys, "run", "--out", target)
    assert code == 2
    assert "folder" in err and "results.json" in err
    assert out == ""
    assert list(tmp_path.iterdir()) == []


def test_output_path_that_is_a_directory_is_bad_input(tmp_path, capsys):
    folder = tmp_path / "results.json"
    folder.mkdir()
    code, out, err = run_inprocess(capsys, "run", "--out", folder)
    assert code == 2
    assert "directory" in err
    assert list(folder.iterdir()) == []


# ----------------------------------------------------------------------------- not converged


@pytest.fixture()
def unconverging_case(tmp_path):
    """The crude demo allowed a single tear iteration: its recycle block cannot converge."""
    text = demo_case_path("crude_preheat").read_text(encoding="utf-8")
    assert "\nsettings:\n" in text
    text = text.replace("\nsettings:\n", "\nsettings:\n  max_iterations: 1\n", 1)
    case = tmp_path / "one_iteration.yaml"
    case.write_text(text, encoding="utf-8")
    return case


def test_not_converged_is_exit_3_naming_tears_and_residuals(unconverging_case, tmp_path, capsys):
    target = tmp_path / "results.json"
    target.write_text('{"previous": true}')
    before = snapshot(tmp_path)
    code, out, err = run_inprocess(capsys, "run", unconverging_case, "--out", target)
    assert code == 3, err
    assert err.startswith(f"not converged: {unconverging_case}: ")  # the file, as bad input names it
    assert "Traceback" not in err
    # the history ends at the last residual, the largest of those listed by tear (it had stopped a step short)
    history = err.split("Residual history (K): ")[1].split(". ")[0].split(", ")
    last = max(float(v) for v in re.findall(r"\S+ -> \S+: ([-+0-9.e]+) K", err))
    assert float(history[-1]) == pytest.approx(last, rel=1e-2)
    assert "tear stream" in err and "residual" in err
    # each tear stream named with its last residual: "E-110.cold -> E-111.cold: 15.6 K"
    assert re.search(r"\S+ -> \S+: [-+0-9.e]+ K", err), err
    assert out == "", "results printed for an unconverged run"
    assert snapshot(tmp_path) == before, "the output file was written or changed"


def test_not_converged_case_still_passes_check(unconverging_case, capsys):
    code, out, err = run_inprocess(capsys, "check", unconverging_case)
    assert code == 0, err


def test_not_converged_through_the_console_script(unconverging_case, tmp_path):
    result = run_subprocess("run", unconverging_case, "--out", tmp_path / "results.csv")
    assert result.returncode == 3, result.stderr
    assert "Traceback" not in result.stderr
    assert "tear stream" in result.stderr
    assert len(result.stderr.strip().splitlines()) <= 6
    assert sorted(p.name for p in tmp_path.iterdir()) == ["one_iteration.yaml"]


# ----------------------------------------------------------------------------- help and usage


def test_top_level_help(capsys):
    code, out, err = run_inprocess(capsys, "--help")
    assert code == 0
    assert "run" in out and "check" in out
    assert "exit codes" in out


def test_run_help_mentions_its_options(capsys):
    code, out, err = run_inprocess(capsys, "run", "--help")
    assert code == 0
    for option in ("CASE", "--demo", "--out", ".csv", ".xlsx", ".json", "--debug"):
        assert option in out, option
    for demo in DEMO_CASES:
        assert demo in out


def test_check_help_mentions_its_options(capsys):
    code, out, err = run_inprocess(capsys, "check", "--help")
    assert code == 0
    assert "CASE" in out and "--debug" in out
    assert "--out" not in out


def test_help_through_the_console_script():
    result = run_subprocess("run", "--help")
    assert result.returncode == 0
    assert "--out" in result.stdout


@pytest.mark.parametrize("args", [[], ["simulate"], ["check"], ["run", "--out"], ["run", "--no-such-option"]],
                         ids=["no command", "unknown command", "check without case", "out without path",
                              "unknown option"])
def test_usage_errors_are_exit_2(args, capsys):
    code, out, err = run_inprocess(capsys, *args)
    assert code == 2
    assert "usage" in err
    assert "Traceback" not in err


def test_check_loads_no_tables_plots_or_unit_registry():
    """Start-up: `hxtrain check` needs neither pandas, matplotlib, pint (the demo's units are all
    common ones), networkx nor scipy (a small network's flows are solved dense). A fresh
    interpreter, so nothing another test loaded counts."""
    probe = ("import sys\nfrom hxtrain.solver.cli.main import main\n"
             f"code = main(['check', {str(demo_case_path(DEMO_CASES[0]))!r}])\n"
             "print(code, sorted(m for m in ('pandas', 'matplotlib', 'pint', 'networkx', 'scipy') if m in sys.modules))")
    result = subprocess.run([sys.executable, "-c", probe], capture_output=True, text=True, timeout=120)
    assert result.returncode == 0, result.stderr
    assert result.stdout.splitlines()[-1] == "0 []"


def test_a_run_in_si_units_loads_no_unit_registry():
    """Start-up: a report in the stored units converts nothing, so `hxtrain run` on the demo (whose
    units are all common ones) loads no pint (~0.5 s)."""
    probe = ("import contextlib, io, sys\nfrom hxtrain.solver.cli.main import main\n"
             "with contextlib.redirect_stdout(io.StringIO()):\n"
             f"    code = main(['run', {str(demo_case_path(DEMO_CASES[0]))!r}])\n"
             "print(code, 'pint' in sys.modules)")
    result = subprocess.run([sys.executable, "-c", probe], capture_output=True, text=True, timeout=120)
    assert result.returncode == 0, result.stderr
    assert result.stdout.splitlines()[-1] == "0 False"


def test_version(capsys):
    code, out, err = run_inprocess(capsys, "--version")
    assert code == 0
    assert out.startswith("hxtrain ")


def test_benchmark_reports_both_forms_of_the_crude_train(capsys):
    """A small run (not a timing): both forms, three rates each, agreement between the paths."""
    code, out, err = run_inprocess(capsys, "benchmark", "--scenarios", 8, "--loop", 1, "--workers", 2)
    assert code == 0, err
    assert max(len(line) for line in out.splitlines()) <= 120  # lines wrapped to the console width
    out = " ".join(out.split())
    assert "as shipped: cp(T), film U" in out and "fixed properties: constant cp, fixed UA" in out
    assert out.count("scenario-solves/s") == 6 and out.count("all converged: True") == 2
    assert out.count("batch, 1 process of 2 allowed:") == 2  # 8 scenarios never pay for a second process
    differences = [float(v) for v in re.findall(r"largest temperature difference from the batch: (\S+) K", out)]
    assert len(differences) == 2 and max(differences) <= 1e-9


@pytest.mark.parametrize("option", [("--scenarios", 1), ("--loop", 0), ("--workers", 0)])
def test_benchmark_bad_options_are_exit_2(option, capsys):
    code, out, err = run_inprocess(capsys, "benchmark", *option)
    assert code == 2 and "Traceback" not in err


# ----------------------------------------------------------------------------- atomic writes


class _FailingHandle:
    """A temporary file whose writes fail after ``limit`` bytes (a full disk, a killed process)."""

    def __init__(self, handle, limit):
        self.handle, self.limit, self.written = handle, limit, 0

    def write(self, data):
        if self.written + len(data) > self.limit:
            self.handle.write(data[:max(0, self.limit - self.written)])
            raise OSError(28, "No space left on device")
        self.written += len(data)
        return self.handle.write(data)

    def __getattr__(self, name):
        return getattr(self.handle, name)

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        return self.handle.__exit__(*exc)


def fail_writes_after(monkeypatch, limit):
    """Make every temporary output file fail once ``limit`` bytes are written to it."""
    real = os.fdopen
    monkeypatch.setattr(output_module.os, "fdopen", lambda *a, **k: _FailingHandle(real(*a, **k), limit))


@pytest.mark.parametrize("suffix", [".json", ".xlsx"])
def test_failure_while_writing_leaves_the_old_file(suffix, tmp_path, capsys, monkeypatch):
    target = tmp_path / f"results{suffix}"
    target.write_bytes(b"old results\n")
    before = snapshot(tmp_path)
    fail_writes_after(monkeypatch, 100)
    code, out, err = run_inprocess(capsys, "run", "--demo", "feed_effluent", "--out", target)
    assert code == 2, err
    assert "Traceback" not in err and "cannot be written" in err
    assert snapshot(tmp_path) == before, "the old output changed or a temporary file was left behind"


def test_failure_in_the_third_csv_leaves_the_whole_old_set(tmp_path, capsys, monkeypatch):
    """CSV output is five files; if the third cannot be written, none of the five may change."""
    target = tmp_path / "results.csv"
    for name in ["results.csv"] + [f"results_{t}.csv" for t in CSV_TABLES]:
        (tmp_path / name).write_text(f"old {name}\n")
    before = snapshot(tmp_path)
    real = pd.DataFrame.to_csv
    calls = {"n": 0}

    def to_csv(self, *args, **kwargs):
        calls["n"] += 1
        if calls["n"] == 3:
            raise OSError(28, "No space left on device")
        return real(self, *args, **kwargs)

    monkeypatch.setattr(pd.DataFrame, "to_csv", to_csv)
    code, out, err = run_inprocess(capsys, "run", "--demo", "feed_effluent", "--out", target)
    assert calls["n"] == 3
    assert code != 0
    assert snapshot(tmp_path) == before


def test_write_results_failure_cleans_up_directly(tmp_path, monkeypatch):
    """Same through the library call: the failure surfaces as bad output (CaseError, exit 2 in
    the CLI) and nothing is left behind."""
    from hxtrain.solver.simulation.results import simulate

    result = simulate(demo_case_path("feed_effluent"))
    target = tmp_path / "results.json"
    target.write_bytes(b"keep me")
    fail_writes_after(monkeypatch, 100)
    with pytest.raises(CaseError, match="cannot be written"):
        output_module.write_results(result, target)
    assert snapshot(tmp_path) == {"results.json": b"keep me"}


def test_unwritable_output_folder_is_bad_input(tmp_path, capsys, monkeypatch):
    """An output folder the user may not write to is a bad output path (exit 2, naming the file),
    not "a fault in hxtrain" (exit 1). Permission is simulated: tests may run as root."""
    target = tmp_path / "results.json"

    def refuse(*args, **kwargs):
        raise PermissionError(13, "Permission denied", str(tmp_path))

    monkeypatch.setattr(output_module.tempfile, "mkstemp", refuse)
    code, out, err = run_inprocess(capsys, "run", "--demo", "feed_effluent", "--out", target)
    assert list(tmp_path.iterdir()) == []
    assert "fault in hxtrain" not in err, err
    assert code == 2, err
    assert "results.json" in err
