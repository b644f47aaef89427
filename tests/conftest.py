"""Settings shared by every test module.

`make test` runs the suite on every core with pytest-xdist (``-n auto``): one worker process per
core, each running whole tests of its own. A worker is then one core's worth of work, so numpy's
BLAS is held to one thread per worker (set before numpy is first imported, which happens when the
test modules are collected, after this file); BLAS threads of two workers on two cores would
otherwise fight over the same cores. An explicit setting in the environment is kept.

Compiled modules are written to ``__pycache__`` (ignored by git) even where the environment sets
PYTHONDONTWRITEBYTECODE: the suite starts many dozens of interpreters (worked examples, signals,
exit statuses, fresh-interpreter import checks), and each would otherwise compile the package
from its source again.
"""

from __future__ import annotations

import os
import sys

for _variable in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_variable, "1")

sys.dont_write_bytecode = False
os.environ.pop("PYTHONDONTWRITEBYTECODE", None)
