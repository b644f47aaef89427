"""Writing output files (cabletheory.output.write_atomically): the old file or the new, nothing else.

Issue 11: outputs were always mode 0600; a killed write left hidden temporary files; a device, a
symlink and a read-only target were replaced by a regular file (as root, /dev/null itself); no
fsync; a read-only folder, a 300-byte name or a full disk gave a traceback.
"""

from __future__ import annotations

import errno
import os
import random
import signal
import stat
import subprocess
import sys
import textwrap
import time

import pytest

from cabletheory import output
from cabletheory.errors import InputError
from cabletheory.output import write_atomically


@pytest.fixture
def umask():
    def set_mask(mask: int) -> None:
        os.umask(mask)

    previous = os.umask(0o022)
    os.umask(previous)
    yield set_mask
    os.umask(previous)


@pytest.mark.parametrize(("mask", "mode"), [(0o022, 0o644), (0o002, 0o664), (0o077, 0o600)])
def test_a_new_file_gets_the_usual_mode_from_the_umask(tmp_path, umask, mask, mode):
    umask(mask)
    path = write_atomically(tmp_path / "result.csv", "a,b\n")
    assert stat.S_IMODE(path.stat().st_mode) == mode
    assert path.read_text() == "a,b\n"
    assert sorted(os.listdir(tmp_path)) == ["result.csv"]


def test_an_existing_file_keeps_its_mode(tmp_path, umask):
    umask(0o077)
    path = tmp_path / "shared.json"
    path.write_text("old")
    path.chmod(0o664)
    write_atomically(path, b"new")
    assert stat.S_IMODE(path.stat().st_mode) == 0o664
    assert path.read_bytes() == b"new"


def test_text_is_written_as_utf8_without_newline_translation(tmp_path):
    path = write_atomically(tmp_path / "t.txt", "λ = 1 mm\r\nτ\n")
    assert path.read_bytes() == "λ = 1 mm\r\nτ\n".encode()


def _listing(folder):
    return sorted(os.listdir(folder))


@pytest.mark.parametrize(
    ("make", "message"),
    [
        (lambda p: p.mkdir(), r"is a folder; give a file name"),
        (lambda p: os.mkfifo(p), r"is not a regular file \(a device, pipe or socket\); it is never replaced"),
        (lambda p: os.symlink(p.with_name("real.csv"), p), r"is a symbolic link; links are not followed"),
    ],
)
def test_only_a_regular_file_is_ever_replaced(tmp_path, make, message):
    (tmp_path / "real.csv").write_text("the link's target")
    target = tmp_path / "out.csv"
    make(target)
    before = _listing(tmp_path)
    with pytest.raises(InputError, match=message):
        write_atomically(target, "new")
    assert _listing(tmp_path) == before
    assert (tmp_path / "real.csv").read_text() == "the link's target"


def test_a_device_is_never_replaced():
    before = os.stat("/dev/null")
    with pytest.raises(InputError, match=r"^output '/dev/null' is not a regular file"):
        write_atomically("/dev/null", "x")
    after = os.stat("/dev/null")
    assert stat.S_ISCHR(after.st_mode)
    assert (after.st_ino, after.st_rdev) == (before.st_ino, before.st_rdev)


def test_an_input_file_is_never_overwritten(tmp_path):
    source = tmp_path / "run.csv"
    source.write_text("data")
    with pytest.raises(InputError, match="is also an input file"):
        write_atomically(tmp_path / "." / "run.csv", "x", protected=[source])
    assert source.read_text() == "data"


@pytest.mark.parametrize(
    ("name", "message"),
    [("missing/out.csv", r"folder '.*missing' does not exist"), ("n" * 296 + ".csv", r"the name is too long"),
     ("", r"^output: empty file name$")],
)
def test_impossible_names_are_one_line(tmp_path, name, message):
    target = (tmp_path / name) if name else ""
    with pytest.raises(InputError, match=message) as info:
        write_atomically(target, "x")
    assert "\n" not in str(info.value)
    assert _listing(tmp_path) == []


def _failing(call, error_number, after=0, chunk=None):
    """``call`` that fails with ``error_number`` after ``after`` successful calls (each passing at
    most ``chunk`` bytes of a write, so that the writer must loop)."""
    count = {"n": 0}

    def fail(*args, **kwargs):
        count["n"] += 1
        if count["n"] > after:
            raise OSError(error_number, os.strerror(error_number))
        if chunk is not None:
            args = (args[0], bytes(args[1][:chunk]))
        return call(*args, **kwargs)

    return fail


@pytest.mark.parametrize("unnamed", [True, False], ids=["unnamed temporary", "named temporary"])
def test_a_full_disk_leaves_the_old_file_and_nothing_else(tmp_path, monkeypatch, unnamed):
    if not unnamed:
        monkeypatch.setattr(output, "_open_unnamed", lambda folder: None)
    path = tmp_path / "big.csv"
    path.write_text("old")
    monkeypatch.setattr(output.os, "write", _failing(os.write, errno.ENOSPC, after=2, chunk=1_000_000))
    with pytest.raises(InputError, match=r"big\.csv': cannot write \(no space left on the device\); nothing was "
                                         r"changed$"):
        write_atomically(path, b"x" * 5_000_000)
    assert path.read_text() == "old"
    assert _listing(tmp_path) == ["big.csv"]


@pytest.mark.parametrize("error_number", [errno.EACCES, errno.EROFS])
def test_a_read_only_folder_is_one_line(tmp_path, monkeypatch, error_number):
    """Simulated (the tests may run as root, who may write anywhere): creating any file fails."""
    real_open = os.open

    def refuse_create(path, flags, *args, **kwargs):
        if flags & (os.O_CREAT | getattr(os, "O_TMPFILE", 0)):
            raise OSError(error_number, os.strerror(error_number))
        return real_open(path, flags, *args, **kwargs)

    monkeypatch.setattr(output.os, "open", refuse_create)
    with pytest.raises(InputError, match=r"out\.csv': cannot write \((permission denied|the file system is "
                                         r"read-only)\); nothing was changed"):
        write_atomically(tmp_path / "out.csv", "x")
    assert _listing(tmp_path) == []


def test_the_data_and_the_folder_are_synced_before_and_after_the_rename(tmp_path, monkeypatch):
    events = []
    real_fsync, real_replace = os.fsync, os.replace
    monkeypatch.setattr(output.os, "fsync", lambda fd: (events.append(("fsync", stat.S_ISDIR(os.fstat(fd).st_mode))),
                                                        real_fsync(fd)))
    monkeypatch.setattr(output.os, "replace", lambda a, b: (events.append(("rename", None)), real_replace(a, b)))
    write_atomically(tmp_path / "out.csv", "x")
    assert events == [("fsync", False), ("rename", None), ("fsync", True)]


def test_without_unnamed_files_the_named_temporary_is_removed_on_failure(tmp_path, monkeypatch):
    monkeypatch.setattr(output, "_open_unnamed", lambda folder: None)
    monkeypatch.setattr(output.os, "fsync", _failing(os.fsync, errno.EIO))
    with pytest.raises(InputError, match=r"an input/output error"):
        write_atomically(tmp_path / "out.csv", "x")
    assert _listing(tmp_path) == []
    monkeypatch.undo()
    monkeypatch.setattr(output, "_open_unnamed", lambda folder: None)
    write_atomically(tmp_path / "out.csv", "y")
    assert _listing(tmp_path) == ["out.csv"]


# --------------------------------------------------------------------------------------
# a kill at any moment of a write: the old file or the new one, nothing else
# --------------------------------------------------------------------------------------
WRITER = textwrap.dedent("""
    import os
    import sys
    import time
    from cabletheory import output
    if sys.argv[2] == "named":
        output._open_unnamed = lambda folder: None
    new = b"N" * 8_000_000
    while sys.stdin.readline():  # one round per line: a writer forked from this interpreter
        pid = os.fork()
        if pid == 0:
            try:
                # ready only now: a signal that came before the fork had returned here would be lost
                print(os.getpid(), flush=True)
                while True:
                    output.write_atomically(sys.argv[1], new)
            finally:  # a writer that survived its signal (KeyboardInterrupt) never runs this loop
                os._exit(1)
        for _ in range(3000):  # 30 s, a hang guard
            if os.waitpid(pid, os.WNOHANG)[0]:
                print("done", flush=True)
                break
            time.sleep(0.01)
        else:
            os.kill(pid, 9)
            os.waitpid(pid, 0)
            print("still writing 30 s after the signal", flush=True)
""")

OLD = b"O" * 1000
NEW_SIZE = 8_000_000


def _default_interrupt() -> None:
    """In the child: Ctrl-C's default action, even when this test runs in the background (where a
    shell starts jobs with SIGINT ignored, which the child would inherit)."""
    signal.signal(signal.SIGINT, signal.SIG_DFL)


@pytest.mark.parametrize(
    ("mode", "signum"),
    [("unnamed", signal.SIGKILL), ("unnamed", signal.SIGTERM), ("named", signal.SIGTERM), ("named", signal.SIGINT),
     ("named", signal.SIGHUP)],
)
def test_a_kill_at_a_random_moment_leaves_the_old_file_or_the_new(tmp_path, mode, signum):
    """SIGKILL cannot be caught: only the unnamed temporary file (O_TMPFILE) survives it without a
    trace, so the named fallback is checked with the signals it can catch.

    Each of the eight writers is forked from one interpreter that has imported the package (the
    signal dispositions of a new interpreter: Ctrl-C raises KeyboardInterrupt, the others their
    default), so that starting Python is paid once per signal, not once per kill."""
    rng = random.Random(20261203 + signum)
    target = tmp_path / "result.bin"
    server = subprocess.Popen([sys.executable, "-c", WRITER, str(target), mode], stdin=subprocess.PIPE,
                              stdout=subprocess.PIPE, preexec_fn=_default_interrupt)
    try:
        for _ in range(8):
            target.write_bytes(OLD)
            server.stdin.write(b"go\n")
            server.stdin.flush()
            pid = int(server.stdout.readline())
            time.sleep(rng.uniform(0.0, 0.15))
            os.kill(pid, signum)
            assert server.stdout.readline() == b"done\n"
            assert _listing(tmp_path) == ["result.bin"]
            content = target.read_bytes()
            assert content == OLD or (len(content) == NEW_SIZE and content == b"N" * NEW_SIZE)
    finally:
        server.stdin.close()
        server.wait(timeout=30)
        server.stdout.close()
