"""Reading the user's input files (morphologies, simulator output) safely.

Every input file is opened the same way:

* only a regular file is read: a folder, a device (``/dev/zero``), a pipe or a socket is refused
  at once, before a single byte is read (a device or a pipe could otherwise hang the run);
* its size is checked against a limit *before* it is read (default :data:`DEFAULT_LIMIT`,
  200 MB; the command line raises it with ``--max-file-size``), and at most the limit is ever
  read, even if the file grows meanwhile;
* text is UTF-8, with or without a byte-order mark.

Errors are :class:`~cabletheory.errors.MissingFileError` (no such file, a folder, unreadable) or
:class:`~cabletheory.errors.InputError` (too large, not a regular file, not UTF-8), each one line
naming the file. Standard library only (the core's rule).
"""

from __future__ import annotations

import os
import stat
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path

from .errors import CableTheoryError, FileFormatError, InputError, MissingFileError

__all__ = ["DEFAULT_LIMIT", "describe_size", "input_size_limit", "max_input_bytes", "read_input_bytes",
           "read_input_text"]

DEFAULT_LIMIT = 200_000_000  # bytes; a reconstructed neuron's SWC is well under 10 MB [CP]
_CHUNK = 1 << 20

# the current limit: one setting for the whole process (the app reads files in worker threads),
# changed only through input_size_limit()
_limit = [DEFAULT_LIMIT]


def max_input_bytes() -> int:
    """The largest input file, in bytes, that the readers accept now."""
    return _limit[0]


@contextmanager
def input_size_limit(limit: int) -> Iterator[None]:
    """Within the block, input files up to ``limit`` bytes are read (restored afterwards)."""
    if limit < 1:
        raise InputError(f"input size limit must be at least 1 byte, got {limit}")
    previous = _limit[0]
    _limit[0] = limit
    try:
        yield
    finally:
        _limit[0] = previous


def describe_size(size: int) -> str:
    """A byte count for people: '512 bytes', '12.5 kB', '1.07 GB' (decimal prefixes)."""
    if size < 1000:
        return f"{size} bytes"
    for factor, unit in ((1e12, "TB"), (1e9, "GB"), (1e6, "MB"), (1e3, "kB")):
        if size >= factor:
            return f"{size / factor:.3g} {unit}"
    return f"{size} bytes"  # pragma: no cover - unreachable


def read_input_bytes(path: str | os.PathLike[str], what: str) -> bytes:
    """The bytes of the regular file ``path``, refused if larger than :func:`max_input_bytes`.

    Parameters
    ----------
    path : the file the user named
    what : what the file is, for messages ("morphology file", "simulator output")
    """
    name = os.fspath(path)
    flags = os.O_RDONLY | getattr(os, "O_NONBLOCK", 0) | getattr(os, "O_CLOEXEC", 0)
    try:
        fd = os.open(name, flags)  # non-blocking: opening a pipe with no writer must not hang
    except FileNotFoundError:
        raise MissingFileError(f"{what} {name!r} does not exist") from None
    except IsADirectoryError:
        raise MissingFileError(f"{what} {name!r} is a folder, not a file") from None
    except PermissionError:
        raise MissingFileError(f"{what} {name!r} is not readable (permission denied)") from None
    except OSError as exc:
        raise MissingFileError(f"{what} {name!r} cannot be opened ({exc.strerror or type(exc).__name__})") from None
    try:
        info = os.fstat(fd)
        if stat.S_ISDIR(info.st_mode):
            raise MissingFileError(f"{what} {name!r} is a folder, not a file")
        if not stat.S_ISREG(info.st_mode):
            raise InputError(f"{what} {name!r} is not a regular file (a device, pipe or socket); give a file")
        limit = max_input_bytes()
        if info.st_size > limit:
            raise InputError(_too_large(name, what, info.st_size, limit))
        chunks: list[bytes] = []
        total = 0
        while True:
            try:
                chunk = os.read(fd, min(_CHUNK, limit + 1 - total))
            except BlockingIOError:  # pragma: no cover - regular files never block
                continue
            if not chunk:
                break
            chunks.append(chunk)
            total += len(chunk)
            if total > limit:  # the file grew while being read
                raise InputError(_too_large(name, what, total, limit, grew=True))
        return b"".join(chunks)
    except CableTheoryError:
        raise
    except OSError as exc:
        raise MissingFileError(f"{what} {name!r} cannot be read ({exc.strerror or type(exc).__name__})") from None
    finally:
        os.close(fd)


def _too_large(name: str, what: str, size: int, limit: int, *, grew: bool = False) -> str:
    more = "more than " if grew else ""
    return (f"{what} {name!r} is {more}{describe_size(size)}, above the limit of {describe_size(limit)} for input "
            "files; check that it is the right file, or raise the limit (command line: --max-file-size, e.g. "
            "--max-file-size 2GB)")


def read_input_text(path: str | os.PathLike[str], what: str) -> str:
    """The text of ``path`` (UTF-8, a leading byte-order mark dropped), read as :func:`read_input_bytes`.

    A byte sequence that is not UTF-8 is a :class:`~cabletheory.errors.FileFormatError` naming
    the file and line.
    """
    data = read_input_bytes(path, what)
    try:
        return data.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        line = data[:exc.start].count(b"\n") + 1
        raise FileFormatError(f"{Path(path)}:{line}: not UTF-8 text (byte {data[exc.start]:#04x}); expected a "
                              f"text file") from None
