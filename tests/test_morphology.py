"""Reading SWC files and section lists: what is accepted, and a clear error for each malformed case.

The SWC layout (seven fields ``id type x y z radius parent``, parent -1 for the root, type 1
soma, 2 axon, 3 basal, 4 apical) is the open community format [CP].
"""

from __future__ import annotations

import numpy as np
import pytest

from cabletheory.errors import FileFormatError, MissingFileError
from cabletheory.morphology import (
    format_section_list,
    parse_section_list,
    parse_swc,
    read_morphology,
    read_swc,
)

GOOD_SWC = """# a small cell
1 1 0 0 0 5 -1
2 3 10 0 0 1 1
3 3 20 0 0 1 2
4 3 30 5 0 0.5 3
5 3 30 -5 0 0.5 3
"""


def test_swc_points_in_si_and_in_order():
    points = parse_swc(GOOD_SWC, "cell.swc")
    assert len(points) == 5
    assert points.ids.tolist() == [1, 2, 3, 4, 5]
    assert points.parents.tolist() == [-1, 0, 1, 2, 2]
    assert points.radii[0] == pytest.approx(5e-6)
    np.testing.assert_allclose(points.positions[3], [30e-6, 5e-6, 0.0])
    assert points.lines.tolist() == [2, 3, 4, 5, 6]


def test_child_before_parent_is_reordered():
    text = "3 3 20 0 0 1 2\n2 3 10 0 0 1 1\n1 1 0 0 0 5 -1\n"
    points = parse_swc(text)
    assert points.ids.tolist() == [1, 2, 3]
    assert points.parents.tolist() == [-1, 0, 1]
    assert points.lines.tolist() == [3, 2, 1]
    assert points.reordered == 2
    assert parse_swc(GOOD_SWC).reordered == 0


def test_integral_floats_and_comments_after_data_are_accepted():
    points = parse_swc("1.0 1 0 0 0 5 -1   # soma\n2 3.0 10 0 0 1 1.0\n")
    assert points.types.tolist() == [1, 3]


BAD_SWC = [
    ("", ":", "no points"),
    ("# only a comment\n\n", ":", "no points"),
    ("1 1 0 0 0 5\n", ":1:", "6 fields"),
    ("1 1 0 0 0 5 -1 7\n", ":1:", "8 fields"),
    ("1 1 0 zero 0 5 -1\n", ":1:", "field 'y'"),
    ("1 1 0 0 0 5 -1\n2 3 10 0 0 nan 1\n", ":2:", "field 'radius'"),
    ("1 1 0 0 0 5 -1\n2 3 inf 0 0 1 1\n", ":2:", "field 'x'"),
    ("1 1 0 0 0 5 -1\n2 3.5 10 0 0 1 1\n", ":2:", "field 'type'"),
    ("1 1 0 0 0 5 -1\n2 3 10 0 0 1 1\n2 3 20 0 0 1 1\n", ":3:", "duplicate id 2 (first defined at line 2)"),
    ("1 1 0 0 0 5 -1\n2 3 10 0 0 1 9\n", ":2:", "parent 9 of point 2 is not defined"),
    ("1 1 0 0 0 5 -1\n2 3 10 0 0 1 -1\n", ":2:", "several roots"),
    ("1 1 0 0 0 5 -1\n2 3 10 0 0 1 3\n3 3 20 0 0 1 2\n", ":2:", "cycle"),
    ("1 3 0 0 0 1 2\n2 3 10 0 0 1 1\n", ":", "no root"),
    ("1 1 0 0 0 5 -1\n2 3 10 0 0 0 1\n", ":2:", "not positive"),
    ("1 1 0 0 0 5 -1\n2 3 10 0 0 -1 1\n", ":2:", "not positive"),
    ("1 1 0 0 0 5 -1\n2 3 10 0 0 1 2\n", ":2:", "its own parent"),
    ("-4 1 0 0 0 5 -1\n", ":1:", "negative"),
    ("1 1 0 0 0 5 -1\n2 3 10 0 0 1 -7\n", ":2:", "parent -7 is invalid"),
]


@pytest.mark.parametrize(("text", "where", "message"), BAD_SWC)
def test_malformed_swc_names_the_line(text, where, message):
    with pytest.raises(FileFormatError) as info:
        parse_swc(text, "bad.swc")
    text_of_error = str(info.value)
    assert text_of_error.startswith(f"bad.swc{where}")
    assert message in text_of_error
    assert "\n" not in text_of_error


@pytest.mark.parametrize(("data", "line"), [
    (b"1 1 0 0 0 5 -1\n2 3 10\x00\x01 0 0 1 1\n", 2),
    (b"1 1 0 0 0 5 -1\n\xff\xfe\x80 3 10 0 0 1 1\n", 2),
    (b"\x89PNG\r\n\x1a\n\x00\x00", 1),
])
def test_binary_junk_is_refused(tmp_path, data, line):
    path = tmp_path / "junk.swc"
    path.write_bytes(data)
    with pytest.raises(FileFormatError, match=rf"junk\.swc:{line}: binary or undecodable data"):
        read_swc(path)


def test_non_utf8_comment_is_tolerated(tmp_path):
    path = tmp_path / "latin.swc"
    path.write_bytes(b"# diam\xe8tre en \xb5m\n1 1 0 0 0 5 -1\n")
    assert len(read_swc(path)) == 1


def test_missing_file(tmp_path):
    with pytest.raises(MissingFileError, match="does not exist"):
        read_morphology(tmp_path / "nothing.swc")


GOOD_TREE = """# demo
soma 20 um
trunk  root   300 um  4um
left   trunk  0.3 mm  2.5
right  trunk  300     2.5   1.5   # tapering
"""


def test_section_list_units_and_taper():
    sections = parse_section_list(GOOD_TREE, "demo.tree")
    assert sections.names == ("trunk", "left", "right")
    assert sections.parents.tolist() == [-1, 0, 0]
    np.testing.assert_allclose(sections.lengths, [300e-6, 300e-6, 300e-6])
    np.testing.assert_allclose(sections.diameters, [4e-6, 2.5e-6, 2.5e-6])
    np.testing.assert_allclose(sections.end_diameters, [4e-6, 2.5e-6, 1.5e-6])
    assert sections.soma_diameter == pytest.approx(20e-6)
    assert sections.lines.tolist() == [3, 4, 5]


def test_section_list_any_order():
    sections = parse_section_list("b a 10 1\na root 10 2\n")
    assert sections.names == ("a", "b")
    assert sections.parents.tolist() == [-1, 0]


BAD_TREE = [
    ("", ":", "no sections"),
    ("a root 10\n", ":1:", "expected 'name parent length diameter"),
    ("a root 10 2 1 7\n", ":1:", "unexpected extra field"),
    ("a root ten 2\n", ":1:", "length 'ten' is not a number"),
    ("a root 10 2 furlongs\n", ":1:", "unknown unit 'furlongs' after '2'"),
    ("a root 10inch 2\n", ":1:", "unknown unit 'inch'"),
    ("a root -10 2\n", ":1:", "negative"),
    ("a root 10 0\n", ":1:", "diameter of section 'a' must be positive"),
    ("a root 10 2\nb c 10 1\n", ":2:", "parent 'c' of section 'b' is not defined"),
    ("a root 10 2\na root 10 1\n", ":2:", "duplicate section name 'a' (first defined at line 1)"),
    ("a b 10 2\nb a 10 1\n", ":1:", "cycle"),
    ("root root 10 2\n", ":1:", "reserved"),
    ("a a 10 2\n", ":1:", "its own parent"),
    ("soma 10\nsoma 12\na root 10 2\n", ":2:", "second 'soma' line"),
    ("soma\na root 10 2\n", ":1:", "needs a diameter"),
    ("a$ root 10 2\n", ":1:", "section name"),
]


@pytest.mark.parametrize(("text", "where", "message"), BAD_TREE)
def test_malformed_section_list_names_the_line(text, where, message):
    with pytest.raises(FileFormatError) as info:
        parse_section_list(text, "bad.tree")
    assert str(info.value).startswith(f"bad.tree{where}")
    assert message in str(info.value)


def test_round_trip_through_the_writer():
    text = format_section_list(["t", "a", "b"], ["root", "t", "t"], [3e-4, 2e-4, 2e-4], [4e-6, 2e-6, 2e-6],
                               [4e-6, 2e-6, 1e-6], soma_diameter=2e-5, comments=("made here",))
    sections = parse_section_list(text)
    np.testing.assert_allclose(sections.lengths, [3e-4, 2e-4, 2e-4], rtol=1e-12)
    np.testing.assert_allclose(sections.end_diameters, [4e-6, 2e-6, 1e-6], rtol=1e-12)
    assert sections.soma_diameter == pytest.approx(2e-5, rel=1e-12)


def test_format_is_sniffed_when_the_extension_is_unknown(tmp_path):
    swc = tmp_path / "cell.txt"
    swc.write_text(GOOD_SWC)
    tree = tmp_path / "cell.dat"
    tree.write_text(GOOD_TREE)
    assert type(read_morphology(swc)).__name__ == "SwcPoints"
    assert type(read_morphology(tree)).__name__ == "SectionList"


def test_vectorised_and_line_by_line_parsers_agree():
    """The fast path for well-formed files gives exactly what the line-by-line parser gives."""
    from pathlib import Path

    from cabletheory.morphology import _parse_swc_lines

    path = Path(__file__).resolve().parent.parent / "cabletheory" / "data" / "morphologies"
    text = (path / "lumenia_pv7_interneuron.swc").read_text()
    fast, slow = parse_swc(text, "x"), _parse_swc_lines(text, "x")
    for name in ("ids", "types", "positions", "radii", "parents", "lines"):
        np.testing.assert_array_equal(getattr(fast, name), getattr(slow, name))
