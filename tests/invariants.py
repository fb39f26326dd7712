"""Physical invariants shared by every topology's tests."""

import numpy as np

# Energy balance closes to this fraction of the input power. The analytic model draws
# every current as straight segments and takes each drop at the interval's mean current;
# what that leaves out is second order in the ripple: R·ΔI²/12 for each series
# resistance (about 3e-4 of P_in in the test cases) and the covariance of bus ripple and
# switch current (up to 1.4e-3 measured on a half-bridge with 4 % split-capacitor
# ripple). The bound is set from those two terms, not from a failing run.
ENERGY_BALANCE_REL = 2e-3


def assert_energy_balance(ev):
    """Input power = output power + every computed loss (conservation of energy)."""
    mismatch = (ev.p_in - ev.p_out - ev.p_loss) / ev.p_in
    worst = int(np.argmax(np.abs(mismatch)))
    assert abs(mismatch[worst]) < ENERGY_BALANCE_REL, (
        f"energy balance off by {mismatch[worst]:.2e} of P_in at {ev.corners.ids[worst]}")


def assert_charge_balance(ev):
    """Every capacitor current has zero mean over a period (steady state)."""
    for (role, k), wave in ev.result.currents.items():
        if role.endswith("capacitor"):
            np.testing.assert_allclose(wave.mean(), 0.0, atol=1e-9 * max(1.0, wave.peak().max()))


def assert_one_rating_row_per_stress(checks, evaluation):
    """One check row for every stress row (nothing dropped, nothing doubled)."""
    keys = [(c.ref, c.quantity) for c in checks]
    assert len(keys) == len(set(keys)) == len(evaluation.stresses)
