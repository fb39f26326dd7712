"""Diode: straight-line forward model v_f0 + r_d·i; conduction loss; junction temperature."""

from __future__ import annotations

import numpy as np

from ..topologies import Device, StageResult
from ..thermal import derated_current
from .base import DeviceModel, Losses, Row, StageParts, Temperature


def diode_loss(v_f0, r_d, i_avg, i_rms):
    """Forward conduction loss of a diode modelled as v_f0 + r_d·i [W].

    P = v_f0·I_avg + r_d·I_rms², the mean of (v_f0 + r_d·i)·i over a period (e.g. Mohan,
    Undeland & Robbins, Power Electronics, 3rd ed., ch. 29 — from memory).

    Parameters
    ----------
    v_f0 : float or ndarray
        Forward drop at zero current [V].
    r_d : float or ndarray
        Slope resistance [ohm].
    i_avg : ndarray
        Mean forward current [A].
    i_rms : ndarray
        Rms forward current [A].

    Returns
    -------
    ndarray
        Conduction loss [W].
    """
    return v_f0 * i_avg + r_d * i_rms ** 2


def junction_to_ambient(model: DeviceModel) -> float | None:
    """Junction to ambient thermal resistance of a semiconductor [K/W], or None.

    ``r_th_ja`` of the design; else the sheet's ``r_th_jc`` plus the design's ``r_th_ca``
    (thermal resistances in series, common practice); on a heatsink, ``r_th_jc`` plus
    ``r_th_cs``, junction to sink (the sink's own ``r_th`` is shared, see
    ``engine.thermal_network``).

    Parameters
    ----------
    model : DeviceModel
        A diode or MOSFET position.

    Returns
    -------
    float or None
        [K/W]; None when the path is incomplete.
    """
    comp = model.component
    r_th_jc = model.part.thermal.get("r_th_jc")
    if getattr(comp, "heatsink", None) is not None:
        return None if r_th_jc is None else r_th_jc + comp.r_th_cs
    if comp.r_th_ja is not None:
        return comp.r_th_ja
    if r_th_jc is None or comp.r_th_ca is None:
        return None
    return r_th_jc + comp.r_th_ca


def derated_rating(model: DeviceModel, key: str, temperature: Temperature,
                   p_device: np.ndarray) -> dict:
    """A current rating derated with the solved case temperature, {key: (N,) [A]}.

    T_c = T_j − P·R_jc, and the rating falls linearly from its sheet value at
    ``<key>_temperature`` (25 °C when not given) to zero at t_j_max
    (``thermal.derated_current``, common practice). Empty when the sheet lacks the
    rating, t_j_max or r_th_jc, or no temperature is computed.
    """
    r = model.part.ratings
    r_jc = model.part.thermal.get("r_th_jc")
    if key not in r or "t_j_max" not in r or r_jc is None or not temperature.computed:
        return {}
    t_case = temperature.values - p_device * r_jc
    rating = derated_current(r[key], r.get(f"{key}_temperature", 25.0), r["t_j_max"],
                             np.where(np.isnan(t_case), -np.inf, t_case))
    return {key: rating}


class Diode(DeviceModel):
    """A rectifier, freewheel, clamp or reset diode position."""

    kind = "diode"
    no_path_reason = "no thermal path given"
    t_max_key = "t_j_max"

    thermal_path = junction_to_ambient

    def add_to(self, parts: StageParts, t: np.ndarray) -> None:
        e, n = self.electrical, self.size
        parts.semiconductors[self.key] = Device(
            "diode", np.full(n, e["v_f0"]), np.full(n, e.get("r_d", 0.0) / self.devices))

    def _currents(self, result: StageResult):
        i = result.currents[self.key]
        return i, i.mean() / self.devices, i.rms() / self.devices

    def losses(self, result: StageResult, t: np.ndarray) -> Losses:
        """``conduction``: v_f0·I_avg + r_d·I_rms² [W] per device (``diode_loss``);
        ``recovery``: ¼·Q_rr·V_R·f_s at each commutation (``losses.diode_recovery_energy``,
        found by ``switching``)."""
        e = self.electrical
        _, i_avg, i_rms = self._currents(result)
        out = {"conduction": diode_loss(e["v_f0"], e.get("r_d", 0.0), i_avg, i_rms)}
        if self.context is not None:
            out.update(self.context.extra(result).semi_terms(self.key))
        return out

    def stresses(self, result: StageResult, losses: Losses,
                 temperature: Temperature) -> list[Row]:
        i, i_avg, i_rms = self._currents(result)
        note = self.loss_note(result)
        rating = derated_rating(self, "i_f_avg", temperature, self.total(losses))
        return [Row("v_reverse_peak", result.v_block[self.key]),
                Row("i_avg", i_avg, ratings=rating),
                Row("i_rms", i_rms), Row("i_peak", i.peak() / self.devices),
                Row("p_loss", self.total(losses), note=note),
                Row("t_j", temperature.values, temperature.reason, note)]
