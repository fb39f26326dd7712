"""Vectorised duty-ratio search: the duty at which a model's mean output voltage meets the
regulation target, at every corner at once."""

from __future__ import annotations

import numpy as np

BISECT_ITERATIONS = 60  # halvings: 2^-60 of the duty interval, far below any tolerance


def solve_duty(vout_of_duty, target, lo, hi, iterations: int = BISECT_ITERATIONS):
    """Bisection on a mean output voltage that rises with the duty ratio.

    Parameters
    ----------
    vout_of_duty : callable
        (N,) duty [1] -> (N,) mean output voltage [V]; must increase with the duty.
    target : (N,) regulation target [V]
    lo, hi : (N,) or scalar search interval of the duty [1]

    Returns
    -------
    duty : (N,) [1], clipped to ``hi`` where the target is out of reach
    reachable : (N,) bool, False where even ``hi`` does not reach the target
    """
    target = np.asarray(target, dtype=float)
    lo = np.broadcast_to(np.asarray(lo, dtype=float), target.shape).copy()
    hi = np.broadcast_to(np.asarray(hi, dtype=float), target.shape).copy()
    reachable = vout_of_duty(hi) >= target
    for _ in range(iterations):
        mid = (lo + hi) / 2
        if np.all((mid == lo) | (mid == hi)):
            break  # every interval is down to adjacent floats: further halvings are idle
        above = vout_of_duty(mid) >= target
        hi = np.where(above, mid, hi)
        lo = np.where(above, lo, mid)
    return (lo + hi) / 2, reachable
