"""Bad input through the command line: every malformed case gives exit 2 and one short message
that names the file, the key path and (where YAML knows it) the line; nothing is written.

The corpus is tests/malformed/ with its MANIFEST.yaml (what each file breaks, the key path and
message fragment the error must name). Each file is tests/valid/small_train.yaml with exactly one
thing broken, or a YAML-level defect (empty, not UTF-8, alias bomb, several documents, ...).
Edge cases that cannot sensibly be committed (a directory, a missing file, a file over the size
limit, a special file, a huge value) are made in tmp_path here.

Most checks call ``hxtrain.solver.cli.main.main`` in-process (fast); a representative subset goes
through the installed console script in a subprocess to see real exit codes and stderr.
"""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
from pathlib import Path

import pytest
from cli_helpers import hxtrain_command, run_in_process
import yaml


HERE = Path(__file__).parent
MALFORMED = HERE / "malformed"
BASE_CASE = HERE / "valid" / "small_train.yaml"
MANIFEST = yaml.safe_load((MALFORMED / "MANIFEST.yaml").read_text(encoding="utf-8"))["cases"]
ENTRIES = {entry["file"]: entry for entry in MANIFEST}
OUTPUT_EXTENSIONS = (".json", ".csv", ".xlsx")
MAX_MESSAGE_LINES = 6
MAX_MESSAGE_CHARS = 1000


# ----------------------------------------------------------------------------- helpers




def run_subprocess(*args, timeout=120, **kwargs) -> subprocess.CompletedProcess:
    env = {**os.environ, "PYTHONIOENCODING": "utf-8", "NO_COLOR": "1"}
    return subprocess.run([*hxtrain_command(), *map(str, args)], capture_output=True, text=True,
                          encoding="utf-8", errors="replace", timeout=timeout, env=env, **kwargs)


run_inprocess = run_in_process


def snapshot(folder: Path) -> dict[str, bytes]:
    """Every file below ``folder`` (hidden and temporary files included) with its bytes."""
    return {str(p.relative_to(folder)): p.read_bytes() for p in sorted(folder.rglob("*")) if p.is_file()}


def file_state(path: Path):
    stat = path.stat()
    return path.read_bytes(), stat.st_mtime_ns


def assert_one_short_paragraph(err: str, file_name: str | None):
    """stderr is one short paragraph: no traceback, a few lines, no blank line, names the file."""
    text = err.strip()
    assert text, "nothing on stderr"
    assert "Traceback" not in text, text
    lines = text.splitlines()
    assert len(lines) <= MAX_MESSAGE_LINES, f"{len(lines)} lines on stderr:\n{text[:2000]}"
    assert all(line.strip() for line in lines), f"more than one paragraph:\n{text}"
    assert len(text) <= MAX_MESSAGE_CHARS, f"{len(text)} characters on stderr (starts {text[:300]!r})"
    if file_name is not None:
        assert file_name in text, f"message does not name the file {file_name!r}: {text}"


def assert_names_what_is_wrong(err: str, entry: dict):
    text = err.strip()
    assert text.startswith("error:"), text[:500]
    if entry.get("key"):
        assert entry["key"] in text, f"message does not name the key path {entry['key']!r}: {text[:500]}"
    assert entry["fragment"] in text, f"message lacks {entry['fragment']!r}: {text[:500]}"
    if entry.get("line") is not None:
        assert f"line {entry['line']}" in text, f"message does not name line {entry['line']}: {text[:500]}"


def check_passes(entry) -> bool:
    return entry.get("check", "error") == "passes"


# ----------------------------------------------------------------------------- the corpus itself


def test_manifest_lists_every_file_and_only_existing_files():
    on_disk = {p.name for p in MALFORMED.iterdir() if p.is_file() and p.name != "MANIFEST.yaml"}
    assert on_disk == set(ENTRIES), (sorted(on_disk - set(ENTRIES)), sorted(set(ENTRIES) - on_disk))
    assert len(MANIFEST) == len(ENTRIES), "a file is listed twice"
    assert len(MANIFEST) >= 55


@pytest.mark.parametrize("entry", MANIFEST, ids=[e["file"] for e in MANIFEST])
def test_manifest_entry_is_complete(entry):
    assert entry["wrong"] and isinstance(entry["wrong"], str)
    assert entry["fragment"] and isinstance(entry["fragment"], str)
    assert entry["key"] is None or isinstance(entry["key"], str)
    assert entry.get("check", "error") in ("error", "passes")
    if check_passes(entry):
        assert entry.get("notes"), "say why check may accept this file"


def test_base_case_is_valid(capsys):
    """Each malformed file breaks one thing of this case, so the case itself must pass."""
    code, out, err = run_inprocess(capsys, "check", BASE_CASE)
    assert code == 0, err
    code, out, err = run_inprocess(capsys, "run", BASE_CASE)
    assert code == 0, err
    assert "E-1 " in out and "E-2 " in out


# ----------------------------------------------------------------------------- every file, in-process


@pytest.mark.parametrize("entry", MANIFEST, ids=[e["file"] for e in MANIFEST])
def test_check_rejects_malformed_case(entry, capsys):
    case = MALFORMED / entry["file"]
    before = file_state(case)
    code, out, err = run_inprocess(capsys, "check", case)
    assert file_state(case) == before, "hxtrain check changed the case file"
    if check_passes(entry):
        assert code == 0, f"manifest says check accepts {entry['file']}: {err}"
        return
    assert code == 2, f"exit {code}, stderr: {err[:1000]}"
    assert out == "", f"check printed to stdout on bad input: {out[:500]}"
    assert_one_short_paragraph(err, entry["file"])
    assert_names_what_is_wrong(err, entry)


@pytest.mark.parametrize("index,entry", list(enumerate(MANIFEST)), ids=[e["file"] for e in MANIFEST])
def test_run_rejects_malformed_case_and_writes_nothing(index, entry, tmp_path, capsys):
    case = MALFORMED / entry["file"]
    before = file_state(case)
    out_file = tmp_path / f"results{OUTPUT_EXTENSIONS[index % len(OUTPUT_EXTENSIONS)]}"
    out_file.write_bytes(b"previous results: must survive a failed run\n")
    folder_before = snapshot(tmp_path)
    code, out, err = run_inprocess(capsys, "run", case, "--out", out_file)
    assert file_state(case) == before, "hxtrain run changed the case file"
    assert snapshot(tmp_path) == folder_before, "a failed run wrote, changed or left files in the output folder"
    assert code == 2, f"exit {code}, stderr: {err[:1000]}"
    assert out == "", f"run printed results although the case is bad: {out[:500]}"
    assert_one_short_paragraph(err, entry["file"])
    assert_names_what_is_wrong(err, entry)


def test_line_numbers_are_asserted_for_many_files():
    """The manifest carries a line for every error YAML can place; make sure that is most files."""
    with_line = [e for e in MANIFEST if e.get("line") is not None]
    assert len(with_line) >= 40


LATE_ERRORS = {
    # file: (key path, text on the line the message should name)
    "loop_without_way_out.yaml": ("heaters.H-1", "  H-1: {outlet_temperature: 250}"),
    "cooler_duty_past_absolute_zero.yaml": ("coolers.C-1", "  C-1: {duty: 60000}"),
    "no_streams.yaml": None,  # the key is absent from the file: no line to name
}


@pytest.mark.parametrize("name", [n for n, v in LATE_ERRORS.items() if v], ids=str)
def test_errors_found_after_reading_still_name_the_line(name, capsys):
    """Errors found on the network or the solution (a loop with no way out, a heater target on
    the wrong side) concern keys whose line YAML knows; the message should give it like all others."""
    key, text = LATE_ERRORS[name]
    lines = (MALFORMED / name).read_text(encoding="utf-8").splitlines()
    line = lines.index(text) + 1
    code, out, err = run_inprocess(capsys, "run", MALFORMED / name)
    assert code == 2
    assert key in err
    assert f"line {line}" in err, f"expected 'line {line}' in: {err.strip()}"


# ----------------------------------------------------------------------------- through the real console script

SUBPROCESS_SUBSET = [
    "duplicate_key.yaml",
    "billion_laughs.yaml",
    "not_utf8.yaml",
    "temperature_in_kg.yaml",
    "loop_without_way_out.yaml",
    "cooler_duty_past_absolute_zero.yaml",
    "deeply_nested.yaml",
]


@pytest.mark.parametrize("name", SUBPROCESS_SUBSET)
@pytest.mark.parametrize("command", ["check", "run"])
def test_console_script_exit_code_and_message(command, name, tmp_path):
    entry = ENTRIES[name]
    case = tmp_path / name  # a copy, so that a path with no spaces and a known folder is used
    shutil.copyfile(MALFORMED / name, case)
    before = file_state(case)
    args = [command, case]
    if command == "run":
        out_file = tmp_path / "results.json"
        out_file.write_text('{"previous": true}\n')
        args += ["--out", out_file]
    folder_before = snapshot(tmp_path)
    result = run_subprocess(*args)
    assert snapshot(tmp_path) == folder_before
    assert file_state(case) == before
    if command == "check" and check_passes(entry):
        assert result.returncode == 0, result.stderr
        return
    assert result.returncode == 2, f"exit {result.returncode}: {result.stderr[:1000]}"
    assert result.stdout == ""
    assert_one_short_paragraph(result.stderr, name)
    assert_names_what_is_wrong(result.stderr, entry)


# ----------------------------------------------------------------------------- edge cases made at test time


@pytest.mark.parametrize("command", ["check", "run"])
def test_directory_as_case(command, tmp_path, capsys):
    folder = tmp_path / "plant.yaml"
    folder.mkdir()
    before = snapshot(tmp_path)
    code, out, err = run_inprocess(capsys, command, folder)
    assert code == 2
    assert_one_short_paragraph(err, "plant.yaml")
    assert "directory" in err
    assert snapshot(tmp_path) == before


@pytest.mark.parametrize("command", ["check", "run"])
def test_missing_case_file(command, tmp_path, capsys):
    missing = tmp_path / "no_such_case.yaml"
    code, out, err = run_inprocess(capsys, command, missing)
    assert code == 2
    assert_one_short_paragraph(err, "no_such_case.yaml")
    assert "no such file" in err
    assert not missing.exists()
    assert list(tmp_path.iterdir()) == []


def test_missing_case_file_in_missing_folder(tmp_path, capsys):
    code, out, err = run_inprocess(capsys, "check", tmp_path / "absent" / "case.yaml")
    assert code == 2
    assert_one_short_paragraph(err, "case.yaml")


@pytest.mark.parametrize("command", ["check", "run"])
def test_oversized_case_file(command, tmp_path, capsys):
    """A valid case padded with comments past the 4 MiB limit is refused before it is parsed."""
    from hxtrain.network.reading import MAX_FILE_BYTES

    big = tmp_path / "huge_case.yaml"
    padding = ("# " + "x" * 97 + "\n") * (MAX_FILE_BYTES // 100 + 10)
    big.write_text(BASE_CASE.read_text(encoding="utf-8") + padding, encoding="utf-8")
    assert big.stat().st_size > MAX_FILE_BYTES
    before = file_state(big)
    code, out, err = run_inprocess(capsys, command, big)
    assert code == 2
    assert_one_short_paragraph(err, "huge_case.yaml")
    assert "limit" in err
    assert file_state(big) == before


@pytest.mark.skipif(hasattr(os, "geteuid") and os.geteuid() == 0, reason="root can read any file")
@pytest.mark.skipif(sys.platform == "win32", reason="POSIX permissions")
def test_unreadable_case_file(tmp_path, capsys):
    case = tmp_path / "locked.yaml"
    shutil.copyfile(BASE_CASE, case)
    case.chmod(0)
    try:
        code, out, err = run_inprocess(capsys, "check", case)
    finally:
        case.chmod(0o644)
    assert code == 2
    assert_one_short_paragraph(err, "locked.yaml")


@pytest.mark.parametrize("command", ["check", "run"])
def test_huge_value_is_not_echoed_in_full(command, tmp_path, capsys):
    """A flow given as a list of 50 000 numbers (well inside the size and node limits): the
    message must stay one short paragraph, not repeat the whole value."""
    case = tmp_path / "long_list.yaml"
    text = BASE_CASE.read_text(encoding="utf-8")
    text = text.replace("    flow: 50\n", "    flow: [" + ", ".join(["0"] * 50_000) + "]\n")
    case.write_text(text, encoding="utf-8")
    code, out, err = run_inprocess(capsys, command, case)
    assert code == 2
    assert "streams.feed.flow" in err
    assert_one_short_paragraph(err, "long_list.yaml")


def test_long_name_is_not_echoed_in_full(tmp_path, capsys):
    """A 20 000-character fluid name (a pasted blob): the message must stay short."""
    case = tmp_path / "long_name.yaml"
    text = BASE_CASE.read_text(encoding="utf-8").replace("    fluid: crude\n", "    fluid: " + "x" * 20_000 + "\n")
    case.write_text(text, encoding="utf-8")
    code, out, err = run_inprocess(capsys, "check", case)
    assert code == 2
    assert "streams.feed.fluid" in err
    assert_one_short_paragraph(err, "long_name.yaml")


@pytest.mark.skipif(not Path("/dev/zero").exists() or sys.platform == "win32", reason="needs /dev/zero")
def test_endless_special_file_is_refused(tmp_path):
    """/dev/zero reports size 0 but never ends: the size limit must also bound the read. The
    subprocess runs under a 1 GB address-space limit so that a failure cannot exhaust memory."""
    import resource

    def limit_memory():  # pragma: no cover - runs in the child
        resource.setrlimit(resource.RLIMIT_AS, (1 << 30, 1 << 30))

    result = run_subprocess("check", "/dev/zero", timeout=60, preexec_fn=limit_memory)
    assert result.returncode == 2, f"exit {result.returncode}: {result.stderr[:500]}"
    assert_one_short_paragraph(result.stderr, "/dev/zero")


def test_a_yaml_syntax_error_says_where_and_what_usually_causes_it():
    """The parser's own words ("did not find expected key") with the line, the column and the
    usual causes, so that a user can fix it without knowing YAML's grammar."""
    from hxtrain.network import CaseError
    from hxtrain.network.reading import parse_yaml

    with pytest.raises(CaseError) as caught:
        parse_yaml("exchangers:\n  E-1:\n    ua: 40\n   arrangement: counterflow\n", "bad.yaml")
    error = caught.value
    assert error.file == "bad.yaml" and error.line == 4
    assert "column 4" in error.message and "same column" in error.message and "unclosed" in error.message
