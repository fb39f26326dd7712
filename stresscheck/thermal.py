"""Device loss and temperature relations (first order), vectorised over corners.

Losses included: MOSFET conduction, diode forward conduction, capacitor ESR, inductor
DCR and transformer winding copper loss. Switching, C_oss, gate-drive, reverse-recovery
and core losses are not included in this version (the report says so).
"""

from __future__ import annotations

import numpy as np

T_REF = 25.0  # [degC] temperature of the headline R_DS(on)
DEFAULT_HOT = 150.0  # [degC] junction temperature assumed when no thermal path is given
LIFE_STEP = 10.0  # [K] per halving of electrolytic life


def r_ds_on_at(part, t_j):
    """R_DS(on) at junction temperature ``t_j`` [ohm], per device.

    Linear in temperature, either from the fractional coefficient r_ds_on_tc [1/K]:
        R(T) = R25·(1 + tc·(T − 25 °C))
    or through the two points (25 °C, r_ds_on) and (T_hot, r_ds_on_hot). Datasheets give
    the normalised R_DS(on)-vs-T_j curve; a straight line through its 25 °C value and a
    hot value is the usual hand approximation (common practice). Without either, the
    25 °C value is used unchanged (the caller warns).
    """
    e = part.electrical
    r25 = e["r_ds_on"]
    t = np.asarray(t_j, dtype=float)
    if "r_ds_on_tc" in e:
        return r25 * np.maximum(1.0 + e["r_ds_on_tc"] * (t - T_REF), 0.05)
    if "r_ds_on_hot" in e:
        slope = (e["r_ds_on_hot"] - r25) / (e["r_ds_on_hot_temperature"] - T_REF)
        return np.maximum(r25 + slope * (t - T_REF), 0.05 * r25)
    return np.full_like(t, r25)


def diode_loss(v_f0, r_d, i_avg, i_rms):
    """Forward conduction loss of a diode modelled as v_f0 + r_d·i [W].

    P = v_f0·I_avg + r_d·I_rms² (the mean of (v_f0 + r_d·i)·i over a period; e.g. Mohan,
    Undeland & Robbins, Power Electronics, 3rd ed., ch. 29 — from memory).
    """
    return v_f0 * i_avg + r_d * i_rms ** 2


def junction_temperature(t_ambient, p_loss, r_th):
    """T = T_a + P·R_th [degC] (steady-state thermal resistance chain, common practice)."""
    return t_ambient + p_loss * r_th


LIFE_CAP = 15 * 365.25 * 24 * 3600.0  # [s] 15 years: beyond is theoretical (common practice)


def capacitor_life(technology, life_rated, t_max, t_hotspot):
    """Expected life [s] at the hot-spot temperature.

    Wet aluminium electrolytic: L = L0·2^((T_max − T_hs)/10 K) (the "×2 per 10 °C" rule of
    capacitor makers' life notes; docs/derating-sources.md §7, S20).
    Aluminium polymer: L = L0·10^((T_max − T_hs)/20 K) (the "×10 per 20 °C" rule of
    polymer makers' notes; docs/derating-sources.md §8 — from memory, medium confidence).
    Both hold roughly between 70 °C and T_max and are capped at 15 years.
    """
    if technology == "al-polymer":
        life = life_rated * np.power(10.0, (t_max - t_hotspot) / 20.0)
    else:
        life = life_rated * np.power(2.0, (t_max - t_hotspot) / LIFE_STEP)
    return np.minimum(life, LIFE_CAP)
