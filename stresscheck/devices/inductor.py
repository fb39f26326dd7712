"""Inductor: inductance with its tolerance, DCR copper loss and hot spot."""

from __future__ import annotations

import numpy as np

from ..corners import tolerance_column
from ..topologies import Inductor as InductorParameters, StageResult
from .base import DeviceModel, Losses, Row, StageParts, Temperature


class Inductor(DeviceModel):
    """An output (or input) inductor position; positions enter the stage in layout order."""

    kind = "inductor"

    def add_to(self, parts: StageParts, t: np.ndarray) -> None:
        inductance = tolerance_column(self.corners, self.component, "inductance",
                                      self.part.spread("inductance").nom)
        parts.inductors.append(InductorParameters(
            inductance, self.electrical.get("dcr", 0.0) / self.devices))

    def losses(self, result: StageResult, t: np.ndarray) -> Losses:
        """``copper``: DCR·I_rms² [W] per device, the Joule loss of the winding's DC
        resistance (no skin or proximity effect, no core loss; common practice); none
        without a DCR."""
        dcr = self.electrical.get("dcr")
        if dcr is None:
            return {}
        return {"copper": dcr * (result.currents[self.key].rms() / self.devices) ** 2}

    def stresses(self, result: StageResult, losses: Losses,
                 temperature: Temperature) -> list[Row]:
        i = result.currents[self.key]
        if "copper" not in losses:
            temperature = Temperature(np.full(self.size, np.nan), "no dcr on the part sheet")
        return [Row("i_peak", i.peak() / self.devices),
                Row("i_rms", i.rms() / self.devices),
                Row("t_hotspot", temperature.values, temperature.reason)]
