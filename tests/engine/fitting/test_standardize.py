"""Standardization: population sd, constant columns, no change to the input."""

import numpy as np

from engine.fitting.standardize import column_moments, standardize


def test_population_sd_and_centring_agree_with_numpy():
    # Source: numpy mean/std with ddof=0 (population sd, divisor n) as the reference route
    rng = np.random.default_rng(1)
    X = rng.normal(size=(50, 4)) * [1, 10, 1e-3, 1e4] + [0, -5, 3, 1e6]
    y = rng.normal(size=50)
    st = standardize(X, y)
    np.testing.assert_allclose(st.means, X.mean(axis=0), rtol=1e-14)
    np.testing.assert_allclose(st.sds, X.std(axis=0, ddof=0), rtol=1e-12)
    np.testing.assert_allclose(st.Z.mean(axis=0), 0.0, atol=1e-12)
    np.testing.assert_allclose((st.Z**2).mean(axis=0), 1.0, rtol=1e-12)
    np.testing.assert_allclose(st.yc, y - y.mean(), atol=1e-15)


def test_constant_columns_get_unit_sd_and_zero_z_and_are_reported():
    X = np.column_stack([np.full(7, 3.3), np.arange(7.0), np.full(7, -1e9)])
    st = standardize(X)
    assert st.constant.tolist() == [True, False, True]
    assert st.sds[0] == 1.0 and st.sds[2] == 1.0
    assert np.all(st.Z[:, [0, 2]] == 0.0)
    assert st.means[0] == 3.3  # the constant's own value, exactly


def test_input_is_not_modified_and_round_trip_to_original_units():
    rng = np.random.default_rng(2)
    X = rng.normal(size=(20, 3)) * 5 + 2
    X0 = X.copy()
    st = standardize(X, rng.normal(size=20))
    assert np.array_equal(X, X0)
    beta = np.array([0.5, -1.0, 2.0])
    b, a = st.to_original(beta)
    # predictions agree in both unit systems (invariant)
    np.testing.assert_allclose(st.y_mean + st.Z @ beta, a + X @ b, rtol=1e-12)


def test_row_subset_moments_equal_moments_of_the_copied_rows():
    rng = np.random.default_rng(3)
    X = rng.normal(size=(30_000, 3)) + 100  # more than one block of rows
    rows = np.sort(rng.choice(30_000, 17_000, replace=False))
    m, s, c = column_moments(X, rows)
    np.testing.assert_allclose(m, X[rows].mean(axis=0), rtol=1e-13)
    np.testing.assert_allclose(s, X[rows].std(axis=0), rtol=1e-10)
    assert not c.any()
