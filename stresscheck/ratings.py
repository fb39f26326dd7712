"""Ratings at the temperature of each corner: a per-corner scale on a sheet's rating.

- Inductor saturation current at its hot spot: a sheet may give ``i_sat`` (25 °C) and
  ``i_sat_hot`` at ``i_sat_hot_temperature``; between them the rating falls linearly and
  beyond the hot point the line is extrapolated (ferrite's saturation flux density falls
  with temperature, so the saturation current does: the makers' i_sat-vs-temperature
  curves, common practice); below 25 °C it stays at ``i_sat`` (no credit for cold). The inductor's i_peak is
  already taken at the lowest inductance of its tolerance (a corner column).
- Transformer saturation flux density at its hot spot likewise: ``b_sat`` (25 °C) and
  ``b_sat_hot`` at ``b_sat_hot_temperature`` (a ferrite's B_sat falls with temperature,
  typically by a fifth to a third from 25 °C to 100 °C: the material tables of the
  ferrite makers, common practice); the transformer's b_peak is already taken at the
  highest magnetizing inductance and, where ``core_area`` has a tolerance, at its
  lowest area.
- MOSFET breakdown voltage at the junction temperature: ``v_ds_tc`` [1/K] on the sheet
  (silicon rises about 0.1 %/K, so at −40 °C the rating is about 6.5 % below its 25 °C
  value: common practice), V(T) = V_25·(1 + tc·(T_j − 25 °C)); T_j where the engine
  solved it, else the ambient (the lower temperature: the lower rating).
- Diode reverse voltage likewise with ``v_rrm_tc``.

The scale multiplies the rating in the check of that corner (``Stress.rating_scale``);
the check's note gives the rating at the governing corner.
"""

from __future__ import annotations

import numpy as np

T_REF = 25.0  # [degC] temperature of the headline ratings


def hot_scale(r25: float, r_hot: float, t_hot: float, t):
    """r(T)/r25 [1], (N,): linear through (25 °C, r25) and (t_hot, r_hot), extrapolated
    above t_hot, held at 1 below 25 °C, never below 0.

    Parameters
    ----------
    r25, r_hot : float
        The rating at 25 °C and at ``t_hot`` [its unit].
    t_hot : float
        The hot point [degC].
    t : array
        Temperature per corner [degC].
    """
    t = np.maximum(np.asarray(t, dtype=float), T_REF)
    return np.maximum(1.0 + (r_hot / r25 - 1.0) * (t - T_REF) / (t_hot - T_REF), 0.0)


def i_sat_scale(ratings: dict, t_hotspot):
    """i_sat(T)/i_sat [1], (N,): linear through (25 °C, i_sat) and (T_hot, i_sat_hot),
    held at 1 below 25 °C, never below 0.

    Parameters
    ----------
    ratings : dict
        The inductor's ratings: ``i_sat`` [A], ``i_sat_hot`` [A],
        ``i_sat_hot_temperature`` [degC].
    t_hotspot : array
        Inductor temperature per corner [degC].
    """
    return hot_scale(ratings["i_sat"], ratings["i_sat_hot"],
                     ratings["i_sat_hot_temperature"], t_hotspot)


def breakdown_scale(tc: float, t_junction):
    """V_BR(T)/V_BR(25 °C) = 1 + tc·(T − 25 °C) [1], (N,).

    Parameters
    ----------
    tc : float
        Temperature coefficient of the breakdown voltage [1/K].
    t_junction : array
        Junction temperature per corner [degC].
    """
    return 1.0 + tc * (np.asarray(t_junction, dtype=float) - T_REF)


def e_as_scale(ratings: dict, t_start):
    """e_as(T)/e_as(25 °C) [1], (N,): the single-pulse avalanche energy rating at the
    starting junction temperature ``t_start``.

    The sheet's ``e_as_temperature_multipliers`` curve where given (the makers draw
    E_AS against the starting temperature: e.g. 64 % of the 25 °C value at 50 °C for one
    part, docs/derating-sources.md §2, S23; straight lines between the points, flat
    beyond: give the curve up to t_j_max); otherwise falling linearly from 1 at 25 °C to
    zero at ``t_j_max`` (the avalanche heats the junction from its starting temperature
    to a fixed critical one, so the energy it can take falls about linearly with the
    start: common practice, from memory), held at 1 below 25 °C (no credit for cold).

    Parameters
    ----------
    ratings : dict
        The MOSFET's ratings: ``t_j_max`` [degC] and optionally
        ``e_as_temperature_multipliers`` (Curve over temperature).
    t_start : array
        Starting junction temperature per corner [degC].
    """
    t = np.asarray(t_start, dtype=float)
    if "e_as_temperature_multipliers" in ratings:
        return ratings["e_as_temperature_multipliers"](t)
    t_max = ratings["t_j_max"]
    return np.clip((t_max - t) / (t_max - T_REF), 0.0, 1.0)


def ripple_scale(ratings: dict, f_low, t_ambient):
    """Allowed ripple over the rated ripple [1], (N,): frequency multiplier × temperature
    multiplier from the sheet's tables (practice notes §5: allowed ripple = rated ripple ×
    frequency multiplier × temperature multiplier, each specific to the series).

    The capacitor current of a switching stage holds f_low (the switching frequency) and
    its harmonics; dividing each harmonic group by its multiplier and adding them by
    root-sum-square is bounded above by dividing the whole rms by the smallest multiplier
    at f_low or above, which is what is taken (exact where the table is flat above f_low,
    as it usually is above a few kHz).

    Parameters
    ----------
    ratings : dict
        ``ripple_frequency_multipliers`` and/or ``ripple_temperature_multipliers`` (Curve).
    f_low : array
        Lowest frequency of the ripple current [Hz], (N,).
    t_ambient : array
        Ambient temperature [degC], (N,) (the makers' tables are against ambient).
    """
    scale = np.ones(np.shape(f_low))
    if "ripple_frequency_multipliers" in ratings:
        scale = scale * ratings["ripple_frequency_multipliers"].lowest_from(f_low)
    if "ripple_temperature_multipliers" in ratings:
        scale = scale * ratings["ripple_temperature_multipliers"](t_ambient)
    return scale


def apply(stresses, corners, notes) -> None:
    """Set ``rating_scale`` on the stresses whose rating depends on temperature (in
    place); warn where a silicon MOSFET's breakdown voltage at cold is not derated."""
    t_a = corners["ambient_temperature"]
    by_ref: dict[str, dict] = {}
    for s in stresses:
        by_ref.setdefault(s.ref, {})[s.quantity] = s
    cold_fets = []
    for ref, rows in by_ref.items():
        part = next(iter(rows.values())).component.part
        r = part.ratings
        if (part.kind == "capacitor" and "i_ripple_rms" in rows
                and ("ripple_frequency_multipliers" in r
                     or "ripple_temperature_multipliers" in r)):
            rows["i_ripple_rms"].rating_scale = {"i_ripple": ripple_scale(
                r, corners["switching_frequency"], t_a)}
            rows["i_ripple_rms"].rating_temperature = t_a
        for kind, q, key in (("inductor", "i_peak", "i_sat"),
                             ("transformer", "b_peak", "b_sat")):
            if part.kind != kind or q not in rows or f"{key}_hot" not in r or key not in r:
                continue
            t = rows.get("t_hotspot")
            temp = t.values if t is not None and np.isfinite(t.values).all() else None
            # no hot spot computed: the rating at the hot point (the lower one)
            temp = temp if temp is not None else np.full(corners.size,
                                                         r[f"{key}_hot_temperature"])
            rows[q].rating_scale = {key: hot_scale(r[key], r[f"{key}_hot"],
                                                   r[f"{key}_hot_temperature"], temp)}
            rows[q].rating_temperature = temp
        for kind, q, key, tc_key in (("mosfet", "v_peak", "v_ds", "v_ds_tc"),
                                     ("diode", "v_reverse_peak", "v_rrm", "v_rrm_tc")):
            if part.kind != kind or q not in rows:
                continue
            if tc_key not in r:
                if kind == "mosfet" and part.technology == "si" and (t_a < T_REF).any():
                    cold_fets.append(ref)
                continue
            tj = rows.get("t_j")
            temp = (np.where(np.isfinite(tj.values), tj.values, t_a)
                    if tj is not None else t_a)
            rows[q].rating_scale = {key: breakdown_scale(r[tc_key], temp)}
            rows[q].rating_temperature = temp
    if cold_fets:
        notes.append({"level": "warning", "text": f"{', '.join(cold_fets)}: no v_ds_tc on "
                      "the part sheet, so the breakdown voltage is taken at its 25 °C "
                      "value also at the cold corners (silicon's falls about 0.1 %/K below "
                      "25 °C: about 6.5 % at −40 °C, common practice)"})
