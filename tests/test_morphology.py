"""Reading SWC files and tree outlines: what is accepted, and a clear error for each malformed case.

The SWC layout (seven fields ``id type x y z radius parent``, parent -1 for the root, type 1
soma, 2 axon, 3 basal, 4 apical) is the open community format [CP].
"""

from __future__ import annotations

import numpy as np
import pytest

from cabletheory.errors import FileFormatError, MissingFileError
from cabletheory.inputs import read_outline_value
from cabletheory.morphology import (
    format_outline,
    parse_outline,
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


GOOD_TREE = """# cabletheory tree outline v1
soma diameter=20um
trunk length=300um diameter=4um
  left length=0.3mm diameter=2.5      # bare numbers are µm
    left-tip length=10 diameter=1 end=killed
  right length=300\tdiameter=2.5..1.5 end=0.5nS  # tapering; a tab between fields is a blank
"""


def parse(text: str, source: str = "<outline>"):
    return parse_outline(text, read_outline_value, source)


def test_outline_units_nesting_taper_and_ends():
    outline = parse(GOOD_TREE, "demo.outline")
    assert outline.names == ("trunk", "left", "left-tip", "right")
    assert outline.parents.tolist() == [-1, 0, 1, 0]
    np.testing.assert_allclose(outline.lengths, [300e-6, 300e-6, 10e-6, 300e-6])
    np.testing.assert_allclose(outline.diameters, [4e-6, 2.5e-6, 1e-6, 2.5e-6])
    np.testing.assert_allclose(outline.end_diameters, [4e-6, 2.5e-6, 1e-6, 1.5e-6])
    assert outline.ends.tolist() == [0.0, 0.0, np.inf, pytest.approx(0.5e-9)]
    assert outline.soma_diameter == pytest.approx(20e-6)
    assert outline.lines.tolist() == [3, 4, 5, 6]


def test_outline_indentation_of_any_width_and_dedent_to_any_level():
    text = "a length=1 diameter=1\n    b length=1 diameter=1\n        c length=1 diameter=1\n" \
           "    d length=1 diameter=1\ne length=1 diameter=1\n   f length=1 diameter=1\n"
    outline = parse(text)
    assert outline.parents.tolist() == [-1, 0, 1, 0, -1, 4]


BAD_TREE = [
    ("", ":", "no branches"),
    ("# only a comment\n", ":", "no branches"),
    ("a length=10\n", ":1:1:", "needs a diameter"),
    ("a diameter=2\n", ":1:1:", "needs a length"),
    ("a length=10 diameter=2 colour=red\n", ":1:24:", "unknown field 'colour'"),
    ("a length=10 length=12 diameter=2\n", ":1:13:", "field 'length' given twice"),
    ("a length= diameter=2\n", ":1:3:", "field 'length' has no value"),
    ("a length=ten diameter=2\n", ":1:10:", "length: cannot read 'ten'"),
    ("a length=10 diameter=2furlongsx\n", ":1:22:", "diameter"),
    ("a length=-10 diameter=2\n", ":1:10:", "must be finite and >= 0"),
    ("a length=10 diameter=0\n", ":1:22:", "diameter '0' must be finite and positive"),
    ("a length=10 diameter=2..1..0.5\n", ":1:22:", "more than one '..'"),
    ("a length=10 diameter=2\n  b length=10 diameter=1\na length=3 diameter=1\n", ":3:1:",
     "duplicate branch name 'a' (first defined at line 1)"),
    ("  a length=10 diameter=2\n", ":1:3:", "the first line is indented"),
    ("a length=10 diameter=2\n\tb length=10 diameter=1\n", ":2:1:", "tab in the indentation"),
    ("a length=10 diameter=2\n  \tb length=10 diameter=1\n", ":2:3:", "tab in the indentation"),
    ("a length=10 diameter=2\n    b length=10 diameter=1\n  c length=10 diameter=1\n", ":3:3:",
     "lines up with no enclosing branch"),
    ("a length=10 diameter=2 end=killed\n  b length=10 diameter=1\n", ":1:28:", "'end=' belongs on a tip"),
    ("a length=10 diameter=2 end=open\n", ":1:28:", "end: 'open' is not 'sealed', 'killed' or a conductance"),
    ("a length=10 diameter=2 end=-1nS\n", ":1:28:", "negative"),
    ("a root 10 2\n", ":1:3:", "'root' is not a field; expected key=value"),
    ("length=10 diameter=2\n", ":1:1:", "expected a branch name first"),
    ("a$ length=10 diameter=2\n", ":1:1:", "branch name 'a$'"),
    ("soma diameter=10\nsoma diameter=12\na length=10 diameter=2\n", ":2:1:", "second 'soma' line"),
    ("soma\na length=10 diameter=2\n", ":1:1:", "'soma' needs a diameter"),
    ("soma diameter=10 length=3\n", ":1:18:", "the soma takes only a diameter"),
    ("soma diameter=10..8\n", ":1:15:", "give one diameter"),
    ("soma diameter=10\n  a length=10 diameter=2\n", ":2:3:", "nothing may be nested under the 'soma' line"),
    ("a length=10 diameter=2\n  soma diameter=10\n", ":2:3:", "'soma' must be at the left margin"),
]


@pytest.mark.parametrize(("text", "where", "message"), BAD_TREE)
def test_malformed_outline_names_line_and_column(text, where, message):
    with pytest.raises(FileFormatError) as info:
        parse(text, "bad.outline")
    assert str(info.value).startswith(f"bad.outline{where}")
    assert message in str(info.value)


def test_round_trip_through_the_writer():
    text = format_outline(["t", "a", "b"], [-1, 0, 0], [3e-4, 2e-4, 2e-4], [4e-6, 2e-6, 2e-6],
                          [4e-6, 2e-6, 1e-6], ends=[0.0, np.inf, 2e-10], soma_diameter=2e-5, comments=("made here",))
    outline = parse(text)
    assert outline.parents.tolist() == [-1, 0, 0]
    np.testing.assert_allclose(outline.lengths, [3e-4, 2e-4, 2e-4], rtol=1e-12)
    np.testing.assert_allclose(outline.end_diameters, [4e-6, 2e-6, 1e-6], rtol=1e-12)
    np.testing.assert_allclose(outline.ends, [0.0, np.inf, 2e-10], rtol=1e-12)
    assert outline.soma_diameter == pytest.approx(2e-5, rel=1e-12)


def test_format_is_sniffed_when_the_extension_is_unknown(tmp_path):
    swc = tmp_path / "cell.txt"
    swc.write_text(GOOD_SWC)
    tree = tmp_path / "cell.dat"
    tree.write_text(GOOD_TREE)
    assert type(read_morphology(swc)).__name__ == "SwcPoints"
    assert type(read_morphology(tree, read_outline_value)).__name__ == "Outline"


def test_an_outline_needs_a_value_reader(tmp_path):
    path = tmp_path / "cell.outline"
    path.write_text(GOOD_TREE)
    with pytest.raises(ValueError, match="read_value"):
        read_morphology(path)


def test_vectorised_and_line_by_line_parsers_agree():
    """The fast path for well-formed files gives exactly what the line-by-line parser gives."""
    from pathlib import Path

    from cabletheory.morphology import _parse_swc_lines

    path = Path(__file__).resolve().parent.parent / "cabletheory" / "data" / "morphologies"
    text = (path / "lumenia_pv7_interneuron.swc").read_text()
    fast, slow = parse_swc(text, "x"), _parse_swc_lines(text, "x")
    for name in ("ids", "types", "positions", "radii", "parents", "lines"):
        np.testing.assert_array_equal(getattr(fast, name), getattr(slow, name))
