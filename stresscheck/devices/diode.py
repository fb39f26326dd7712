"""Diode: straight-line forward model v_f0 + r_d·i; conduction loss; junction temperature."""

from __future__ import annotations

import numpy as np

from ..topologies import Device, StageResult
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
    (thermal resistances in series, common practice).

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
    if comp.r_th_ja is not None:
        return comp.r_th_ja
    r_th_jc = model.part.thermal.get("r_th_jc")
    if r_th_jc is None or comp.r_th_ca is None:
        return None
    return r_th_jc + comp.r_th_ca


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
        """``conduction``: v_f0·I_avg + r_d·I_rms² [W] per device (``diode_loss``)."""
        e = self.electrical
        _, i_avg, i_rms = self._currents(result)
        return {"conduction": diode_loss(e["v_f0"], e.get("r_d", 0.0), i_avg, i_rms)}

    def stresses(self, result: StageResult, losses: Losses,
                 temperature: Temperature) -> list[Row]:
        i, i_avg, i_rms = self._currents(result)
        return [Row("v_reverse_peak", result.v_block[self.key]), Row("i_avg", i_avg),
                Row("i_rms", i_rms), Row("i_peak", i.peak() / self.devices),
                Row("p_loss", self.total(losses)),
                Row("t_j", temperature.values, temperature.reason)]
