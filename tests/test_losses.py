"""Switching-loss relations (stresscheck/losses.py) against closed-form cases.

Each check names its reference. The waveform integrals are done numerically on a fine
grid, independent of the closed forms in the module.
"""

import numpy as np
import pytest

from stresscheck import losses as L


def _pwl(points, n=200_001):
    """Times and values of a piecewise-linear function given as [(t, v), ...]."""
    t_pts, v_pts = zip(*points)
    t = np.linspace(t_pts[0], t_pts[-1], n)
    return t, np.interp(t, t_pts, v_pts)


def test_overlap_energy_equals_clamped_inductive_integral():
    # Clamped inductive switching, linearised (Mohan, Undeland & Robbins, Power
    # Electronics, 3rd ed., §2-5, fig. 2-6, eq. 2-6): at turn-on the current rises at
    # full voltage over t_ri, then the voltage falls at full current over t_fv; at
    # turn-off the reverse. The energy is the integral of v·i over the transitions.
    v_d, i_on, i_off = 48.0, 7.0, 13.0
    t_ri, t_fv, t_rv, t_fi = 6e-9, 14e-9, 18e-9, 9e-9
    t, v = _pwl([(0, v_d), (t_ri, v_d), (t_ri + t_fv, 0.0)])
    _, i = _pwl([(0, 0.0), (t_ri, i_on), (t_ri + t_fv, i_on)])
    e_on = np.trapezoid(v * i, t)
    t2, v2 = _pwl([(0, 0.0), (t_rv, v_d), (t_rv + t_fi, v_d)])
    _, i2 = _pwl([(0, i_off), (t_rv, i_off), (t_rv + t_fi, 0.0)])
    e_off = np.trapezoid(v2 * i2, t2)
    e = L.overlap_energy(v_d, i_on, i_off, t_ri + t_fv, t_rv + t_fi)
    # trapezoid on 2·10^5 points of a piecewise-quadratic product: error below 1e-9
    assert e == pytest.approx(e_on + e_off, rel=1e-6)
    # the mean power at f_s is that energy times f_s
    assert L.overlap_loss(v_d, i_on, i_off, t_ri + t_fv, t_rv + t_fi, 2e5) == \
        pytest.approx((e_on + e_off) * 2e5, rel=1e-6)


def _junction_like(v, c0=1e-9, phi=0.7, m=0.5):
    """A capacitance falling with voltage, C(v) = C0/(1 + v/φ)^m (abrupt-junction form)."""
    return c0 / (1.0 + v / phi) ** m


def _stored_energy(v_max, cap=_junction_like, n=400_001):
    v = np.linspace(0.0, v_max, n)
    return np.trapezoid(cap(v) * v, v)


def test_oss_energy_forms_bound_a_falling_capacitance():
    # E_oss(V) = ∫0^V C(u)·u du (definition of the stored energy; the energy-related
    # capacitance C_o(er) = 2·E_oss/V² of device sheets). A capacitance that falls with
    # voltage: e_oss stated at v_ref must bound E(V) from above on both sides of v_ref,
    # and the charge-equivalent form (C_o(tr) = Q_oss/v_ref) overstates it.
    v_ref = 400.0
    e_ref = _stored_energy(v_ref)
    q_ref = np.trapezoid(_junction_like(np.linspace(0, v_ref, 400_001)),
                         np.linspace(0, v_ref, 400_001))
    for v in (50.0, 200.0, 399.0, 401.0, 600.0):
        true = _stored_energy(v)
        assert L.oss_energy(v, e_oss=e_ref, v_ref=v_ref) >= true
        assert L.oss_energy(v, q_oss=q_ref, v_ref=v_ref) >= true
    # exact at the stated point, and ½·C·V² for an energy-equivalent capacitance
    assert L.oss_energy(v_ref, e_oss=e_ref, v_ref=v_ref) == pytest.approx(e_ref)
    c_er = 2 * e_ref / v_ref ** 2
    assert L.oss_energy(v_ref, c_oss=c_er) == pytest.approx(e_ref)
    assert np.isnan(L.oss_energy(100.0))


def test_commutation_and_recovery_energies():
    # Q_rr·V_R + ½·C_j·V_R² in the switch; ¼·Q_rr·V_R in the diode (Graovac, Pürschel,
    # Kiep, MOSFET power losses calculation using the data-sheet parameters, application
    # note 2006, §3 — from memory): hand values, 50 nC at 400 V = 20 µJ; 100 pF at 400 V
    # stores 8 µJ.
    assert L.commutation_energy(400.0, 50e-9, 100e-12) == pytest.approx(20e-6 + 8e-6)
    assert L.diode_recovery_energy(50e-9, 400.0) == pytest.approx(5e-6)
    # gate drive Q_g·V_gs·f_s (same note, §4): 33 nC · 10 V · 200 kHz = 66 mW
    assert L.gate_drive_loss(33e-9, 10.0, 200e3) == pytest.approx(0.066)


def _lc_transition(l, c_each, i0, v_bus, dt=1e-12):
    """Integrate the leg transition: node capacitance 2·C (one switch to each rail), the
    inductance from the node to a fixed rail; 2C·dv/dt = i, L·di/dt = −v (Kirchhoff's
    laws). Returns the highest node voltage reached before the current reverses (or
    v_bus, where the incoming switch's body diode clamps it)."""
    v, i = 0.0, i0
    c = 2 * c_each
    while i > 0 and v < v_bus:
        # midpoint (second-order) step
        vm, im = v + 0.5 * dt * i / c, i - 0.5 * dt * v / l
        v, i = v + dt * im / c, i - dt * vm / l
    return min(v, v_bus)


@pytest.mark.parametrize("ratio", [0.25, 0.81, 0.98, 1.02, 2.0])
def test_zvs_boundary_matches_the_leg_transition(ratio):
    # Zero-voltage turn-on when ½·L·I² ≥ 2·E_oss(V_in) = C_oss·V_in² (linear C_oss; the
    # energy condition of Sabaté, Vlatković, Ridley, Lee, Cho, IEEE APEC 1990 — from
    # memory), checked against an integration of the resonant transition itself; where
    # the energy falls short, the hard turn-on from the residual voltage V_r loses
    # C_oss·V_r² (own capacitance discharged, the complementary one charged from the
    # rail, each ½·C·V_r²).
    l, c_oss, v_bus = 5e-6, 200e-12, 400.0
    e_need = L.zvs_energy_needed(L.oss_energy(v_bus, c_oss=c_oss))
    assert e_need == pytest.approx(c_oss * v_bus ** 2)
    i0 = np.sqrt(2 * ratio * e_need / l)
    reached = _lc_transition(l, c_oss, i0, v_bus)
    e_avail = L.zvs_energy_available(l, i0)
    assert (e_avail >= e_need) == (reached >= v_bus * (1 - 1e-9))
    v_r = v_bus - reached
    # the integration's step (1 ps, against a resonant period of ~200 ns) holds the
    # swing to ~1e-6 relative; compare the residual energy to 1e-4 of E_need
    assert L.residual_turn_on_energy(e_need, e_avail) == \
        pytest.approx(c_oss * v_r ** 2, abs=1e-4 * e_need)
    assert L.residual_turn_on_energy(e_need, 0.0) == pytest.approx(e_need)


def test_gate_charge_times_worked_by_hand():
    # Balogh, gate-driver application report 2002/2017, §3 (from memory): switching
    # charge Q_gs2 + Q_gd moved by I_G,on = (V_drive − V_pl)/R, I_G,off = V_pl/R.
    # Q_gs2 given: 3 nC + 9 nC = 12 nC; R = 4 Ω; V_drive 12 V, V_pl 4 V:
    # I_on = 2 A -> 6 ns, I_off = 1 A -> 12 ns (worked here by hand)
    from stresscheck.losses import gate_charge_times

    t_r, t_f = gate_charge_times(9e-9, 8e-9, 4.0, 12.0, 4.0, q_gs2=3e-9)
    assert (t_r, t_f) == pytest.approx((6e-9, 12e-9), rel=1e-12)
    # without Q_gs2 the charge to the plateau is taken as Q_gs/2 (common practice)
    assert gate_charge_times(9e-9, 6e-9, 4.0, 12.0, 4.0)[0] == pytest.approx(6e-9)
    with pytest.raises(ValueError, match="plateau"):
        gate_charge_times(9e-9, 6e-9, 4.0, 4.0, 4.0)
