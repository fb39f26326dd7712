"""Capacitor: capacitance with its tolerance, ESR loss, hot spot and electrolytic life."""

from __future__ import annotations

import numpy as np

from .. import schema
from ..corners import tolerance_column
from ..topologies import CapacitorBank, StageResult
from .base import DeviceModel, Losses, Row, StageParts, Temperature

LIFE_STEP = 10.0  # [K] per halving of electrolytic life
LIFE_CAP = schema.LIFE_CAP  # [s] 15 years: beyond is not credible (common practice)


def capacitor_life(technology, life_rated, t_max, t_hotspot):
    """Expected life [s] at the hot-spot temperature.

    Wet aluminium electrolytic: L = L0·2^((T_max − T_hs)/10 K) (the "×2 per 10 °C" rule of
    capacitor makers' life notes; docs/derating-sources.md §7, S20).
    Aluminium polymer: L = L0·10^((T_max − T_hs)/20 K) (the "×10 per 20 °C" rule of
    polymer makers' notes; docs/derating-sources.md §8 — from memory, medium confidence).
    Both hold roughly between 70 °C and T_max and are capped at 15 years (``LIFE_CAP``:
    seal wear and electrolyte loss end the life whatever the temperature; makers cap
    their estimates there, common practice, from memory); a check at the cap carries
    ``capped`` and is shown as "> 15 years". Checked against a maker's worked example
    (Cosel Q&A a0057: 1,000 h at 105 °C -> 16,000 h at 65 °C) in
    tests/test_capacitor_life.py. Makers' own formulas read the rated life at an ambient
    of T_max with the rated ripple, so they credit that ripple's self-heating (a few
    kelvin, from memory); reading it at a hot spot of T_max, as here, errs short: the
    conservative side.

    Parameters
    ----------
    technology : str
        ``al-electrolytic`` or ``al-polymer`` (schema.LIFE_TECHNOLOGIES).
    life_rated : float
        Rated life L0 at T_max [s].
    t_max : float
        Rated temperature [degC].
    t_hotspot : ndarray
        Hot-spot temperature [degC].

    Returns
    -------
    ndarray
        Expected life [s], at most 15 years.
    """
    if technology == "al-polymer":
        life = life_rated * np.power(10.0, (t_max - t_hotspot) / 20.0)
    else:
        life = life_rated * np.power(2.0, (t_max - t_hotspot) / LIFE_STEP)
    return np.minimum(life, LIFE_CAP)


class Capacitor(DeviceModel):
    """An input, output or split capacitor bank (one position for all its refs)."""

    kind = "capacitor"

    def dc_voltage(self) -> np.ndarray:
        """DC voltage across the bank at each corner [V]: the input voltage (input
        capacitors), the output voltage (output capacitors), half the input (each split
        capacitor of a half bridge)."""
        role = self.key[0]
        if role == "output-capacitor":
            return self.corners["output_voltage"]
        v_in = self.corners["input_voltage"]
        return v_in / 2 if role == "split-capacitor" else v_in

    def add_to(self, parts: StageParts, t: np.ndarray) -> None:
        """Capacitance at the corner (tolerance column) times the sheet's DC-bias factor
        at the bank's DC voltage, where it gives ``capacitance_dc_bias`` (class-2
        ceramics lose much of their capacitance at a fraction of their rated voltage:
        the makers' capacitance-vs-DC-bias curves, common practice)."""
        c = tolerance_column(self.corners, self.component, "capacitance",
                             self.part.spread("capacitance").nom)
        bias = self.electrical.get("capacitance_dc_bias")
        if bias is not None:
            c = c * bias(self.dc_voltage())
        parts.capacitors[self.key] = CapacitorBank(
            c * self.devices, self.electrical.get("esr", 0.0) / self.devices)

    def _i_rms(self, result: StageResult) -> np.ndarray:
        return result.currents[self.key].rms() / self.devices

    def losses(self, result: StageResult, t: np.ndarray) -> Losses:
        """``esr``: ESR·I_rms² [W] per device, the Joule loss of the equivalent series
        resistance as the sheet gives it (common practice); none without an ESR."""
        esr = self.electrical.get("esr")
        return {} if esr is None else {"esr": esr * self._i_rms(result) ** 2}

    def hold_up_share(self, needed: np.ndarray) -> np.ndarray:
        """Capacitance a hold-up time needs as a share of the bank's capacitance at the
        lowest tolerance [1]; the policy's limit (e.g. 80 %: end of life at −20 % of
        rated capacitance, common practice) sets the margin for ageing.

        Parameters
        ----------
        needed : ndarray
            Capacitance the whole position needs [F], (N,).

        Returns
        -------
        ndarray
            needed / (C_min · devices) [1], (N,).
        """
        c_min = self.part.spread("capacitance").min
        return np.asarray(needed, dtype=float) / (c_min * self.devices)

    def self_heating_row(self, losses: Losses) -> Row:
        """``t_rise``: a ceramic capacitor's self-heating ΔT = I_rms²·ESR·R_th [K], the
        rise of the part above its surroundings that makers limit to about 20 K (TDK
        capacitor FAQ, docs/derating-sources.md section 11, S18; common practice).

        Parameters
        ----------
        losses : dict
            ``esr``: ESR·I_rms² of one device [W], (N,), absent without an ESR.

        Returns
        -------
        Row
            ΔT [K], (N,); NaN with the reason where the ESR or the thermal resistance
            (design ``r_th_ja``/``r_th_ca`` or the sheet's ``r_th``) is missing.
        """
        missing = [name for name, absent in (("ESR (electrical.esr)", "esr" not in losses),
                                             ("r_th (design r_th_ca or r_th_ja, or the "
                                              "sheet's thermal.r_th)", self.r_th is None))
                   if absent]
        if missing:
            return Row("t_rise", np.full(self.size, np.nan),
                       "self-heating needs " + " and ".join(missing))
        return Row("t_rise", np.asarray(losses["esr"], dtype=float) * self.r_th)

    def stresses(self, result: StageResult, losses: Losses,
                 temperature: Temperature) -> list[Row]:
        rows = [Row("v_peak", result.v_block[self.key]),
                Row("i_ripple_rms", self._i_rms(result))]
        needed = result.capacitance_needed.get(self.key)
        if needed is not None:
            rows.append(Row("hold_up", self.hold_up_share(needed)))
        if "esr" not in losses:
            temperature = Temperature(np.full(self.size, np.nan), "no ESR on the part sheet")
        rows.append(Row("t_hotspot", temperature.values, temperature.reason))
        if self.part.technology in schema.CERAMIC_TECHNOLOGIES:
            rows.append(self.self_heating_row(losses))
        if self.part.technology in schema.LIFE_TECHNOLOGIES:
            r = self.part.ratings
            if not temperature.computed or "life" not in r or "t_max" not in r:
                rows.append(Row("life", np.full(self.size, np.nan),
                                "needs life, t_max, ESR and r_th"))
            else:
                rows.append(Row("life", capacitor_life(self.part.technology, r["life"],
                                                       r["t_max"], temperature.values)))
        return rows
