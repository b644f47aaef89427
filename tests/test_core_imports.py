"""The core imports without pint, textual, matplotlib or argparse (DEVELOPERS.md, architecture).

Each core module is imported in a fresh interpreter in which those packages cannot be found,
so a stray top-level import fails here rather than slowing the command line down.
"""

from __future__ import annotations

import pathlib
import subprocess
import sys

import pytest

import cabletheory

PACKAGE = pathlib.Path(cabletheory.__file__).parent
BOUNDARY = {"units", "__main__"}  # the unit boundary and the front ends may use them
FRONT_ENDS = {"cli", "tui"}
CORE = sorted([p.stem for p in PACKAGE.glob("*.py") if p.stem not in BOUNDARY and p.stem != "__init__"]
              + [f"{d.name}.{p.stem}" for d in PACKAGE.iterdir() if (d / "__init__.py").is_file()
                 and d.name not in FRONT_ENDS for p in d.glob("*.py") if p.stem != "__init__"])

BLOCKER = """
import sys
class Block:
    def find_spec(self, name, path=None, target=None):
        if name.split('.')[0] in {'pint', 'textual', 'matplotlib', 'argparse'}:
            raise ImportError(f'core must not import {name}')
        return None
sys.meta_path.insert(0, Block())
import importlib
importlib.import_module(sys.argv[1])
heavy = sorted(m for m in ('sympy', 'scipy') if m in sys.modules)
print(','.join(heavy))
"""


def test_the_core_list_is_not_empty():
    assert {"cable", "errors", "verify.reading"} <= set(CORE)


@pytest.mark.parametrize("module", CORE)
def test_core_module_imports_without_boundary_packages(module):
    proc = subprocess.run([sys.executable, "-c", BLOCKER, f"cabletheory.{module}"], capture_output=True, text=True)
    assert proc.returncode == 0, proc.stderr
    # sympy and scipy are imported lazily, inside the functions that need them
    assert proc.stdout.strip() == "", f"{module} imports {proc.stdout.strip()} at module level"


def test_cli_does_not_import_heavy_packages_at_start():
    code = ("import sys; from cabletheory.cli import build_parser; build_parser(); "
            "print(','.join(sorted(m for m in ('sympy','scipy','textual','matplotlib','mpmath') if m in sys.modules)))")
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
    assert proc.returncode == 0, proc.stderr
    assert proc.stdout.strip() == ""
