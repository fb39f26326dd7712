"""Transformer (or coupled inductor): turns, magnetizing inductance, winding loss, flux."""

from __future__ import annotations

import numpy as np

from ..corners import tolerance_column
from ..topologies import Magnetics, StageResult
from .base import DeviceModel, Losses, Row, StageParts, Temperature

NO_MAGNETIZING = 1e6  # [H] stands for "no magnetizing current" when L_m is not given


class Transformer(DeviceModel):
    """The transformer position of an isolated stage.

    The converter model takes it as one device whatever its ``parallel``: its winding
    loss is the whole position's, and so is its temperature.
    """

    kind = "transformer"
    no_path_reason = "no r_th on the part sheet"

    def notes(self) -> list[dict]:
        if "magnetizing_inductance" in self.electrical:
            return []
        return [{"level": "warning", "text": f"{self.refs[0]}: no magnetizing_inductance "
                 "on the part sheet; magnetizing current left out of the switch currents"}]

    def add_to(self, parts: StageParts, t: np.ndarray) -> None:
        e = self.electrical
        if "magnetizing_inductance" in e:
            l_m = tolerance_column(self.corners, self.component, "magnetizing_inductance",
                                   self.part.spread("magnetizing_inductance").nom)
        else:
            l_m = np.full(self.size, NO_MAGNETIZING)
        parts.transformer = Magnetics(e["primary_turns"], e["secondary_turns"], l_m,
                                      e.get("r_primary", 0.0), e.get("r_secondary", 0.0),
                                      e.get("core_area"), e.get("reset_turns"),
                                      e.get("r_reset", 0.0), e.get("leakage_inductance", 0.0))

    def losses(self, result: StageResult, t: np.ndarray) -> Losses:
        """``copper``: Σ R·I_rms² over the windings [W], as the converter model computes
        it from each winding's current (no core loss)."""
        return {"copper": result.winding_loss}

    def position_loss(self, p_device: np.ndarray) -> np.ndarray:
        return p_device  # one device to the model (see the class docstring)

    def stresses(self, result: StageResult, losses: Losses,
                 temperature: Temperature) -> list[Row]:
        if result.b_peak is None:
            b_peak = Row("b_peak", np.full(self.size, np.nan), "no core_area on the part sheet")
        else:
            b_peak = Row("b_peak", result.b_peak)
        return [b_peak, Row("t_hotspot", temperature.values, temperature.reason)]
