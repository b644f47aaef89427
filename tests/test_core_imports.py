"""The package's layers hold (DEVELOPERS.md, "Architecture and import direction").

Two kinds of check:

* the import graph, read from the source with :mod:`ast` (relative imports resolved, imports
  inside functions and ``TYPE_CHECKING`` blocks included): no cycle; no arrow from the core to the
  unit boundary or a front end; no arrow between the command line and the app; and no arrow
  upward against the layer order of the table in DEVELOPERS.md, which every module must appear in;
* each core module imported afresh (in a child forked from one new interpreter that has loaded
  only numpy) where pint, textual, matplotlib and argparse cannot be found, with sympy and scipy
  left unloaded (they are imported inside the functions that need
  them, so that the command line starts fast).
"""

from __future__ import annotations

import ast
import builtins
import os
import pathlib
import re
import subprocess
import sys
from collections.abc import Mapping, Sequence

import pytest

import cabletheory

PACKAGE = pathlib.Path(cabletheory.__file__).parent
GUIDE = PACKAGE.parent / "DEVELOPERS.md"
BOUNDARY = {"units", "inputs", "output", "quantities"}  # the unit boundary: may use pint; the core never imports it
FRONT_ENDS = {"cli", "tui", "__main__"}


# ---------------------------------------------------------------------------------------------
# the import graph
# ---------------------------------------------------------------------------------------------
def module_name(path: pathlib.Path, root: pathlib.Path) -> str:
    parts = list(path.relative_to(root.parent).with_suffix("").parts)
    if parts[-1] == "__init__":
        parts = parts[:-1]
    return ".".join(parts)


def import_graph(root: pathlib.Path) -> dict[str, set[str]]:
    """Module -> the package's modules it imports, anywhere in its source.

    ``from .x import y`` points at the submodule ``x.y`` if there is one, else at ``x`` (for a
    package, its ``__init__``). Importing a submodule also runs its parent packages' ``__init__``;
    those implicit arrows are left out, as Python resolves them before the module's own imports.
    """
    paths = {module_name(p, root): p for p in root.rglob("*.py")}
    graph: dict[str, set[str]] = {}
    for name, path in paths.items():
        package = name if path.name == "__init__.py" else name.rpartition(".")[0]
        targets: set[str] = set()
        for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"), str(path))):
            if isinstance(node, ast.Import):
                targets.update(a.name for a in node.names)
            elif isinstance(node, ast.ImportFrom):
                if node.level:
                    base = package.split(".")[:len(package.split(".")) - node.level + 1]
                    target = ".".join(base + ([node.module] if node.module else []))
                else:
                    target = node.module or ""
                for alias in node.names:
                    sub = f"{target}.{alias.name}"
                    targets.add(sub if sub in paths else target)
        graph[name] = {t for t in targets if t in paths and t != name}
    return graph


def find_cycle(graph: Mapping[str, set[str]]) -> list[str] | None:
    """One cycle of the graph as a list of modules (first = last), or None."""
    state: dict[str, int] = {}  # 1 on the current path, 2 finished
    path: list[str] = []

    def visit(node: str) -> list[str] | None:
        state[node] = 1
        path.append(node)
        for nxt in sorted(graph.get(node, ())):
            if state.get(nxt) == 1:
                return [*path[path.index(nxt):], nxt]
            if nxt not in state:
                found = visit(nxt)
                if found:
                    return found
        path.pop()
        state[node] = 2
        return None

    for start in sorted(graph):
        if start not in state:
            found = visit(start)
            if found:
                return found
    return None


def component(module: str) -> str:
    """The part of the package a module belongs to: ``cabletheory.verify.tables`` -> ``verify``;
    the package root itself -> ``""``."""
    parts = module.split(".")
    return parts[1] if len(parts) > 1 else ""


def guide_layers(text: str, known: set[str]) -> list[tuple[str, set[str]]]:
    """(layer, components) in the order of the architecture table: every back-quoted ``name.py`` or
    ``name/`` in a row that names a module or package of the package (first mention wins)."""
    section = text.split("## Architecture and import direction", 1)[1].split("\n## ", 1)[0]
    layers: list[tuple[str, set[str]]] = []
    seen: set[str] = set()
    for line in section.splitlines():
        cells = [c.strip() for c in line.strip().strip("|").split("|")]
        if not line.startswith("|") or len(cells) < 2 or set(cells[0]) <= {"-"} or cells[0] == "layer":
            continue
        names = {m.group(1) for m in re.finditer(r"`([A-Za-z_]\w*)(?:\.py|/)`", cells[1])}
        names = (names & known) - seen
        seen |= names
        layers.append((cells[0], names))
    return layers


def violations(graph: Mapping[str, set[str]], layers: Sequence[tuple[str, set[str]]],
               boundary: set[str] = BOUNDARY, front_ends: set[str] = FRONT_ENDS) -> list[str]:
    """Every arrow that breaks a rule, in words (empty when the layers hold)."""
    rank = {name: i for i, (_, names) in enumerate(layers) for name in names}
    rank[""] = -1  # the package root (version, caveat) sits above everything
    core = {c for c in rank if c not in boundary | front_ends}
    found = []
    for source in sorted(graph):
        for target in sorted(graph[source]):
            a, b = component(source), component(target)
            if a == b:
                continue
            if a in core and b in boundary | front_ends:
                found.append(f"core module {source} imports {target} (the unit boundary or a front end)")
            elif {a, b} == {"cli", "tui"}:
                found.append(f"front end {source} imports the other front end ({target})")
            elif a in rank and b in rank and rank[b] > rank[a]:
                found.append(f"{source} ({layers[rank[a]][0]}) imports {target} from a later layer "
                             f"({layers[rank[b]][0]})")
    return found


GRAPH = import_graph(PACKAGE)
COMPONENTS = {component(m) for m in GRAPH} - {""}
LAYERS = guide_layers(GUIDE.read_text(encoding="utf-8"), COMPONENTS)


def test_every_module_has_a_layer_in_the_guide():
    placed = set().union(*(names for _, names in LAYERS))
    assert COMPONENTS - placed == set(), "add these to the architecture table of DEVELOPERS.md"
    assert {"errors", "cable", "verify", "units", "cli", "tui"} <= placed


def test_the_import_graph_has_no_cycle():
    assert find_cycle(GRAPH) is None, " -> ".join(find_cycle(GRAPH) or [])


def test_imports_follow_the_layers():
    assert violations(GRAPH, LAYERS) == []


def test_the_graph_sees_relative_and_function_level_imports():
    """The reader finds what the checks rely on: a relative import inside a function (verify.exact
    reaches transient lazily), a package's re-export and a two-dot relative import."""
    assert "cabletheory.verify.reading" in GRAPH["cabletheory.verify"]
    assert "cabletheory.errors" in GRAPH["cabletheory.verify.reading"]
    assert "cabletheory.units" in GRAPH["cabletheory.output"]
    assert {"cabletheory.output"} <= GRAPH["cabletheory.tui.export"]


def test_the_checks_catch_a_bad_graph():
    """A fake package with a cycle, a core module importing the command line and the unit boundary,
    the app importing the command line, and an upward arrow: each is reported."""
    fake = {
        "cabletheory.cable": {"cabletheory.eigen", "cabletheory.cli.common"},
        "cabletheory.eigen": {"cabletheory.cable", "cabletheory.units"},
        "cabletheory.verify.tables": {"cabletheory.tree"},
        "cabletheory.tree": {"cabletheory.verify.tables"},
        "cabletheory.tui.export": {"cabletheory.cli.common"},
        "cabletheory.cli.common": {"cabletheory.units"},
        "cabletheory.units": set(),
    }
    layers = [("closed forms", {"cable", "eigen"}), ("trees", {"tree"}), ("verification", {"verify"}),
              ("units", {"units"}), ("front ends", {"cli", "tui"})]
    cycle = find_cycle(fake)
    assert cycle is not None
    assert cycle[0] == cycle[-1]
    assert len(cycle) >= 3
    found = "\n".join(violations(fake, layers))
    assert "core module cabletheory.cable imports cabletheory.cli.common" in found
    assert "core module cabletheory.eigen imports cabletheory.units" in found
    assert "front end cabletheory.tui.export imports the other front end" in found
    assert "cabletheory.tree (trees) imports cabletheory.verify.tables from a later layer" in found
    assert find_cycle({"a": {"b"}, "b": {"c"}, "c": set()}) is None
    assert violations({"cabletheory.tree": {"cabletheory.cable"}}, layers) == []


def test_the_guide_table_is_read_in_order():
    layers = guide_layers("## Architecture and import direction\n\n| layer | modules | may import |\n"
                          "|---|---|---|\n| low | `cable.py` (see `Cylinder`) | stdlib |\n"
                          "| high | `verify/` (`reading.py`), `cable.py` again | the above |\n## Next\n",
                          {"cable", "verify"})
    assert layers == [("low", {"cable"}), ("high", {"verify"})]


# ---------------------------------------------------------------------------------------------
# the core in a fresh interpreter without the boundary packages
# ---------------------------------------------------------------------------------------------
CORE = sorted(m.removeprefix("cabletheory.") for m in GRAPH
              if component(m) and component(m) not in BOUNDARY | FRONT_ENDS)

BLOCKER = """
import sys
class Block:
    def find_spec(self, name, path=None, target=None):
        if name.split('.')[0] in {'pint', 'textual', 'matplotlib', 'argparse'}:
            raise ImportError(f'core must not import {name}')
        return None
sys.meta_path.insert(0, Block())
import importlib
import json
import os
import traceback
import numpy  # every core module uses it, and it loads none of the packages checked here

for module in sys.argv[1:]:
    read, write = os.pipe()
    pid = os.fork()
    if pid == 0:  # the child: a fresh import of the module, as in a new interpreter
        os.close(read)
        try:
            importlib.import_module(module)
            answer = {'heavy': sorted(m for m in ('sympy', 'scipy') if m in sys.modules)}
        except BaseException:
            answer = {'error': traceback.format_exc()}
        os.write(write, json.dumps(answer).encode())
        os._exit(0)
    os.close(write)
    with os.fdopen(read, 'rb') as pipe:
        text = pipe.read().decode()
    os.waitpid(pid, 0)
    print(json.dumps({'module': module, **(json.loads(text) if text else {'error': 'no answer'})}))
"""


@pytest.fixture(scope="module")
def core_imports() -> dict[str, dict]:
    """Each core module imported in a child forked from one interpreter that has loaded only the
    import blocker and numpy: a fresh import per module, without starting an interpreter for each."""
    proc = subprocess.run([sys.executable, "-c", BLOCKER, *(f"cabletheory.{m}" for m in CORE)],
                          capture_output=True, text=True)
    assert proc.returncode == 0, proc.stderr
    import json

    answers = [json.loads(line) for line in proc.stdout.splitlines()]
    return {answer.pop("module").removeprefix("cabletheory."): answer for answer in answers}


def test_the_core_list_is_not_empty():
    assert {"cable", "errors", "verify.reading", "verify"} <= set(CORE)
    assert not {"units", "output", "cli.common"} & set(CORE)


@pytest.mark.parametrize("module", CORE)
def test_core_module_imports_without_boundary_packages(core_imports, module):
    answer = core_imports[module]
    assert "error" not in answer, answer.get("error")
    # sympy and scipy are imported lazily, inside the functions that need them
    assert answer["heavy"] == [], f"{module} imports {','.join(answer['heavy'])} at module level"


def test_the_fresh_import_check_sees_a_blocked_import_and_a_heavy_one(tmp_path):
    """The forked check reports a module that imports a blocked package, and one that loads scipy."""
    (tmp_path / "probe_blocked.py").write_text("import argparse\n", encoding="utf-8")
    (tmp_path / "probe_heavy.py").write_text("import scipy\n", encoding="utf-8")
    proc = subprocess.run([sys.executable, "-c", BLOCKER, "probe_blocked", "probe_heavy", "cabletheory.errors"],
                          capture_output=True, text=True, cwd=tmp_path, env={**os.environ, "PYTHONPATH": str(tmp_path)})
    assert proc.returncode == 0, proc.stderr
    import json

    blocked, heavy, fine = (json.loads(line) for line in proc.stdout.splitlines())
    assert "core must not import argparse" in blocked["error"]
    assert heavy["heavy"] == ["scipy"]
    assert fine == {"module": "cabletheory.errors", "heavy": []}


def test_cli_does_not_import_heavy_packages_at_start():
    code = ("import sys; from cabletheory.cli import build_parser; build_parser(); "
            "print(','.join(sorted(m for m in ('sympy','scipy','textual','matplotlib','mpmath') if m in sys.modules)))")
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
    assert proc.returncode == 0, proc.stderr
    assert proc.stdout.strip() == ""


def test_the_program_opens_the_app_without_the_command_line_importing_it(monkeypatch, capsys):
    """``cabletheory ui`` reaches the app through the program (cabletheory.__main__), which hands the
    command line the function that opens it; the command line alone has no app to open."""
    import cabletheory.tui as tui
    from cabletheory.__main__ import run
    from cabletheory.cli import main

    calls: list[dict] = []
    monkeypatch.setattr(tui, "launch", lambda **options: calls.append(options))
    assert run(["ui", "--view", "tree"]) == 0
    assert calls == [{"view": "tree", "swc": None, "simulation": None}]
    assert main(["ui"]) == 2
    assert "cabletheory ui" in capsys.readouterr().err


# ---------------------------------------------------------------------------------------------
# the core's errors are the package's
# ---------------------------------------------------------------------------------------------
BUILTIN_ERRORS = {name for name, value in vars(builtins).items()
                  if isinstance(value, type) and issubclass(value, BaseException)}


def builtin_raises(source: str, name: str) -> list[str]:
    """``raise ValueError(...)`` and the like in ``source``: a builtin exception raised by name
    (re-raising a caught exception is not counted)."""
    found = []
    for node in ast.walk(ast.parse(source, name)):
        if isinstance(node, ast.Raise) and node.exc is not None:
            raised = node.exc.func if isinstance(node.exc, ast.Call) else node.exc
            if isinstance(raised, ast.Name) and raised.id in BUILTIN_ERRORS:
                found.append(f"{name}:{node.lineno} raises {raised.id}")
    return found


def test_the_core_raises_only_the_packages_errors():
    """Every error raised on purpose below the front ends is a CableTheoryError (errors.py; its
    subclasses also inherit the builtin, so ``except ValueError`` still catches an InputError)."""
    found = [line for path in sorted(PACKAGE.rglob("*.py"))
             if component(module_name(path, PACKAGE)) not in FRONT_ENDS
             for line in builtin_raises(path.read_text(encoding="utf-8"), str(path.relative_to(PACKAGE.parent)))]
    # units.format_quantity refuses a complex value with TypeError (a call with the wrong type)
    assert [line for line in found if not line.startswith("cabletheory/units.py:")] == []


def test_the_raise_check_sees_a_builtin_raise():
    source = "def f(x):\n    if x:\n        raise ValueError('no')\n    raise InputError('ok')\n"
    assert builtin_raises(source, "probe.py") == ["probe.py:3 raises ValueError"]
