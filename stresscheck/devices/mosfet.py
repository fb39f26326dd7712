"""MOSFET: R_DS(on) at the junction temperature, body diode, conduction loss, T_j.

The only kind whose loss depends on its own temperature today, so the one that drives
the electro-thermal loop.
"""

from __future__ import annotations

import numpy as np

from ..losses import DEFAULT_GATE_VOLTAGE
from ..soa import soa_current, soa_line_current
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


def gate_peak(v_drive, v_off=None, overshoot=0.0):
    """Peak gate-source voltage magnitude [V]: the larger of the drive and the off-state
    bias, each raised by the gate overshoot, V_GS,pk = max(V_on, |V_off|)·(1 + a).

    The gate sees the driver's rails plus its ringing (practice notes: gate and driver
    overshoot beyond the supply rails; common practice). The sheet's ``v_gs`` is one
    magnitude (±), so both polarities are checked against it.

    Parameters
    ----------
    v_drive : float
        On-state gate drive [V].
    v_off : float, optional
        Off-state gate bias [V] (zero or negative).
    overshoot : float
        Ringing above either rail as a share of that rail [1].

    Returns
    -------
    float
        [V]
    """
    return max(abs(v_drive), abs(v_off or 0.0)) * (1.0 + overshoot)


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
        rows = [Row("v_peak", result.v_block[self.key]),
                Row("i_peak", i_peak / self.devices),
                Row("i_rms", i_rms / self.devices, ratings=rating),
                Row("p_loss", self.total(losses), note=note),
                Row("t_j", temperature.values, temperature.reason, note),
                self._gate_row()]
        if "soa" in self.part.ratings:
            rows.append(self._soa_row(result, losses, temperature))
        return rows

    def _gate_row(self) -> Row:
        """``v_gs_peak``: the gate drive (``[converter] gate_voltage``, else the
        technology's default), the off-state bias and the gate overshoot."""
        design = self.context.design if self.context is not None else None
        given = getattr(design, "gate_voltage", None)
        v_on = given if given is not None else DEFAULT_GATE_VOLTAGE.get(
            self.part.technology, 10.0)
        v_off = getattr(design, "gate_off_voltage", None)
        a = getattr(design, "gate_overshoot", 0.0) or 0.0
        note = f"gate drive {v_on:g} V" + ("" if given is not None else
                                           f" (default for {self.part.technology})")
        if v_off is not None:
            note += f", off-state bias {v_off:g} V"
        if a:
            note += f", gate overshoot {100 * a:g} %"
        return Row("v_gs_peak", np.full(self.size, gate_peak(v_on, v_off, a)), note=note)

    def _soa_row(self, result: StageResult, losses: Losses,
                 temperature: Temperature) -> Row:
        """``i_transition``: the drain current of the hard transition (turn-off for
        t_fall, hard turn-on for t_rise) at the off-state voltage, with the SOA current
        there as its per-corner rating ``soa`` (``soa.soa_current``: the line of the
        nearest longer pulse width, derated for the solved case temperature). Where both
        transitions happen the one nearer its limit is taken."""
        nan = np.full(self.size, np.nan)
        table, r = self.part.ratings["soa"], self.part.ratings
        sw = self.context.extra(result).switching.get(self.key) \
            if self.context is not None else None
        transitions = sw.transitions if sw is not None else {}
        note = ("drain current at the hard switching transition, against the SOA at the "
                "off-state voltage (spike-free), derated for the case temperature")
        if self.context is not None and self.context.line_cycle and self.key[0] == "switch":
            # the line-cycle model's segments stand for many switching periods: the
            # largest switch current is taken for both edges (conservative)
            peak = result.currents[self.key].peak() / self.devices
            transitions = {"off": peak, "on": peak}
            note += "; line-cycle model: the peak switch current taken at both edges"
        if not transitions:  # synchronous rectifier: its transitions are soft
            v = np.asarray(result.v_block[self.key], dtype=float)
            return Row("i_transition", np.zeros(self.size),
                       ratings={"soa": soa_line_current(table.lines[0], v)},
                       note="no hard transition (the body diode carries the current at "
                       "each edge)")
        r_jc = self.part.thermal.get("r_th_jc")
        if r_jc is None or not temperature.computed:
            return Row("i_transition", nan, "case temperature not computed (needs a "
                       "thermal path and r_th_jc): the SOA cannot be derated")
        t_case = temperature.values - self.total(losses) * r_jc
        v = np.asarray(result.v_block[self.key], dtype=float)
        best_i, best_a, best_ratio = np.zeros(self.size), None, np.full(self.size, -1.0)
        for event, key in (("off", "t_fall"), ("on", "t_rise")):
            i = transitions[event]
            if not (i > 0).any():
                continue
            # the times the overlap loss used (sheet or gate-charge method), else the sheet's
            t_tr = (sw.times.get(event) if sw is not None else None) \
                or self.electrical.get(key)
            if t_tr is None:
                return Row("i_transition", nan, f"no {key} for this switch (part sheet or "
                           "gate-charge method): the SOA pulse width of the transition "
                           "is unknown")
            allowed = soa_current(table, v, t_tr, t_case, r["t_j_max"])
            if np.isnan(allowed).all():
                return Row("i_transition", nan, f"every SOA line is shorter than the "
                           f"transition ({key} = {t_tr:g} s)")
            with np.errstate(divide="ignore", invalid="ignore"):
                ratio = np.where(i > 0, i / allowed, 0.0)
            take = ratio > best_ratio
            best_i = np.where(take, i, best_i)
            best_a = allowed if best_a is None else np.where(take, allowed, best_a)
            best_ratio = np.where(take, ratio, best_ratio)
        if best_a is None:  # no hard edge at any corner: the shortest line as the rating
            best_a = soa_current(table, v, 0.0, t_case, r["t_j_max"])
        return Row("i_transition", best_i, ratings={"soa": best_a}, note=note)
