"""Put the table of a `make bench` run into the README (maintainers; not part of the benchmarks).

Usage: ``python benchmarks/run_all.py | tee bench.log; python benchmarks/_readme.py bench.log``.
Replaces the table under "## Benchmarks" and the date and load average of the sentence above it.
"""

from __future__ import annotations

import re
import sys
from pathlib import Path

README = Path(__file__).resolve().parents[1] / "README.md"


def main(log: str) -> int:
    text = Path(log).read_text()
    found = re.search(r"^benchmarks of (\S+ \S+ UTC) on .*?load average ([\d.]+),", text, re.MULTILINE)
    end = re.search(r"^\(load average at the end: ([\d.]+),", text, re.MULTILINE)
    table = re.search(r"^\| what \| measured \| goal \| met\? \|\n(?:\|.*\n?)+", text, re.MULTILINE)
    if not (found and end and table):
        print(f"_readme.py: {log} holds no complete run_all.py table", file=sys.stderr)
        return 2
    readme = README.read_text()
    start = readme.index("## Benchmarks")
    stop = readme.index("\n## ", start + 1)
    section = readme[start:stop]
    section = re.sub(r"printed on\s.*? UTC on a", f"printed on\n{found.group(1)} on a", section, count=1,
                     flags=re.DOTALL)
    section = re.sub(r"load\s+average [\d.]+ at the start, [\d.]+ at the end",
                     f"load\naverage {float(found.group(2)):g} at the start, {float(end.group(1)):g} at the end",
                     section, count=1)
    section = re.sub(r"^\| what \| measured \| goal \| met\? \|\n(?:\|.*\n)+", table.group(0).rstrip("\n") + "\n",
                     section, count=1, flags=re.MULTILINE)
    README.write_text(readme[:start] + section + readme[stop:])
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1]))
