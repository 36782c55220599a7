"""Row-wise cross products against numpy's ``np.cross`` (the reference implementation)."""

import numpy as np
import pytest

from wirecut.geometry.vectors import cross


@pytest.mark.parametrize("n", [0, 1, 7, 10_000])
def test_cross_equals_numpy_to_the_bit(n):
    rng = np.random.default_rng(n)
    a, b = rng.normal(size=(n, 3)) * 1e3, rng.normal(size=(n, 3))
    assert np.array_equal(cross(a, b), np.cross(a, b))


def test_cross_broadcasts_a_single_vector():
    rng = np.random.default_rng(3)
    a = rng.normal(size=(5, 3))
    z = np.array([0.0, 0.0, 1.0])
    assert np.array_equal(cross(a, z), np.cross(a, z))
    assert np.array_equal(cross(z, a), np.cross(z, a))


def test_cross_of_the_axes():
    # right-handed basis: x cross y = z (definition of the cross product)
    x, y, z = np.eye(3)
    assert np.array_equal(cross(x[None], y[None])[0], z)
    assert np.array_equal(cross(y[None], x[None])[0], -z)
