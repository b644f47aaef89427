"""Every command's --help ends with one example, and the examples run as printed (issue: daily use).

The examples use the bundled invented data (DEVELOPERS.md, demo scenario); those that need a
file of the user's own (a recording to fit) or a terminal (the app) are only checked to parse.
"""

from __future__ import annotations

import pathlib
import shlex

import pytest

from cabletheory.cli import COMMANDS, EXAMPLES, build_parser, main

ROOT = pathlib.Path(__file__).resolve().parents[1]
PARSE_ONLY = {"fit", "ui", "demo"}  # a user's recording; a terminal; the whole tour (tests/test_cli_demo.py)


def test_every_command_has_an_example_in_its_help(capsys):
    assert set(EXAMPLES) == set(COMMANDS)
    for name in COMMANDS:
        with pytest.raises(SystemExit):
            main([name, "--help"])
        out = capsys.readouterr().out
        assert f"$ {EXAMPLES[name]}" in out, name  # printed whole, not wrapped


@pytest.mark.parametrize("name", sorted(set(EXAMPLES) - PARSE_ONLY))
def test_the_example_runs(name, tmp_path, monkeypatch, capsys):
    argv = shlex.split(EXAMPLES[name])[1:]
    argv = [str(ROOT / a) if a.startswith("cabletheory/data/") else a for a in argv]
    monkeypatch.chdir(tmp_path)  # outputs such as exact.csv land in a scratch folder
    status = main(argv)
    _out, err = capsys.readouterr()
    assert status in (0, 1), err  # compare's example is a failing run on purpose (status 1)
    assert "error" not in err


@pytest.mark.parametrize("name", sorted(PARSE_ONLY))
def test_the_other_examples_parse(name):
    args = build_parser().parse_args(shlex.split(EXAMPLES[name])[1:])
    assert args.command == name
