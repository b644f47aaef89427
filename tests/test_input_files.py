"""Input files are read one safe way (cabletheory.textfile): regular files only, size checked first.

Issue 11: a 1 GB SWC or CSV was read whole (2.1 GB of memory) before any error; an SWC starting
with a byte-order mark was refused; a device or a pipe would be read forever.
"""

from __future__ import annotations

import os

import pytest

from cabletheory import textfile
from cabletheory.errors import FileFormatError, InputError, MissingFileError
from cabletheory.morphology import read_morphology, read_swc
from cabletheory.textfile import describe_size, input_size_limit, read_input_bytes, read_input_text

SWC = "1 1 0 0 0 5 -1\n2 3 0 10 0 1 1\n3 3 0 20 0 1 2\n"


def test_an_swc_with_a_byte_order_mark_reads_like_one_without(tmp_path):
    plain = tmp_path / "plain.swc"
    marked = tmp_path / "marked.swc"
    plain.write_text(SWC, encoding="utf-8")
    marked.write_bytes(b"\xef\xbb\xbf" + SWC.encode())
    a, b = read_swc(plain), read_swc(marked)
    assert a.ids.tolist() == b.ids.tolist() == [1, 2, 3]
    assert (a.positions == b.positions).all()
    # also when the format is told from the content rather than the extension
    other = tmp_path / "marked.txt"
    other.write_bytes(b"\xef\xbb\xbf" + SWC.encode())
    assert read_morphology(other).ids.tolist() == [1, 2, 3]


def test_a_file_over_the_limit_is_refused_without_being_read(tmp_path, monkeypatch):
    big = tmp_path / "big.swc"
    with open(big, "wb") as fh:
        fh.truncate(textfile.DEFAULT_LIMIT + 1)  # sparse: no disk space used

    def no_read(*args):
        raise AssertionError("the file was read before its size was checked")

    monkeypatch.setattr(textfile.os, "read", no_read)
    with pytest.raises(InputError, match=r"^morphology file '.*big\.swc' is 200 MB, above the limit of 200 MB "
                                         r"for input files; .*--max-file-size") as info:
        read_swc(big)
    assert "\n" not in str(info.value)


def test_the_limit_can_be_raised_and_lowered(tmp_path):
    small = tmp_path / "small.swc"
    small.write_text(SWC)
    with input_size_limit(10), pytest.raises(InputError, match=r"is 45 bytes, above the limit of 10 bytes"):
        read_swc(small)
    assert textfile.max_input_bytes() == textfile.DEFAULT_LIMIT  # restored
    with input_size_limit(len(SWC)):
        assert len(read_swc(small)) == 3


@pytest.mark.parametrize(
    ("make", "error", "message"),
    [
        (lambda p: None, MissingFileError, r"does not exist"),
        (lambda p: p.mkdir(), MissingFileError, r"is a folder, not a file"),
        (lambda p: os.mkfifo(p), InputError, r"is not a regular file \(a device, pipe or socket\)"),
    ],
)
def test_only_regular_files_are_read(tmp_path, make, error, message):
    path = tmp_path / "thing.swc"
    make(path)
    with pytest.raises(error, match=message):
        read_input_bytes(path, "morphology file")  # a fifo with no writer must not hang


def test_a_device_is_refused_before_reading():
    with pytest.raises(InputError, match=r"'/dev/zero' is not a regular file"):
        read_input_bytes("/dev/zero", "simulator output")


@pytest.mark.skipif(os.geteuid() == 0, reason="root reads any file")
def test_an_unreadable_file_is_one_line(tmp_path):
    path = tmp_path / "locked.csv"
    path.write_text("time (ms),V at 0 um (mV)\n0,0\n")
    path.chmod(0)
    with pytest.raises(MissingFileError, match=r"is not readable \(permission denied\)"):
        read_input_text(path, "simulator output")


def test_text_that_is_not_utf8_names_its_line(tmp_path):
    path = tmp_path / "latin1.csv"
    path.write_bytes(b"time (ms),V at 0 um (mV)\n0,0\n1,\xe9\n")
    with pytest.raises(FileFormatError, match=r"latin1\.csv:3: not UTF-8 text \(byte 0xe9\)"):
        read_input_text(path, "simulator output")
    assert read_input_text(_bom(tmp_path), "simulator output") == "a,b\n"


def _bom(tmp_path):
    path = tmp_path / "bom.csv"
    path.write_bytes(b"\xef\xbb\xbfa,b\n")
    return path


@pytest.mark.parametrize(("size", "text"), [(0, "0 bytes"), (999, "999 bytes"), (1000, "1 kB"),
                                            (200_000_000, "200 MB"), (1_073_741_824, "1.07 GB")])
def test_sizes_are_described_in_decimal_prefixes(size, text):
    assert describe_size(size) == text
