"""MOSFET: R_DS(on) at the junction temperature, body diode, conduction loss, T_j.

The only kind whose loss depends on its own temperature today, so the one that drives
the electro-thermal loop.
"""

from __future__ import annotations

import numpy as np

from ..topologies import Device, StageResult
from .base import DeviceModel, Losses, Row, StageParts, Temperature
from .diode import derated_rating, diode_loss, junction_to_ambient

T_REF = 25.0  # [degC] temperature of the headline R_DS(on)
BODY_DIODE_VF0 = 0.9  # [V] body-diode v_sd when the part sheet gives none (common practice)
BODY_VF0_SHARE = 0.85  # v_f0 of the straight-line body-diode model as a share of v_sd
BODY_DIODE_RD = 0.01  # [ohm] body-diode slope resistance when the sheet gives no r_sd


def r_ds_on_at(part, t_j):
    """R_DS(on) at junction temperature ``t_j`` [ohm], per device.

    Linear in temperature, either from the fractional coefficient r_ds_on_tc [1/K]:
        R(T) = R25·(1 + tc·(T − 25 °C))
    or through the two points (25 °C, r_ds_on) and (T_hot, r_ds_on_hot). Datasheets give
    the normalised R_DS(on)-vs-T_j curve; a straight line through its 25 °C value and a
    hot value is the usual hand approximation (common practice). Without either, the
    25 °C value is used unchanged (the caller warns).

    Parameters
    ----------
    part : Part
        A MOSFET part sheet.
    t_j : float or ndarray
        Junction temperature [degC].

    Returns
    -------
    ndarray
        R_DS(on) of one device [ohm], floored at 5 % of the 25 °C value.
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


def body_diode(part) -> tuple[float, float]:
    """Straight-line model of a MOSFET's body diode, per device.

    Parameters
    ----------
    part : Part
        A MOSFET part sheet (``v_sd`` and ``r_sd`` optional).

    Returns
    -------
    tuple of float
        (v_f0 [V], r_d [ohm]): v_f0 = 0.85·v_sd (0.9 V without v_sd), r_d = r_sd (10 mΩ
        without it); common practice.
    """
    e = part.electrical
    return e.get("v_sd", BODY_DIODE_VF0) * BODY_VF0_SHARE, e.get("r_sd", BODY_DIODE_RD)


class Mosfet(DeviceModel):
    """A switch or synchronous-rectifier position."""

    kind = "mosfet"
    thermal_feedback = True
    no_path_reason = "no thermal path given"
    t_max_key = "t_j_max"

    thermal_path = junction_to_ambient

    def notes(self) -> list[dict]:
        out = []
        ref = self.refs[0]
        if "r_ds_on_tc" not in self.electrical and "r_ds_on_hot" not in self.electrical:
            out.append({"level": "warning", "text": f"{ref}: part '{self.part.id}' gives no "
                        "R_DS(on) temperature dependence; its 25 °C value is used"})
        if self.r_th is None:
            out.append({"level": "warning", "text": f"{ref}: no thermal path (r_th_jc with "
                        "r_th_ca or with heatsink and r_th_cs, or r_th_ja); T_j not "
                        "computed, R_DS(on) taken at T_j,max"})
        return out

    def add_to(self, parts: StageParts, t: np.ndarray) -> None:
        v_f0, r_d = body_diode(self.part)
        n = self.size
        parts.semiconductors[self.key] = Device(
            "mosfet", np.full(n, v_f0), np.full(n, r_d / self.devices),
            r_ds_on_at(self.part, t) / self.devices)

    def losses(self, result: StageResult, t: np.ndarray) -> Losses:
        """``conduction``: R_DS(on)(T_j)·I_ch,rms² [W] per device, the Joule loss of the
        channel (common practice); ``body_diode``: v_f0·I_avg + r_d·I_rms² [W] where the
        model has the body diode conduct (``diode_loss``)."""
        i_channel = result.currents[self.key].rms() / self.devices
        out = {"conduction": r_ds_on_at(self.part, t) * i_channel ** 2}
        body = result.body.get(self.key)
        if body is not None:
            v_f0, r_d = body_diode(self.part)
            out["body_diode"] = diode_loss(v_f0, r_d, body.mean() / self.devices,
                                           body.rms() / self.devices)
        if self.context is not None:
            # ``overlap``, ``c_oss``, ``commutation``: losses.py relations at the
            # transitions ``switching`` finds in the waveforms
            out.update(self.context.extra(result).semi_terms(self.key))
        return out

    def driver_losses(self, result: StageResult) -> Losses:
        """``gate_drive``: Q_g·V_gs·f_s [W] per device (``losses.gate_drive_loss``),
        dissipated in the driver."""
        if self.context is None:
            return {}
        sw = self.context.extra(result).switching.get(self.key)
        return {} if sw is None or sw.driver is None else {"gate_drive": sw.driver}

    def stresses(self, result: StageResult, losses: Losses,
                 temperature: Temperature) -> list[Row]:
        i = result.currents[self.key]
        body = result.body.get(self.key)
        # the whole device current, body diode included (channel and body never overlap)
        i_rms, i_peak = i.rms(), i.peak()
        if body is not None:
            i_rms, i_peak = np.sqrt(i_rms ** 2 + body.rms() ** 2), np.maximum(i_peak,
                                                                              body.peak())
        note = self.loss_note(result)
        rating = derated_rating(self, "i_d", temperature, self.total(losses))
        return [Row("v_peak", result.v_block[self.key]),
                Row("i_peak", i_peak / self.devices),
                Row("i_rms", i_rms / self.devices, ratings=rating),
                Row("p_loss", self.total(losses), note=note),
                Row("t_j", temperature.values, temperature.reason, note)]
