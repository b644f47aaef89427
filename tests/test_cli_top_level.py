"""The command line's top level: exit statuses, one-line errors and warnings, no traceback, no cache."""

from __future__ import annotations

import os
import subprocess
import sys

import pytest

from cabletheory import cli
from cabletheory.cli import main

CYLINDER = ["--Rm", "20000", "--Ri", "100", "--diameter", "2", "--length", "500"]


@pytest.mark.parametrize("argv", [[], ["--"]])
def test_no_command_is_a_one_line_usage_error(capsys, argv):
    assert main(argv) == 2
    captured = capsys.readouterr()
    assert captured.out == ""
    assert captured.err.splitlines() == [
        f"cabletheory: error: no command given; choose one of {', '.join(cli.COMMANDS)} ('cabletheory --help' "
        "describes them)"]
    assert "cable, charge" in captured.err


def test_help_still_goes_to_stdout_with_status_0(capsys):
    with pytest.raises(SystemExit) as info:
        main(["--help"])
    assert info.value.code == 0
    assert "COMMAND" in capsys.readouterr().out


def test_an_implausible_value_warns_on_one_line_and_the_run_goes_on(capsys):
    assert main(["cable", "--Rm", "3", "--Ri", "100", "--diameter", "2", "--length", "500"]) == 0
    captured = capsys.readouterr()
    assert captured.err.splitlines() == [
        "cabletheory: warning: --Rm: '3' (read as 3 Ω·cm²: bare numbers are in Ω·cm²) is far outside the values "
        "met in neurons (0.1 to 200 kΩ·cm²); check the unit"]
    assert "3.000e-3 kΩ·cm²" in captured.out or "0.003000 kΩ·cm²" in captured.out


def _explode(args):
    raise RuntimeError("the solver gave up\nsecond line")


def test_an_unexpected_exception_is_one_line_with_status_70(capsys, monkeypatch):
    monkeypatch.delenv("CABLETHEORY_TRACEBACK", raising=False)
    monkeypatch.setattr("cabletheory.cli.cable.run", _explode)
    assert main(["cable", *CYLINDER]) == 70
    err = capsys.readouterr().err
    assert err.splitlines() == [
        "cabletheory: internal error: RuntimeError: the solver gave up second line (a bug in cabletheory; run "
        "again with CABLETHEORY_TRACEBACK=1 set for the details and please report it)"]


def test_the_traceback_on_request(monkeypatch):
    monkeypatch.setenv("CABLETHEORY_TRACEBACK", "1")
    monkeypatch.setattr("cabletheory.cli.cable.run", _explode)
    with pytest.raises(RuntimeError, match="the solver gave up"):
        main(["cable", *CYLINDER])


def test_a_failure_after_implausible_values_blames_those_options(capsys, monkeypatch):
    monkeypatch.delenv("CABLETHEORY_TRACEBACK", raising=False)
    monkeypatch.setattr("cabletheory.cli.cable.run", lambda args: (cli.cable.read_cylinder(args), _explode(args)))
    assert main(["cable", "--Rm", "3", "--Ri", "1e9", "--diameter", "2", "--length", "500"]) == 2
    lines = capsys.readouterr().err.splitlines()
    assert len(lines) == 3  # two warnings, one error
    assert lines[-1] == ("cabletheory: error: the computation failed for these inputs (RuntimeError: the solver "
                         "gave up second line); check --Rm, --Ri: far outside the values met in neurons (see the "
                         "warnings)")


def test_an_overflow_is_bad_input(capsys, monkeypatch):
    def overflow(args):
        raise OverflowError("math range error")

    monkeypatch.setattr("cabletheory.cli.cable.run", overflow)
    assert main(["cable", *CYLINDER]) == 2
    assert capsys.readouterr().err.splitlines() == [
        "cabletheory: error: the inputs give numbers too large or too small to evaluate (OverflowError: math "
        "range error); check the magnitudes and units of the inputs"]


@pytest.mark.parametrize("home", ["file", "missing", "readonly"])
def test_no_cache_folder_is_needed(tmp_path, home):
    """Issue 11: an unwritable home or cache folder, or a damaged cache file, broke every run. The
    unit registry now uses no disk cache at all: any home works, and nothing is written there."""
    place = tmp_path / "home"
    if home == "file":
        place.write_text("not a folder")
    elif home == "readonly":
        place.mkdir()
        place.chmod(0o500)
    env = {**os.environ, "HOME": str(place), "XDG_CACHE_HOME": str(place / "cache")}
    done = subprocess.run([sys.executable, "-m", "cabletheory", "cable", "--Rm", "20 kΩ·cm²", "--Ri", "100 Ω·cm",
                           "--diameter", "2 µm", "--length", "500 µm"], capture_output=True, text=True, env=env,
                          timeout=60)
    assert done.returncode == 0, done.stderr
    assert done.stderr == ""
    assert "length constant" in done.stdout
    if place.is_dir():
        assert list(place.iterdir()) == []


def test_the_registry_reads_no_cache():
    from cabletheory.units import registry

    assert getattr(registry(), "_cache_folder", None) is None
