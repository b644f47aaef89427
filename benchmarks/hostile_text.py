"""Time to answer hostile unit text (issue 11): every text refused or read in under 0.1 s.

The texts that once hung or crashed: a tower of powers, 100 000 characters, 5 000 nested brackets,
20 000 factors, an overflowing number. Each is timed in-process (after the registry is built, so
that only the answer is measured) and end to end through `cabletheory cable` in a subprocess.
"""

from __future__ import annotations

import subprocess
import sys
import time

from cabletheory.errors import InputError
from cabletheory.units import parse_quantity, registry

GOAL = 0.1  # seconds per text, in-process
TEXTS = {
    "9^9^9 um": "9^9^9 um",
    "100 000 characters": "2" * 100_000,
    "5 000 nested brackets": "2 " + "(" * 5000 + "um" + ")" * 5000,
    "20 000 factors": "2 " + "um*" * 20_000 + "um",
    "deep power in range": "2 um**6",
    "1e999": "1e999",
    "a list": "2, 3, 4, 5 um",
}


def main() -> int:
    registry()
    worst = 0.0
    print(f"answer time per text (goal < {GOAL * 1e3:.0f} ms in-process)")
    for name, text in TEXTS.items():
        start = time.perf_counter()
        try:
            parse_quantity(text, "length", "--diameter")
            answer = "read"
        except InputError:
            answer = "refused"
        elapsed = time.perf_counter() - start
        worst = max(worst, elapsed)
        start = time.perf_counter()
        subprocess.run([sys.executable, "-m", "cabletheory", "cable", "--Rm", "20000", "--Ri", "100",
                        "--length", "500", "--diameter", text], capture_output=True, timeout=60)
        whole = time.perf_counter() - start
        print(f"  {name:24s} {elapsed * 1e3:8.3f} ms  {answer:8s}  whole command {whole * 1e3:6.0f} ms")
    print(f"  verdict: {'met' if worst < GOAL else 'NOT met'}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
