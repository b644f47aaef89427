"""Output helpers below both front ends: JSON quantities, aligned tables, atomic writing, and the
words that describe a cylinder.

The command line (:mod:`cabletheory.cli`) and the terminal app (:mod:`cabletheory.tui`) both use
these, so that a result reads the same in either and neither front end imports the other. This
module sits at the unit boundary: it may use :mod:`cabletheory.units` (and so pint), the core never
imports it.
"""

from __future__ import annotations

import contextlib
import errno
import json
import math
import os
import signal
import stat
import threading
from collections.abc import Iterable, Iterator, Sequence
from pathlib import Path
from typing import Any

from .cable import Cylinder
from .case import describe_end
from .errors import InputError
from .units import format_quantity, si_unit

__all__ = ["CYLINDER_LABELS", "check_output", "dump_json", "echo_cylinder", "end_description", "end_label",
           "far_end_text", "input_resistance_label", "quantity", "table", "write_atomically"]

CYLINDER_LABELS: dict[str, str] = {
    "membrane_resistivity": "Rm (specific membrane resistance)",
    "axial_resistivity": "Ri (axial resistivity)",
    "membrane_capacitance": "Cm (specific membrane capacitance)",
    "diameter": "diameter",
    "length": "length",
    "end_conductance": "far end",
    "frequency": "frequency",
    "length_constant": "length constant λ",
    "membrane_time_constant": "membrane time constant τm",
    "electrotonic_length": "electrotonic length L = ℓ/λ",
    "semi_infinite_input_resistance": "semi-infinite input resistance R∞",
    "semi_infinite_input_conductance": "semi-infinite input conductance G∞",
    "end_conductance_ratio": "end conductance ratio B = G_end/G∞",
    "input_conductance": "input conductance G_in",
    "far_end_voltage_ratio": "far-end voltage ratio V(ℓ)/V(0)",
    "input_impedance_magnitude": "input impedance |Z_in|",
    "input_impedance_phase": "input impedance phase",
    "length_constant_at_frequency": "length constant at {frequency}",
}
"""The label of each result of one cylinder (keys of :class:`cabletheory.cable.CableSummary` and of
the ``cable`` command's JSON): the command line and the app show the same words for the same number."""


def end_description(cylinder: Cylinder) -> str:
    """The far end of a finite cylinder in words: sealed, killed, or leaky with its conductance and B."""
    g = cylinder.end_conductance
    if g == 0 or math.isinf(g):
        return describe_end(g)  # the case model's words for a sealed or killed end
    return f"leaky, {format_quantity(g, 'conductance')} (B = {cylinder.end_conductance_ratio:.4g})"


def echo_cylinder(cylinder: Cylinder) -> list[tuple[str, str]]:
    """The inputs as (label, value with unit) rows, so that nothing is silent."""
    labels = CYLINDER_LABELS
    return [
        (labels["membrane_resistivity"], format_quantity(cylinder.membrane_resistivity, "membrane_resistivity")),
        (labels["axial_resistivity"], format_quantity(cylinder.axial_resistivity, "axial_resistivity")),
        (labels["membrane_capacitance"], format_quantity(cylinder.membrane_capacitance, "membrane_capacitance")),
        (labels["diameter"], format_quantity(cylinder.diameter, "length")),
        (labels["length"], "semi-infinite" if math.isinf(cylinder.length) else format_quantity(cylinder.length,
                                                                                                "length")),
        (labels["end_conductance"], far_end_text(cylinder)),
    ]


def end_label(cylinder: Cylinder) -> str:
    """The far end in one or two words, for labels: sealed end, killed end, leaky end, semi-infinite."""
    if math.isinf(cylinder.length):
        return "semi-infinite"
    if cylinder.end_conductance == 0:
        return "sealed end"
    return "killed end" if math.isinf(cylinder.end_conductance) else "leaky end"


def input_resistance_label(cylinder: Cylinder) -> str:
    """The input resistance's label, which names the far end it holds for."""
    return f"input resistance R_in ({end_label(cylinder)})"


def far_end_text(cylinder: Cylinder) -> str:
    """The far end in words, also for a semi-infinite cylinder (which has none)."""
    return "none (semi-infinite)" if math.isinf(cylinder.length) else end_description(cylinder)


def quantity(value: float | Sequence[Any] | Any, kind: str) -> dict[str, Any]:
    """A JSON quantity: ``{"value": <SI number or nested list>, "unit": "<SI unit>"}``.

    Non-finite numbers become the strings "inf", "-inf" or "nan" (JSON has no literal for them).
    """
    return {"value": _jsonable(value), "unit": si_unit(kind)}


def _jsonable(value: Any) -> Any:
    if hasattr(value, "tolist"):
        value = value.tolist()
    if isinstance(value, list | tuple):
        return [_jsonable(v) for v in value]
    if isinstance(value, float) and not math.isfinite(value):
        return "nan" if math.isnan(value) else ("inf" if value > 0 else "-inf")
    return value


def dump_json(obj: Any) -> str:
    """JSON text of ``obj``: indented, UTF-8 kept, and no NaN or infinity literals (an error instead)."""
    return json.dumps(obj, indent=2, ensure_ascii=False, allow_nan=False)


def table(rows: Iterable[tuple[str, str]], title: str | None = None) -> str:
    """Two aligned columns: label and value-with-unit."""
    rows = list(rows)
    width = max((len(label) for label, _ in rows), default=0)
    lines = [title, "-" * len(title)] if title else []
    lines += [f"  {label.ljust(width)}  {value}" for label, value in rows]
    return "\n".join(lines)


def write_atomically(path: str | os.PathLike[str], data: str | bytes, *,
                     protected: Iterable[str | os.PathLike[str]] = (), what: str = "output") -> Path:
    """Write ``data`` to ``path`` so that ``path`` holds its old content or the new one, nothing else.

    * Only a regular file, or nothing, is replaced: a folder, a device (``/dev/null``), a pipe or a
      socket at ``path`` is refused, and so is a **symbolic link** (links are not followed, so a link
      planted in a shared folder cannot redirect the write; give the real file's path).
    * A file that exists keeps its permission bits; a new file gets the usual ones (0666 less the
      umask), like any file the user creates.
    * The data goes to an unnamed temporary file in the target's folder (Linux ``O_TMPFILE``; a
      hidden ``.cabletheory-*.tmp`` file elsewhere, removed on every exit path, including SIGTERM,
      SIGHUP and SIGINT), is flushed to disk (fsync), then takes the target's name in one rename,
      and the folder is synced. A kill at any moment leaves the old file or the new one.
    * ``protected`` lists the run's input files; writing over one of them is refused.

    Every failure (missing or read-only folder, a name too long, a full disk ...) is one
    :class:`~cabletheory.errors.InputError` line naming ``what`` and the file, with nothing left
    behind.
    """
    target, existing = _checked_target(path, protected, what)
    label = f"{what} {str(target)!r}"
    folder = target.parent
    mode = stat.S_IMODE(existing.st_mode) if existing is not None else 0o666 & ~_umask()
    owner = (existing.st_uid, existing.st_gid) if existing is not None else None
    payload = data if isinstance(data, bytes) else data.encode("utf-8")
    try:
        with _cleanup_on_signals():
            _replace(folder, target, payload, mode, owner)
    except OSError as exc:
        raise InputError(f"{label}: cannot write ({_reason(exc)}); nothing was changed") from None
    return target


def check_output(path: str | os.PathLike[str], *, protected: Iterable[str | os.PathLike[str]] = (),
                 what: str = "output") -> None:
    """Refuse now, before any work, an output that :func:`write_atomically` would refuse later
    (no such folder, a folder, device, pipe, socket or symbolic link in the way, a name too long,
    an input file); nothing is written."""
    _checked_target(path, protected, what)


def _checked_target(path: str | os.PathLike[str], protected: Iterable[str | os.PathLike[str]],
                    what: str) -> tuple[Path, os.stat_result | None]:
    target = Path(path)
    label = f"{what} {str(target)!r}" if what else repr(str(target))
    if not str(path):
        raise InputError(f"{what}: empty file name")
    for other in protected:
        with contextlib.suppress(OSError):
            if os.path.samefile(other, target):
                raise InputError(f"{label} is also an input file; choose another name")
    folder = target.parent
    try:
        existing = os.lstat(target)
    except FileNotFoundError:
        existing = None
    except OSError as exc:
        raise InputError(f"{label}: {_reason(exc)}") from None
    if existing is not None:
        if stat.S_ISLNK(existing.st_mode):
            raise InputError(f"{label} is a symbolic link; links are not followed, give the path of the file "
                             "itself")
        if stat.S_ISDIR(existing.st_mode):
            raise InputError(f"{label} is a folder; give a file name")
        if not stat.S_ISREG(existing.st_mode):
            raise InputError(f"{label} is not a regular file (a device, pipe or socket); it is never replaced")
    if not folder.is_dir():
        raise InputError(f"{what}: folder {str(folder)!r} does not exist")
    try:
        name_max = os.pathconf(folder, "PC_NAME_MAX")
    except (OSError, ValueError):
        name_max = 255
    if len(os.fsencode(target.name)) > name_max:
        raise InputError(f"{label}: the file name is {len(os.fsencode(target.name))} bytes long, more than the "
                         f"{name_max} this file system allows")
    return target, existing


def _umask() -> int:
    """The process's umask: from /proc (Linux), else by setting and restoring it."""
    try:
        with open("/proc/self/status", encoding="ascii") as status:
            for line in status:
                if line.startswith("Umask:"):
                    return int(line.split()[1], 8)
    except (OSError, ValueError, IndexError):
        pass
    current = os.umask(0o022)
    os.umask(current)
    return current


def _reason(exc: OSError) -> str:
    reasons = {errno.EACCES: "permission denied", errno.EPERM: "permission denied",
               errno.EROFS: "the file system is read-only", errno.ENOSPC: "no space left on the device",
               errno.EDQUOT: "the disk quota is used up", errno.ENAMETOOLONG: "the name is too long",
               errno.ENOTDIR: "a part of the path is not a folder", errno.ELOOP: "too many symbolic links",
               errno.EFBIG: "the file is too large for this file system", errno.EIO: "an input/output error"}
    return reasons.get(exc.errno or 0, exc.strerror or type(exc).__name__)


def _write_all(fd: int, payload: bytes) -> None:
    view = memoryview(payload)
    while view:
        written = os.write(fd, view)
        view = view[written:]


def _replace(folder: Path, target: Path, payload: bytes, mode: int, owner: tuple[int, int] | None) -> None:
    """Write, sync and rename; on any failure remove whatever was created and re-raise."""
    tmp_name: Path | None = None
    fd = _open_unnamed(folder)
    try:
        if fd is None:  # no O_TMPFILE here: a named temporary file, removed on failure
            with _signals_held():
                tmp_name, fd = _open_named(folder)
        _fill(fd, payload, mode, owner)
        if tmp_name is None:  # give the unnamed file a name (atomically, without replacing anything)
            try:
                with _signals_held():
                    tmp_name = _link_unnamed(fd, folder)
            except OSError as exc:
                if exc.errno not in (errno.ENOENT, errno.EPERM, errno.EOPNOTSUPP, errno.EXDEV):
                    raise
                os.close(fd)  # no /proc to link through: write a named file instead
                fd = None
                with _signals_held():
                    tmp_name, fd = _open_named(folder)
                _fill(fd, payload, mode, owner)
        os.replace(tmp_name, target)
        tmp_name = None
        _sync_folder(folder)
    finally:
        if fd is not None:
            os.close(fd)
        if tmp_name is not None:
            with contextlib.suppress(OSError):
                os.unlink(tmp_name)


def _fill(fd: int, payload: bytes, mode: int, owner: tuple[int, int] | None) -> None:
    """The content, the permission bits (and owner, where allowed), flushed to the disk."""
    _write_all(fd, payload)
    os.fchmod(fd, mode)
    if owner is not None:
        with contextlib.suppress(OSError):  # only the owner's group or root may keep them
            os.fchown(fd, *owner)
    os.fsync(fd)


def _open_unnamed(folder: Path) -> int | None:
    flag = getattr(os, "O_TMPFILE", None)
    if flag is None:
        return None
    try:
        return os.open(folder, flag | os.O_WRONLY | getattr(os, "O_CLOEXEC", 0), 0o600)
    except OSError as exc:
        if exc.errno in (errno.EOPNOTSUPP, errno.EISDIR, errno.EINVAL, errno.ENOENT):
            return None  # the file system has no unnamed files: use a named one
        raise


def _temporary_name(folder: Path) -> Path:
    return folder / f".cabletheory-{os.urandom(6).hex()}.tmp"  # (not `secrets`: its import costs 20 ms)


@contextlib.contextmanager
def _signals_held() -> Iterator[None]:
    """Ctrl-C, SIGTERM and SIGHUP wait while a temporary file is created and its name recorded: a
    signal handled between the two (Python raises at the first check after a call returns) would
    leave a file that the clean-up cannot name."""
    if not hasattr(signal, "pthread_sigmask"):
        yield
        return
    wanted = {getattr(signal, name) for name in ("SIGINT", "SIGTERM", "SIGHUP") if hasattr(signal, name)}
    previous = signal.pthread_sigmask(signal.SIG_BLOCK, wanted)
    try:
        yield
    finally:
        signal.pthread_sigmask(signal.SIG_SETMASK, previous)


def _open_named(folder: Path) -> tuple[Path, int]:
    while True:
        name = _temporary_name(folder)
        try:
            return name, os.open(name, os.O_WRONLY | os.O_CREAT | os.O_EXCL | getattr(os, "O_CLOEXEC", 0), 0o600)
        except FileExistsError:
            continue


def _link_unnamed(fd: int, folder: Path) -> Path:
    """A name for the unnamed file ``fd`` (linkat through /proc/self/fd, following the magic link)."""
    proc = os.open("/proc/self/fd", os.O_RDONLY | getattr(os, "O_DIRECTORY", 0))
    try:
        while True:
            name = _temporary_name(folder)
            try:
                os.link(str(fd), name, src_dir_fd=proc, follow_symlinks=True)
                return name
            except FileExistsError:
                continue
    finally:
        os.close(proc)


def _sync_folder(folder: Path) -> None:
    """Make the rename durable (best effort: some file systems cannot sync a folder)."""
    try:
        dir_fd = os.open(folder, os.O_RDONLY | getattr(os, "O_DIRECTORY", 0))
    except OSError:
        return
    try:
        with contextlib.suppress(OSError):
            os.fsync(dir_fd)
    finally:
        os.close(dir_fd)


class _Terminated(BaseException):
    """Raised by the temporary signal handler so that clean-up runs before the process ends."""

    def __init__(self, signum: int) -> None:
        super().__init__(signum)
        self.signum = signum


@contextlib.contextmanager
def _cleanup_on_signals() -> Iterator[None]:
    """While writing, SIGTERM and SIGHUP raise (so ``finally`` removes the temporary file), and the
    process then ends by the same signal. Only the main thread can set handlers; elsewhere this
    does nothing (the unnamed temporary file then needs no clean-up)."""
    if threading.current_thread() is not threading.main_thread():
        yield
        return
    wanted = [getattr(signal, name) for name in ("SIGTERM", "SIGHUP") if hasattr(signal, name)]

    def handler(signum: int, frame: object) -> None:
        raise _Terminated(signum)

    previous = {}
    for signum in wanted:
        with contextlib.suppress(ValueError, OSError):
            previous[signum] = signal.signal(signum, handler)
    try:
        yield
    except _Terminated as stop:
        for signum, old in previous.items():
            signal.signal(signum, old)
        previous.clear()
        signal.signal(stop.signum, signal.SIG_DFL)
        os.kill(os.getpid(), stop.signum)  # end as the signal asked, now that nothing is left behind
        raise
    finally:
        for signum, old in previous.items():
            signal.signal(signum, old)
