"""tree_site keeps the reader of the tree last asked about: another tree, even with the same labels,
or another unit parser, is read afresh (the sites are checked against the trees' own lengths)."""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import pytest
from tree_fixtures import demo

from cabletheory.errors import InputError
from cabletheory.tree_laplace import Site
from cabletheory.tree_sites import tree_site


def test_a_tree_with_the_same_labels_is_read_with_its_own_lengths():
    short = demo()
    lengths = np.array(short.lengths)
    lengths[3] *= 2.0  # s3 is 200 µm in the demo tree, 400 µm here
    long = replace(short, lengths=lengths)
    assert tree_site(long, "branch s3 +300 um") == Site(3, pytest.approx(300e-6))
    with pytest.raises(InputError, match="beyond the end"):
        tree_site(short, "branch s3 +300 um")
    assert tree_site(long, "s3") == Site(3, pytest.approx(400e-6))
    assert tree_site(short, "s3") == Site(3, pytest.approx(200e-6))


def test_another_unit_parser_is_used():
    tree = demo()
    assert tree_site(tree, "branch s3 +50 um") == Site(3, pytest.approx(50e-6))
    assert tree_site(tree, "branch s3 +50 um", lambda text, kind, where: 1e-5) == Site(3, pytest.approx(1e-5))
    assert tree_site(tree, "branch s3 +50 um") == Site(3, pytest.approx(50e-6))
