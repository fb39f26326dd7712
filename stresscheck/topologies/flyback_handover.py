"""The flyback's hand-over of the leakage current to a clamp (``Stage.handover``), used
by :mod:`.flyback` at DCM corners with a diode rectifier.

With a clamp the leakage inductance L_lk is in series with L_m during the on-time, and
at turn-off its current I_pk falls linearly into the clamp in t_s = L_lk·I_pk/(V_c − V_r)
(:mod:`stresscheck.clamps`), while the secondary current rises from zero as
i_s = (i_m − i_lk)/n: sub-interval A of the flyback's grid lasts t_s. The charge
I_pk·t_s/(2n) that the leakage keeps from the output enters the charge balance, and the
clamp's power P = q_lk·V_c·f_s the losses, so the energy balance holds. At CCM corners
the leakage would also have to take over the magnetizing current at turn-on (not
modelled): there the hand-over is left out and the clamp power is reported only.
"""

from __future__ import annotations

import numpy as np


def dcm_handover_charge(p, s0, affine, charge, k_sub):
    """Charge delivered in the hand-over [C], secondary current at its end [A] and its
    length [s], (N,) each; ``affine``/``charge`` are the flyback's K-step helpers."""
    t_a = p.t_s
    u_a, w_a = affine(-p.v_diode, p.r_diode, p.ls, t_a / k_sub)
    nodes = s0[:, None] * u_a + w_a
    return charge(nodes, t_a / k_sub) - p.q_lk / p.n, np.maximum(nodes[:, -1], 0), t_a


def apply_handover(st, p, ho, sec, prim, s0, use_ccm, k_sub):
    """Subtract the leakage current from the secondary nodes of sub-interval A (in
    place) and return the next pass's hand-over (t_s [s], q_lk [C], mask) and the clamp
    power [W], (N,)."""
    xf = st.transformer
    sec[:, :k_sub + 1] -= (ho[2] * s0)[:, None] * (1 - np.arange(k_sub + 1) / k_sub)
    i_pk = prim[:, -1]
    t_s, v_hand = st.handover(xf.l_leak, i_pk, (p.v_diode + p.r_diode * s0) / p.n, st.fs)
    on = (~use_ccm).astype(float)  # CCM: the turn-on commutation is not modelled
    ho_new = (t_s * on, 0.5 * i_pk * t_s * on, on)
    return ho_new, ho_new[1] * v_hand * st.fs
