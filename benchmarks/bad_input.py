"""Answer time of every bad-input catalogue case (issue 11): each well under one second.

Runs every row of tests/bad_input_catalogue.txt in-process through `cabletheory.cli.main`, in a
scratch folder holding the catalogue's files, and reports the slowest cases. The tests check the
behaviour (status 2, one line, nothing written) with only a generous hang guard; the speed goal
lives here.
"""

from __future__ import annotations

import contextlib
import io
import os
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE.parent / "tests"))

from test_bad_input_catalogue import FILES, ROWS, expand  # noqa: E402

from cabletheory.cli import main  # noqa: E402

GOAL = 1.0  # seconds per case


def run() -> int:
    with tempfile.TemporaryDirectory() as scratch:
        tmp = Path(scratch)
        for name, content in FILES.items():
            (tmp / name).write_bytes(content if isinstance(content, bytes) else content.encode())
        (tmp / "out.csv").write_text("an earlier result\n")
        (tmp / "folder").mkdir()
        os.mkfifo(tmp / "fifo")
        times = []
        for row in ROWS:
            words = row.values[1]
            argv = expand(words, tmp)
            start = time.perf_counter()
            with contextlib.redirect_stdout(io.StringIO()), contextlib.redirect_stderr(io.StringIO()):
                status = main(argv)
            times.append((time.perf_counter() - start, status, words))
    times.sort(reverse=True)
    print(f"{len(times)} bad-input cases in-process; goal: each < {GOAL:g} s")
    for elapsed, status, words in times[:8]:
        print(f"  {elapsed * 1e3:8.1f} ms  status {status}  {words[:90]}")
    worst = times[0][0]
    print(f"  median {times[len(times) // 2][0] * 1e3:.1f} ms, worst {worst * 1e3:.1f} ms")
    print(f"  verdict: {'met' if worst < GOAL else 'NOT met'}")
    return 0


if __name__ == "__main__":
    sys.exit(run())
