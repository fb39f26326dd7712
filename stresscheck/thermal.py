"""Thermal relations shared by every device kind, vectorised over corners.

Losses included: MOSFET conduction, diode forward conduction, capacitor ESR, inductor
DCR and transformer winding copper loss (each in its kind's module under ``devices/``).
Switching, C_oss, gate-drive, reverse-recovery and core losses are not included in this
version (the report says so).
"""

from __future__ import annotations

DEFAULT_HOT = 150.0  # [degC] junction temperature assumed when no thermal path is given


def junction_temperature(t_ambient, p_loss, r_th):
    """T = T_a + P·R_th (steady-state thermal resistance chain, common practice).

    Parameters
    ----------
    t_ambient : float or ndarray
        Ambient temperature [degC].
    p_loss : float or ndarray
        Dissipation [W].
    r_th : float
        Thermal resistance to ambient [K/W].

    Returns
    -------
    ndarray
        Temperature [degC].
    """
    return t_ambient + p_loss * r_th
