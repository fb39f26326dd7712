"""Transformer (or coupled inductor): turns, magnetizing inductance, winding loss, flux."""

from __future__ import annotations

import numpy as np

from .. import loss_model
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
    self_heating = True  # copper resistance rises with the hot spot

    def share(self, context) -> None:
        context.magnetics = self.magnetics

    def notes(self) -> list[dict]:
        if "magnetizing_inductance" in self.electrical:
            return []
        return [{"level": "warning", "text": f"{self.refs[0]}: no magnetizing_inductance "
                 "on the part sheet; magnetizing current left out of the switch currents"}]

    def magnetics(self) -> Magnetics:
        """The converter model's view of the part: turns, L_m per corner, resistances."""
        e = self.electrical
        if "magnetizing_inductance" in e:
            l_m = tolerance_column(self.corners, self.component, "magnetizing_inductance",
                                   self.part.spread("magnetizing_inductance").nom)
        else:
            l_m = np.full(self.size, NO_MAGNETIZING)
        area = self.part.spread("core_area")
        return Magnetics(e["primary_turns"], e["secondary_turns"], l_m,
                         e.get("r_primary", 0.0), e.get("r_secondary", 0.0),
                         None if area is None else area.nom, e.get("reset_turns"),
                         e.get("r_reset", 0.0), e.get("leakage_inductance", 0.0),
                         area.min if area is not None and area.is_range else None)

    def area_factor(self) -> float:
        """A_e,nom / A_e,min [1]: the models take the flux B = V·t/(N·A_e) (Faraday's
        law; flyback B = L_m·I_pk/(N·A_e)) at the sheet's nominal core area; a core
        area with a tolerance has its peak flux checked at the low end (the flux
        density is inversely proportional to the area: McLyman, Transformer and
        Inductor Design Handbook, 4th ed., ch. 1 and 7, B = V·t/(N·A_c)). 1 without a
        tolerance."""
        area = self.part.spread("core_area")
        if area is None or not area.is_range:
            return 1.0
        return area.nom / area.min

    def area_note(self) -> str:
        if self.area_factor() == 1.0:
            return ""
        return "at the lowest core_area of its tolerance"

    def add_to(self, parts: StageParts, t: np.ndarray) -> None:
        # the converter model takes the sheet's resistances; the loss below takes
        # them at the hot spot
        parts.transformer = self.magnetics()

    def _core(self, result: StageResult):
        if self.context.line_cycle:
            return None, loss_model.LINE_CYCLE_NOTE
        return loss_model.transformer_core(self.part, self.context.design.topology,
                                           self.magnetics(), self.corners, result)

    def losses(self, result: StageResult, t: np.ndarray) -> Losses:
        """``copper``: Σ R·I_rms² over the windings [W] as the converter model computes
        it from each winding's current, with the resistances at the hot spot (copper
        0.393 %/K, ``loss_model.copper_at``); ``core``: the iGSE on the flux pieces of
        the topology (``flux.transformer_pieces``, ``magnetics_loss.core_loss``) where
        the sheet gives core-loss coefficients and the core area."""
        t_cu = t if self.r_th is not None else np.full(self.size, np.nan)
        out = {"copper": loss_model.copper_at(self.part, t_cu, result.winding_loss)}
        if self.context is not None:
            core, _ = self._core(result)
            if core is not None:
                out["core"] = np.where(self.context.heating(), core, 0.0)
        return out

    def outside_model(self, result: StageResult, losses: Losses) -> np.ndarray:
        """Core loss and the copper loss above its value at the sheet's resistances."""
        return super().outside_model(result, losses) + losses["copper"] - result.winding_loss

    def loss_note(self, result: StageResult) -> str:
        if self.context is None:
            return ""
        _, why = self._core(result)
        return f"left out: core loss ({why})" if why else ""

    def position_loss(self, p_device: np.ndarray) -> np.ndarray:
        return p_device  # one device to the model (see the class docstring)

    def stresses(self, result: StageResult, losses: Losses,
                 temperature: Temperature) -> list[Row]:
        if result.b_peak is None:
            b_peak = Row("b_peak", np.full(self.size, np.nan), "no core_area on the part sheet")
        else:
            b_peak = Row("b_peak", result.b_peak * self.area_factor(),
                         note=self.area_note())
        return [b_peak, Row("t_hotspot", temperature.values, temperature.reason,
                            self.loss_note(result))]
