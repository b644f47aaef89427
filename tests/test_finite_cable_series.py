"""The eigen-series sums of cabletheory.finite_cable: blocked matrix products give the same sums
as a plain loop over the modes (numpy's own arithmetic as the independent check)."""

from __future__ import annotations

import numpy as np

from cabletheory import finite_cable


def test_blocked_sums_match_a_plain_loop_for_scattered_rows_and_counts():
    rng = np.random.default_rng(3)
    nT, nX, modes = 300, 70, 60
    T = rng.uniform(0.01, 2.0, nT)
    mu = 1.0 + (np.arange(modes) * 0.9) ** 2
    spatial = rng.normal(size=(modes, nX))
    steady = rng.normal(size=nX)
    scale = rng.uniform(0.5, 2.0, nT)
    counts = rng.choice([1, 3, 17, modes], nT)
    rows = rng.permutation(nT + 40)[:nT]  # scattered rows of a larger output
    out = np.full((nT + 40, nX), np.nan)
    finite_cable._series(out, rows, counts, lambda s, r: np.exp(-mu[s] * T[r, None]), spatial, steady, scale)
    for i in range(nT):
        want = scale[i] * steady - sum(np.exp(-mu[n] * T[i]) * spatial[n] for n in range(counts[i]))
        np.testing.assert_allclose(out[rows[i]], want, rtol=1e-13, atol=1e-13)
    untouched = np.setdiff1d(np.arange(nT + 40), rows)
    assert np.isnan(out[untouched]).all()


def test_a_run_of_consecutive_rows_is_summed_and_no_other_row_touched():
    T = np.linspace(0.1, 1.0, 50)
    mu = np.array([1.0, 2.0])
    out = np.zeros((60, 4))
    finite_cable._series(out, np.arange(5, 55), np.full(50, 2), lambda s, r: np.exp(-mu[s] * T[r, None]),
                         np.ones((2, 4)), np.ones(4))
    np.testing.assert_allclose(out[5:55], np.repeat((1.0 - np.exp(-T) - np.exp(-2 * T))[:, None], 4, axis=1),
                               rtol=1e-15, atol=1e-15)
    assert not out[:5].any()
    assert not out[55:].any()
