"""``cabletheory ui``: the terminal app (textual, imported only when the command runs)."""

from __future__ import annotations

import argparse
from pathlib import Path

from .. import PASSIVE_CAVEAT
from ..errors import InputError, MissingFileError

VIEW_NAMES = ("cylinder", "charging", "tree", "check")


def register(subparsers: argparse._SubParsersAction) -> None:
    parser = subparsers.add_parser(
        "ui",
        help="terminal app: cylinder, charging, tree and check views with plots and export",
        description="Open the keyboard-first terminal app. F1 lists every key; F2-F5 switch views; "
                    "ctrl+s saves a view's inputs and results, ctrl+g its plot, ctrl+q quits.",
        epilog=PASSIVE_CAVEAT,
    )
    parser.add_argument("swc", nargs="?", metavar="SWC",
                        help="an SWC morphology to open in the tree view")
    parser.add_argument("--view", choices=VIEW_NAMES, default=None,
                        help="view shown first (default: cylinder, or tree when SWC is given)")
    parser.set_defaults(run=run)


def run(args: argparse.Namespace) -> int:
    swc = args.swc
    if swc is not None:
        path = Path(swc).expanduser()
        if not path.is_file():
            raise MissingFileError(f"SWC: {swc!r} does not exist or is not a file")
        swc = str(path)
    view = args.view or ("tree" if swc else "cylinder")
    if view not in VIEW_NAMES:  # pragma: no cover - argparse checks choices
        raise InputError(f"--view: unknown view {view!r}")
    from ..tui.app import CableApp  # textual is imported here, never at start-up

    CableApp(view=view, swc=swc).run()
    return 0
