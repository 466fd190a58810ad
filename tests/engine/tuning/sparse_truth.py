"""Simulated data with a known sparse truth for the validation tests (stated as such)."""

import numpy as np


def sparse_truth_data(n: int, p: int, seed: int = 0) -> tuple[np.ndarray, np.ndarray]:
    """Columns on mixed scales and offsets; four true coefficients; noise sd 2."""
    rng = np.random.default_rng(seed)
    X = rng.normal(size=(n, p)) * rng.uniform(0.2, 5, p) + rng.normal(size=p) * 4
    b = np.zeros(p)
    b[:4] = [2.0, -1.5, 1.0, 0.5]
    y = X @ b + 2.0 * rng.normal(size=n)
    return X, y
