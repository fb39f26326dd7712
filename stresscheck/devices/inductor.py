"""Inductor: inductance with its tolerance, DCR copper loss and hot spot."""

from __future__ import annotations

import numpy as np

from .. import loss_model
from ..corners import tolerance_column
from ..topologies import Inductor as InductorParameters, StageResult
from .base import DeviceModel, Losses, Row, StageParts, Temperature


class Inductor(DeviceModel):
    """An output (or input) inductor position; positions enter the stage in layout order."""

    kind = "inductor"
    self_heating = True  # copper resistance rises with the hot spot

    def inductance(self) -> np.ndarray:
        """Inductance of one device at every corner [H], tolerance included, (N,)."""
        return tolerance_column(self.corners, self.component, "inductance",
                                self.part.spread("inductance").nom)

    def add_to(self, parts: StageParts, t: np.ndarray) -> None:
        # the converter model takes the sheet's DCR (its drops are small); the loss
        # below takes it at the hot spot
        parts.inductors.append(InductorParameters(
            self.inductance(), self.electrical.get("dcr", 0.0) / self.devices,
            roll_off=self.electrical.get("inductance_vs_current"), key=self.key,
            devices=self.devices, ref=self.refs[0]))

    def solved_inductance(self, result: StageResult) -> np.ndarray:
        """Inductance of one device the model was solved with [H], (N,): the corner's
        inductance, at the peak current where the sheet gives ``inductance_vs_current``
        (``topologies.saturation``)."""
        return result.inductance.get(self.key, self.inductance())

    def _copper_ref(self, result: StageResult):
        dcr = self.electrical.get("dcr")
        if dcr is None:
            return None
        return dcr * (result.currents[self.key].rms() / self.devices) ** 2

    def _core(self, result: StageResult):
        if self.context is not None and self.context.line_cycle:
            if getattr(result, "line_cycle", None) is None:
                return None, loss_model.LINE_CYCLE_NOTE
            # the line cycle is solved with the inductance of one device for the
            # position's current: the flux of one device is L·(i/devices)/(N·A_e)
            return loss_model.inductor_core(self.part, None,
                                            self.inductance() / self.devices, result)
        core, why = loss_model.inductor_core(self.part, result.currents[self.key],
                                             self.solved_inductance(result) * self.devices,
                                             result)
        return (None if core is None else core / self.devices), why

    def losses(self, result: StageResult, t: np.ndarray) -> Losses:
        """``copper``: DCR·I_rms² [W] per device with the DCR at the hot spot, copper
        0.393 %/K (``loss_model.copper_at``; no skin or proximity effect, common
        practice), none without a DCR; ``core``: the iGSE on the flux B = L·i/(N·A_e)
        from the inductor current (``magnetics_loss.core_loss``), where the sheet gives
        turns, core_area and core-loss coefficients."""
        out = {}
        p_ref = self._copper_ref(result)
        if p_ref is not None:
            t_cu = t if self.r_th is not None else np.full(self.size, np.nan)
            out["copper"] = loss_model.copper_at(self.part, t_cu, p_ref)
        core, _ = self._core(result)
        if core is not None:
            out["core"] = np.where(self.context.heating(), core, 0.0) \
                if self.context is not None else core
        return out

    def outside_model(self, result: StageResult, losses: Losses) -> np.ndarray:
        """Core loss and the copper loss above its value at the sheet's resistance."""
        out = super().outside_model(result, losses)
        if "copper" in losses:
            out = out + losses["copper"] - self._copper_ref(result)
        return out

    def loss_note(self, result: StageResult) -> str:
        _, why = self._core(result)
        return f"left out: core loss ({why})" if why else ""

    def stresses(self, result: StageResult, losses: Losses,
                 temperature: Temperature) -> list[Row]:
        i = result.currents[self.key]
        if "copper" not in losses:
            temperature = Temperature(np.full(self.size, np.nan), "no dcr on the part sheet")
        return [Row("i_peak", i.peak() / self.devices),
                Row("i_rms", i.rms() / self.devices),
                Row("t_hotspot", temperature.values, temperature.reason,
                    self.loss_note(result))]
