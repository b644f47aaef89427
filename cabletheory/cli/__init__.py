"""Command line: ``cabletheory <command> ...``.

Each command lives in its own module of this package and exposes
``register(subparsers) -> None``, which adds its parser and sets ``run=<function>``;
the function takes the parsed arguments and returns an exit status. Modules import
only the standard library and the core at top level; sympy, scipy, textual and
matplotlib are imported inside the functions that need them, so that start-up is fast.

Errors the user can fix (:class:`~cabletheory.errors.CableTheoryError`) print one line
to stderr and give exit status 2, never a traceback; so does a missing command.
"""

from __future__ import annotations

import argparse
import contextlib
import importlib
import os
import re
import sys
import warnings
from collections.abc import Callable, Sequence

from .. import __version__
from ..errors import CableTheoryError, ImplausibleValueWarning, InputError
from ..textfile import DEFAULT_LIMIT, describe_size, input_size_limit, max_input_bytes

# command name -> module in this package (order is the order of ``--help``)
COMMANDS: dict[str, str] = {
    "cable": "cable",
    "charge": "charge",
    "peel": "peel",
    "fit": "fit",
    "derive": "derive",
    "tree": "tree",
    "survey": "survey",
    "reference": "reference",
    "compare": "compare",
    "advise": "advise",
    "demo": "demo",
    "ui": "ui",
}


# one example per command, shown at the end of its --help (on the bundled or invented demo data)
EXAMPLES: dict[str, str] = {
    "cable": "cabletheory cable --Rm '20 kΩ·cm²' --Ri '200 Ω·cm' --diameter 2um --length 500um --frequency 100Hz",
    "charge": "cabletheory charge --Rm 20000 --Ri 200 --diameter 2 --length 500 --shape alpha --current 100pA "
              "--time-to-peak 0.5ms --stimulus-at 250um --positions '0, 250, 500 um' --times 0:20:2ms",
    "peel": "cabletheory peel --tau0 '31.5 ms' --tau1 '3.12 ms' --c0 0.851 --c1 0.126 --input-resistance '240 MΩ'",
    "fit": "cabletheory fit sweeps.csv --model ball-and-stick",
    "derive": "cabletheory derive --origin soma --end sealed --part laplace",
    "tree": "cabletheory tree cabletheory/data/morphologies/lumenia_lw1_conforming.swc --Rm 20000 --Ri 200",
    "survey": "cabletheory survey cabletheory/data/archive --Rm 20000 --Ri 200 --output survey.csv",
    "reference": "cabletheory reference --Rm 20000 --Ri 200 --diameter 2 --length 500 --current 100pA "
                 "--times 0:20:0.5ms --positions '0, 250, 500 um' --output exact.csv",
    "compare": "cabletheory compare cabletheory/data/runs/lumenia_coarse.csv --Rm 20000 --Ri 200 --diameter 2 "
               "--length 500 --current 100pA --rest -62mV --onset 1ms --pass-within 20uV",
    "advise": "cabletheory advise --Rm 20000 --Ri 200 --diameter 2 --length 500 --quantity time-course --target 1%",
    "demo": "cabletheory demo",
    "ui": "cabletheory ui cabletheory/data/morphologies/lumenia_pv7_interneuron.swc",
}


class _HelpFormatter(argparse.HelpFormatter):
    """argparse's formatter, except that a paragraph starting with '$ ' (an example command line)
    is printed as it is, so that it can be copied."""

    def _fill_text(self, text: str, width: int, indent: str) -> str:
        return "\n\n".join(indent + part if part.startswith("$ ") else super(_HelpFormatter, self)._fill_text(
            part, width, indent) for part in text.split("\n\n"))


_NEGATIVE = re.compile(r"^-(\d|\.\d|inf)")

# commands that read the user's files, and so take --max-file-size
READS_FILES = ("tree", "reference", "compare", "advise", "ui", "fit", "survey")
_SIZE = re.compile(r"^\s*(\d+(?:\.\d+)?(?:[eE]\+?\d+)?)\s*(|B|kB|KB|MB|GB|TB|KiB|MiB|GiB|TiB)\s*$", re.IGNORECASE)
_SIZE_FACTORS = {"": 1, "b": 1, "kb": 10**3, "mb": 10**6, "gb": 10**9, "tb": 10**12, "kib": 2**10, "mib": 2**20,
                 "gib": 2**30, "tib": 2**40}


def file_size(text: str) -> int:
    """An argparse ``type`` for --max-file-size: '500MB', '2 GB', '1GiB' or a number of bytes."""
    match = _SIZE.match(text)
    if match is None:
        raise argparse.ArgumentTypeError(f"{text[:40]!r} is not a file size such as 500MB or 2GB")
    size = float(match.group(1)) * _SIZE_FACTORS[match.group(2).lower()]
    if not 1 <= size <= 10**15:
        raise argparse.ArgumentTypeError(f"{text[:40]!r} must lie between 1 byte and 1 PB")
    return int(size)


class _Parser(argparse.ArgumentParser):
    """An ArgumentParser whose errors become one-line :class:`InputError`s."""

    def error(self, message: str):  # type: ignore[override]
        command = self.prog.removeprefix("cabletheory").strip()
        raise InputError(f"{command}: {message}" if command else message)


def build_parser(only: str | None = None) -> argparse.ArgumentParser:
    """The full parser, or with ``only`` a known command, a parser holding just that command
    (so that running one command does not import every other command's modules)."""
    parser = _Parser(
        prog="cabletheory",
        description="Closed-form answers for passive neuronal cables (passive, linear, uniform membrane).",
    )
    parser.add_argument("--version", action="version", version=f"cabletheory {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    names = [only] if only in COMMANDS else list(COMMANDS)
    for name in names:
        module_name = COMMANDS[name]
        try:
            module = importlib.import_module(f"{__name__}.{module_name}")
        except ModuleNotFoundError as exc:
            if exc.name != f"{__name__}.{module_name}":
                raise
            continue  # command not built yet
        module.register(sub)
        command = sub.choices.get(name)
        if command is not None and name in EXAMPLES:
            command.formatter_class = _HelpFormatter
            command.epilog = "\n\n".join(part for part in (command.epilog, f"Example:\n\n$ {EXAMPLES[name]}") if part)
        if name in READS_FILES and name in sub.choices:
            sub.choices[name].add_argument(
                "--max-file-size", type=file_size, default=None, metavar="SIZE",
                help=f"largest input file read, e.g. 2GB (default {describe_size(DEFAULT_LIMIT)}; the size is "
                     "checked before a file is read)")
    return parser


def _attach_negative_values(argv: Sequence[str]) -> list[str]:
    """``--diameter -2um`` -> ``--diameter=-2um`` so that a negative value reaches its check
    (argparse would otherwise read it as an unknown option)."""
    out: list[str] = []
    for token in argv:
        if out and out[-1].startswith("--") and "=" not in out[-1] and _NEGATIVE.match(token):
            out[-1] = f"{out[-1]}={token}"
        else:
            out.append(token)
    return out


def main(argv: Sequence[str] | None = None, *, open_app: Callable[..., None] | None = None) -> int:
    """Run the command line; return the exit status.

    ``open_app(view=..., swc=..., simulation=...)`` opens the terminal app for ``cabletheory ui``;
    the program (:mod:`cabletheory.__main__`) passes it, so that the command line never imports the app.

    0 done (or check passed), 1 check failed, 2 bad input (one line on stderr: ``cabletheory:
    error: ...``), 130 interrupted, 70 an internal error (a bug: one line; set the environment
    variable ``CABLETHEORY_TRACEBACK=1`` to see the traceback). ``cabletheory`` with no command is
    a usage error (status 2). A value far outside the range met in neurons is used but draws one
    ``cabletheory: warning: ...`` line on stderr; if the computation then fails, the error names
    those options (status 2).
    """
    arguments = _attach_negative_values(sys.argv[1:] if argv is None else argv)
    flagged: list[str] = []  # options whose values drew an implausible-value warning

    def show_warning(message, category, filename, lineno, file=None, line=None) -> None:
        if issubclass(category, ImplausibleValueWarning):
            field = str(message).split(": ", 1)[0]
            if field not in flagged:
                flagged.append(field)
        _show_warning(message, category, filename, lineno, file, line)

    try:
        with warnings.catch_warnings():
            # a floating-point overflow or invalid operation means the inputs are outside what the
            # formulas can evaluate: report it instead of printing inf or nan
            warnings.simplefilter("error", RuntimeWarning)
            warnings.simplefilter("always", ImplausibleValueWarning)
            warnings.showwarning = show_warning
            return _run(arguments, open_app)
    except CableTheoryError as exc:
        _error(str(exc))
        return 2
    except BrokenPipeError:  # e.g. piped into `head`
        _silence_stdout()
        return 0
    except KeyboardInterrupt:
        _error("interrupted", prefix="cabletheory: ")
        return 130
    except (ArithmeticError, RuntimeWarning) as exc:  # overflow, division by zero, invalid operation
        _error(f"the inputs give numbers too large or too small to evaluate ({_detail(exc)}); "
               + _suspects(flagged))
        return 2
    except Exception as exc:
        if flagged and not os.environ.get("CABLETHEORY_TRACEBACK"):
            # values far outside the range met in neurons broke a computation: bad input, not a bug
            _error(f"the computation failed for these inputs ({_detail(exc)}); " + _suspects(flagged))
            return 2
        if os.environ.get("CABLETHEORY_TRACEBACK"):
            raise
        _error(f"{_detail(exc)} (a bug in cabletheory; run again with CABLETHEORY_TRACEBACK=1 set for the "
               "details and please report it)", prefix="cabletheory: internal error: ")
        return 70


# options that name a file a command writes; checked before any work so that a bad place fails at once
OUTPUT_OPTIONS = ("output", "report", "plot", "figure")


def _check_outputs(args: argparse.Namespace) -> None:
    for option in OUTPUT_OPTIONS:
        value = getattr(args, option, None)
        if isinstance(value, str):
            from ..output import check_output

            check_output(value, what=f"--{option}")


def _detail(exc: BaseException) -> str:
    text = " ".join(str(exc).split())[:200]
    return f"{type(exc).__name__}: {text}" if text else type(exc).__name__


def _suspects(flagged: list[str]) -> str:
    if flagged:
        return f"check {', '.join(flagged)}: far outside the values met in neurons (see the warnings)"
    return "check the magnitudes and units of the inputs"


def _run(arguments: list[str], open_app: Callable[..., None] | None = None) -> int:
    parser = build_parser(arguments[0] if arguments else None)
    if not [a for a in arguments if a != "--"]:
        raise InputError(f"no command given; choose one of {', '.join(COMMANDS)} ('cabletheory --help' "
                         "describes them)")
    args = parser.parse_args(arguments)
    if getattr(args, "run", None) is None:
        raise InputError(f"no command given; choose one of {', '.join(COMMANDS)} ('cabletheory --help' "
                         "describes them)")
    for key, value in vars(args).items():
        # argparse turns '--option=--' into an empty list (it drops the '--'); no option takes that
        if isinstance(value, list) and not value:
            raise InputError(f"--{key.replace('_', '-')}: '--' is not a value; give the option its value")
    args.open_app = open_app
    _check_outputs(args)
    limit = getattr(args, "max_file_size", None)
    with input_size_limit(limit or max_input_bytes()):
        return int(args.run(args))


def _one_line(message: str) -> str:
    return " ".join(message.split())


def _error(message: str, prefix: str = "cabletheory: error: ") -> None:
    with contextlib.suppress(OSError, ValueError):  # stderr closed or broken: nothing more can be said
        print(f"{prefix}{_one_line(message)}", file=sys.stderr, flush=True)


def _show_warning(message, category, filename, lineno, file=None, line=None) -> None:
    """Warnings the user should see, each on one stderr line; others as Python prints them."""
    if issubclass(category, ImplausibleValueWarning):
        _error(str(message), prefix="cabletheory: warning: ")
    else:
        _error(f"{category.__name__}: {message}", prefix="cabletheory: warning: ")


def _silence_stdout() -> None:
    """After a broken pipe, point stdout at /dev/null so that Python's exit flush stays quiet."""
    with contextlib.suppress(OSError, ValueError):
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
        os.close(devnull)


def entry() -> None:
    """Console-script entry point of the command line alone (the ``cabletheory`` program is
    :func:`cabletheory.__main__.entry`, which can also open the app)."""
    sys.exit(main())
