"""Running a worked example (worked/NAME/run.py) inside the test process, once per process.

A worked example is a short script over the command line's ``main``: run in a fresh interpreter
it costs the interpreter's start and the package's imports again (most of its time), so the tests
run it here with ``runpy`` as ``__main__`` from the project root, with its standard output and
error captured, and keep the result for every test that reads the same example.
tests/test_worked.py still runs one example as a script in its own interpreter, to show that the
scripts run as the README tells users to run them.
"""

from __future__ import annotations

import contextlib
import io
import os
import runpy
from dataclasses import dataclass
from functools import cache
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


@dataclass(frozen=True)
class Run:
    """What a worked example left: exit status, standard output and standard error (text)."""

    returncode: int
    stdout: str
    stderr: str


def _stream() -> io.TextIOWrapper:
    # a pipe's text stream, as a script's output has in a fresh interpreter (UTF-8, "\n" lines)
    return io.TextIOWrapper(io.BytesIO(), encoding="utf-8", newline="\n", write_through=True)


def _text(stream: io.TextIOWrapper) -> str:
    stream.flush()
    return stream.buffer.getvalue().decode("utf-8")  # type: ignore[attr-defined]


@cache
def run_worked(name: str) -> Run:
    """Run worked/``name``/run.py as ``__main__`` from the project root (the README's way), once."""
    out, err = _stream(), _stream()
    cwd = os.getcwd()
    status = 0
    try:
        os.chdir(ROOT)
        with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
            try:
                runpy.run_path(str(ROOT / "worked" / name / "run.py"), run_name="__main__")
            except SystemExit as stop:
                code = stop.code
                status = code if isinstance(code, int) else (0 if code is None else 1)
                if not isinstance(code, int | None):
                    print(code, file=err)
    finally:
        os.chdir(cwd)
    return Run(status, _text(out), _text(err))
