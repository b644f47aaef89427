"""Physical identities of trees (hypothesis, fixed seed).

* A branch of zero length carries no membrane and no current: adding one changes nothing [CP].
* Electrotonic distance is ∫dx/λ, linear in length: scaling every length by k scales every
  electrotonic distance (and L of the equivalent cylinder) by k (Rall 1959 [Rall1959]).
* Cylinders of one diameter in series are one cylinder (Rall 1959 [Rall1959]): a chain of many short
  pieces gives R∞ coth L of the whole; this also shows that deep trees need no recursion.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from tree_fixtures import UM, outline_tree

from cabletheory.tree import analyse_tree, scale_lengths

RM, RI = 2.0, 2.0


@st.composite
def trees(draw, max_size: int = 25):
    n = draw(st.integers(1, max_size))
    parents = [-1] + [draw(st.integers(-1, i - 1)) for i in range(1, n)]
    lengths = [draw(st.floats(5.0, 400.0)) * UM for _ in range(n)]
    diameters = [draw(st.floats(0.3, 5.0)) * UM for _ in range(n)]
    soma = draw(st.one_of(st.none(), st.floats(5.0, 30.0)))
    return parents, lengths, diameters, None if soma is None else soma * UM


@settings(derandomize=True, deadline=None, max_examples=60)
@given(trees(), st.data())
def test_zero_length_branch_changes_nothing(spec, data):
    parents, lengths, diameters, soma = spec
    where = data.draw(st.integers(-1, len(parents) - 1), label="attach to")
    width = data.draw(st.floats(0.2, 6.0), label="diameter (µm)") * UM
    before = analyse_tree(outline_tree(parents, lengths, diameters, soma), RM, RI)
    after = analyse_tree(outline_tree([*parents, where], [*lengths, 0.0], [*diameters, width], soma), RM, RI)
    assert after.input_resistance == pytest.approx(before.input_resistance, rel=1e-13)
    assert after.reduced_input_resistance == pytest.approx(before.reduced_input_resistance, rel=1e-13)
    assert after.equivalent_cylinder.electrotonic_length == pytest.approx(
        before.equivalent_cylinder.electrotonic_length, rel=1e-13)
    assert after.reducible == before.reducible
    assert after.tips.ids == before.tips.ids
    assert after.branch_points.ids == before.branch_points.ids
    np.testing.assert_allclose(after.branch_points.ratios, before.branch_points.ratios, rtol=1e-13)
    assert after.reasons == before.reasons


@settings(derandomize=True, deadline=None, max_examples=60)
@given(trees(), st.floats(0.01, 100.0))
def test_scaling_lengths_scales_electrotonic_lengths(spec, factor):
    parents, lengths, diameters, soma = spec
    tree = outline_tree(parents, lengths, diameters, soma)
    base = analyse_tree(tree, RM, RI)
    scaled = analyse_tree(scale_lengths(tree, factor), RM, RI)
    np.testing.assert_allclose(scaled.tips.electrotonic_distances, factor * base.tips.electrotonic_distances,
                               rtol=1e-12)
    np.testing.assert_allclose(scaled.branch_points.electrotonic_distances,
                               factor * base.branch_points.electrotonic_distances, rtol=1e-12, atol=0)
    assert scaled.equivalent_cylinder.electrotonic_length == pytest.approx(
        factor * base.equivalent_cylinder.electrotonic_length, rel=1e-12)
    np.testing.assert_allclose(scaled.equivalent_cable.positions, factor * base.equivalent_cable.positions,
                               rtol=1e-12)
    # branch ratios do not depend on lengths
    np.testing.assert_allclose(scaled.branch_points.ratios, base.branch_points.ratios, rtol=1e-15)


@settings(derandomize=True, deadline=None, max_examples=40)
@given(trees())
def test_exact_resistance_lies_between_bounds(spec):
    """Sealed tips: the input resistance is at least that of all membrane lumped at the root
    (no axial drop) [CP]; killed tips lower it (Rall 1959 [Rall1959])."""
    parents, lengths, diameters, soma = spec
    tree = outline_tree(parents, lengths, diameters, soma)
    sealed = analyse_tree(tree, RM, RI)
    killed = analyse_tree(tree, RM, RI, killed_tips=True)
    lumped = RM / (sealed.membrane_area + ((soma is not None and math.pi * soma**2) or 0.0))
    assert sealed.input_resistance >= lumped * (1 - 1e-12)
    assert killed.input_resistance < sealed.input_resistance


def test_long_chain_is_one_cylinder_and_needs_no_recursion():
    """50,000 pieces in series (far deeper than Python's recursion limit) equal one cylinder."""
    n = 50_000
    d, ell = 1.2 * UM, 0.03 * UM
    tree = outline_tree(np.arange(-1, n - 1), np.full(n, ell), np.full(n, d))
    report = analyse_tree(tree, RM, RI)
    lam = math.sqrt(RM * d / (4 * RI))
    r_inf = 2 / math.pi * math.sqrt(RM * RI) * d**-1.5
    L = n * ell / lam
    assert report.tip_distance_max == pytest.approx(L, rel=1e-12)
    assert report.input_resistance == pytest.approx(r_inf / math.tanh(L), rel=1e-11)
    assert report.reducible
