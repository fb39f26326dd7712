"""The shared array helpers of ``waveforms.py``: broadcasting a per-corner value, the
masked maximum and mean over sampled segments, the masked minimum of a waveform.

Checked against values worked by hand on small arrays (exact arithmetic: the sums
involved are of a few binary fractions, so equality is exact).
"""

import numpy as np

from stresscheck.waveforms import Grid, max_over, mean_over_samples, per_corner


def test_per_corner_shapes():
    x = np.array([1.0, 2.0])
    assert per_corner(x).shape == (2, 1, 1)
    assert per_corner(x, 2).shape == (2, 1)
    assert per_corner(x, 1).shape == (2,)
    assert per_corner(3.0).shape == ()
    samples = np.ones((2, 4, 5))
    np.testing.assert_array_equal((per_corner(x) * samples)[:, 3, 4], x)


def test_max_over_shared_and_per_corner_mask():
    values = np.arange(2 * 3 * 2, dtype=float).reshape(2, 3, 2)  # corner 0: 0..5, 1: 6..11
    np.testing.assert_array_equal(max_over(values), [5.0, 11.0])
    np.testing.assert_array_equal(max_over(values, np.array([True, False, False])),
                                  [1.0, 7.0])
    per = np.array([[False, True, False], [False, False, False]])
    np.testing.assert_array_equal(max_over(values, per), [3.0, -np.inf])


def test_mean_over_samples_per_corner_mask_and_fallback():
    grid = Grid(np.array([[1.0, 3.0], [2.0, 2.0]]))
    # linear ramps 0 -> 2 in segment 0 and constant 4 in segment 1, sampled at 3 points
    values = np.array([[[0.0, 1.0, 2.0], [4.0, 4.0, 4.0]]] * 2)
    shared = mean_over_samples(values, grid, np.array([True, True]))
    np.testing.assert_allclose(shared, [(1 * 1 + 4 * 3) / 4, (1 * 2 + 4 * 2) / 4])
    per = np.array([[True, False], [False, False]])
    np.testing.assert_array_equal(mean_over_samples(values, grid, per, np.array([9.0, 9.0])),
                                  [1.0, 9.0])


def test_pwl_min_over_mask():
    grid = Grid(np.ones((1, 3)))
    w = grid.wave(np.array([[1.0, -2.0, 3.0]]), np.array([[0.5, 4.0, 5.0]]))
    np.testing.assert_array_equal(w.min(), [-2.0])
    np.testing.assert_array_equal(w.min(np.array([True, False, True])), [0.5])
    np.testing.assert_array_equal(w.min(np.array([[False, False, False]])), [np.inf])
