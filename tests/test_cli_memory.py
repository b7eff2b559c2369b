"""The command keeps freed memory for reuse (:mod:`hxtrain.solver.cli.memory`): glibc's malloc is
told its two thresholds once per command, so a batch's short-lived arrays are not faulted in
afresh (measured in the module's notes)."""

from __future__ import annotations

import ctypes
import sys

import pytest

from hxtrain.solver import demo_case_path
from hxtrain.solver.cli import main as cli_main
from hxtrain.solver.cli import memory


def _glibc() -> bool:
    try:
        return sys.platform.startswith("linux") and ctypes.CDLL(None).gnu_get_libc_version is not None
    except (OSError, AttributeError):
        return False


@pytest.mark.skipif(not _glibc(), reason="the settings exist in glibc's malloc only")
def test_glibc_takes_both_thresholds():
    assert memory.keep_freed_memory() is True


def test_elsewhere_nothing_is_set(monkeypatch):
    monkeypatch.setattr(memory.sys, "platform", "win32")
    assert memory.keep_freed_memory() is False


def test_every_command_sets_them_once_after_reading_its_options(monkeypatch, capsys):
    calls = []
    monkeypatch.setattr(cli_main, "keep_freed_memory", lambda: calls.append(True) or True)
    assert cli_main.main(["check", str(demo_case_path("crude_preheat"))]) == 0
    assert calls == [True]
    assert "flows balance" in capsys.readouterr().out
