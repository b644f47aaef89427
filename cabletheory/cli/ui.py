"""``cabletheory ui``: check the arguments and open the terminal app.

The app is opened through the function the ``cabletheory`` program (:mod:`cabletheory.__main__`)
passes to :func:`cabletheory.cli.main`, so that the command line never imports the app; textual is
imported only when the command runs."""

from __future__ import annotations

import argparse
from pathlib import Path

from .. import PASSIVE_CAVEAT
from ..errors import InputError, MissingFileError

VIEW_NAMES = ("cylinder", "charging", "tree", "check", "fit", "survey")


def register(subparsers: argparse._SubParsersAction) -> None:
    parser = subparsers.add_parser(
        "ui",
        help="terminal app: cylinder, charging, tree, check, fit and survey views with plots and export",
        description="Open the keyboard-first terminal app. F1 lists every key; F2-F5, F8 and F9 switch views; "
                    "ctrl+s saves a view's inputs and results, ctrl+g its plot, ctrl+q quits.",
        epilog=PASSIVE_CAVEAT,
    )
    parser.add_argument("swc", nargs="?", metavar="SWC",
                        help="a morphology to open in the tree view (.swc, or a .outline tree outline)")
    parser.add_argument("--check", metavar="CSV",
                        help="a simulator's output (CSV) to compare in the check view")
    parser.add_argument("--fit", metavar="RECORDING",
                        help="recorded sweeps (CSV, tab-separated or NWB) to fit in the fitting view")
    parser.add_argument("--morphology", metavar="FILE",
                        help="with --fit: the recorded cell (SWC or tree outline), whose Rm, Ri and Cm are fitted")
    parser.add_argument("--survey", metavar="TABLE",
                        help="a table written by 'cabletheory survey' (.csv or .parquet) to open in the survey view")
    parser.add_argument("--view", choices=VIEW_NAMES, default=None,
                        help="view shown first (default: cylinder; tree when SWC is given; check with --check, "
                             "fit with --fit, survey with --survey)")
    parser.set_defaults(run=run)


def run(args: argparse.Namespace) -> int:
    swc = args.swc
    if swc is not None:
        path = Path(swc).expanduser()
        if not path.is_file():
            raise MissingFileError(f"SWC: {swc!r} does not exist or is not a file")
        swc = str(path)
    check = args.check
    if check is not None:
        path = Path(check).expanduser()
        if not path.is_file():
            raise MissingFileError(f"--check: {check!r} does not exist or is not a file")
        check = str(path)
    files: dict[str, str] = {}
    for option, key in (("fit", "recording"), ("morphology", "morphology"), ("survey", "table")):
        text = getattr(args, option, None)
        if text is not None:
            path = Path(text).expanduser()
            if not path.is_file():
                raise MissingFileError(f"--{option}: {text!r} does not exist or is not a file")
            files[key] = str(path)
    if "morphology" in files and "recording" not in files:
        raise InputError("--morphology: give the recording it goes with (--fit RECORDING)")
    view = args.view or ("tree" if swc else "check" if check else "fit" if "recording" in files
                         else "survey" if "table" in files else "cylinder")
    if view not in VIEW_NAMES:  # pragma: no cover - argparse checks choices
        raise InputError(f"--view: unknown view {view!r}")
    open_app = getattr(args, "open_app", None)
    if open_app is None:
        raise InputError("the terminal app opens from the cabletheory program ('cabletheory ui' or "
                         "'python -m cabletheory ui')")
    # the program passes it in: the command line never imports the app
    open_app(view=view, swc=swc, simulation=check, **files)
    return 0
