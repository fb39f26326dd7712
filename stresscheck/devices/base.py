"""What every device kind shares: its position, its thermal path, its loss terms.

A device model stands for one position of the design (one ref, or every ref of a
capacitor bank) over all corners at once: every array is ``(N,)`` over the corners.
Each kind says what the converter model needs from its part sheet (``add_to``), what it
dissipates (``losses``, named terms) and which quantities it is checked on
(``stresses``). The engine only orchestrates: it never asks what kind a part is.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import ClassVar

import numpy as np

from ..thermal import DEFAULT_HOT, junction_temperature
from ..topologies import CapacitorBank, Device, Inductor, Magnetics, StageResult

Losses = dict[str, np.ndarray]
"""Loss terms of one device: term name -> (N,) power [W] dissipated in that device."""

# Terms that the converter model's waveforms do not carry (``loss_model``).
OUTSIDE_MODEL_TERMS = ("overlap", "c_oss", "commutation", "recovery", "core")


@dataclass
class Position:
    """One circuit position: a ref (or, for a capacitor bank, all refs of the bank)."""

    role: str
    index: int
    component: object
    refs: list[str]
    devices: int  # identical devices sharing the position's current

    @property
    def key(self) -> tuple[str, int]:
        return (self.role, self.index)


@dataclass
class Temperature:
    """A device's temperature at every corner [degC], or NaN with the reason."""

    values: np.ndarray
    reason: str = ""

    @property
    def computed(self) -> bool:
        return not self.reason


@dataclass
class Row:
    """One quantity of a device at every corner [SI]; NaN with a reason where not computed."""

    quantity: str
    values: np.ndarray
    reason: str = ""
    note: str = ""  # what a computed value includes or leaves out
    ratings: dict = field(default_factory=dict)  # rating key -> (N,) at each corner


@dataclass
class StageParts:
    """The part-sheet side of a ``Stage``, filled by the device models of one design."""

    semiconductors: dict[tuple[str, int], Device] = field(default_factory=dict)
    capacitors: dict[tuple[str, int], CapacitorBank] = field(default_factory=dict)
    inductors: list[Inductor] = field(default_factory=list)
    transformer: Magnetics | None = None


def total_loss(losses: Losses, n: int) -> np.ndarray:
    """Sum of the loss terms of one device [W], (N,); zeros when there is none.

    Parameters
    ----------
    losses : dict of str to ndarray
        Loss terms [W], each (N,).
    n : int
        Number of corners.

    Returns
    -------
    ndarray
        Total dissipation [W], (N,).
    """
    out = np.zeros(n)
    for term in losses.values():
        out = out + term
    return out


class DeviceModel:
    """Base of the device kinds. One instance per position, built once per evaluation.

    Class attributes a kind sets:

    - ``kind``: the part kind it models (``schema.KINDS``);
    - ``thermal_feedback``: True when its losses depend on its own temperature, so that it
      takes part in the electro-thermal loop (R_DS(on) rising with T_j);
    - ``self_heating``: True when its losses depend on its own temperature but what it
      gives the converter model does not (copper resistance of a winding): its
      temperature is solved after the loop, on its own;
    - ``no_path_reason``: why its temperature is not computed without a thermal path;
    - ``t_max_key``: the rating key of its temperature limit.
    """

    kind: ClassVar[str] = ""
    thermal_feedback: ClassVar[bool] = False
    self_heating: ClassVar[bool] = False
    no_path_reason: ClassVar[str] = "no r_th given"
    t_max_key: ClassVar[str] = "t_max"

    def __init__(self, position: Position, corners, context=None):
        self.position = position
        self.corners = corners
        self.component = position.component
        self.part = position.component.part
        self.electrical = self.part.electrical
        self.context = context  # loss_model.LossContext shared by the design's devices
        self.r_th = self.thermal_path()

    @property
    def heatsink(self) -> str | None:
        """Id of the design's heatsink the device is mounted on, or None; then
        ``r_th`` is junction to sink."""
        return getattr(self.component, "heatsink", None)

    @property
    def key(self) -> tuple[str, int]:
        return self.position.key

    @property
    def refs(self) -> list[str]:
        return self.position.refs

    @property
    def devices(self) -> int:
        return self.position.devices

    @property
    def size(self) -> int:
        return self.corners.size

    # ---------------------------------------------------------------- thermal
    def thermal_path(self) -> float | None:
        """Hot-spot to ambient thermal resistance [K/W] of one device, or None.

        Returns
        -------
        float or None
            ``r_th_ja`` of the design, else its ``r_th_ca``, else the sheet's ``r_th``.
        """
        if self.component.r_th_ja is not None:
            return self.component.r_th_ja
        if self.component.r_th_ca is not None:
            return self.component.r_th_ca
        return self.part.thermal.get("r_th")

    def start_temperature(self, t_a: np.ndarray) -> np.ndarray:
        """Temperature the electro-thermal loop starts from [degC], (N,).

        Parameters
        ----------
        t_a : ndarray
            Ambient temperature [degC], (N,).

        Returns
        -------
        ndarray
            The ambient with a thermal path; without one the device is taken at its
            temperature limit (``t_max_key``, else 150 degC) and stays there.
        """
        if self.r_th is not None:
            return t_a.copy()
        return np.full(self.size, self.part.ratings.get(self.t_max_key, DEFAULT_HOT))

    def temperature(self, p_device: np.ndarray, t_a: np.ndarray) -> Temperature:
        """Steady temperature from the device's own dissipation, T = T_a + P·R_th.

        Parameters
        ----------
        p_device : ndarray
            Dissipation of one device [W], (N,).
        t_a : ndarray
            Ambient temperature [degC], (N,).

        Returns
        -------
        Temperature
            [degC], (N,); NaN with ``no_path_reason`` without a thermal path.
        """
        if self.r_th is None:
            return Temperature(np.full(self.size, np.nan), self.no_path_reason)
        return Temperature(junction_temperature(t_a, p_device, self.r_th))

    def total(self, losses: Losses) -> np.ndarray:
        """Dissipation of one device [W], (N,): the sum of its loss terms."""
        return total_loss(losses, self.size)

    def position_loss(self, p_device: np.ndarray) -> np.ndarray:
        """Dissipation of the whole position [W] from that of one device, (N,)."""
        return p_device * self.devices

    def model_rows(self, result: StageResult) -> list[Row]:
        """Quantities the converter model adds for this position
        (``StageResult.shared_rows``), per device: position totals shared equally."""
        return [Row(q, np.asarray(v, dtype=float) / self.devices)
                for q, v in result.shared_rows.get(self.key, {}).items()]

    def outside_model(self, result: StageResult, losses: Losses) -> np.ndarray:
        """The part of one device's loss the converter model's waveforms do not carry
        [W], (N,): drawn from the input on top of the model's input current (energy
        balance). The switching-related and core terms; kinds add their own."""
        out = np.zeros(self.size)
        for term in OUTSIDE_MODEL_TERMS:
            if term in losses:
                out = out + losses[term]
        return out

    def loss_note(self, result: StageResult) -> str:
        """The method that set a switch's overlap term and the loss terms left out for
        want of sheet values, for the rows' note (the switching-related terms of a
        semiconductor; kinds add their own)."""
        if self.context is None:
            return ""
        sw = self.context.extra(result).switching.get(self.key)
        if sw is None:
            return ""
        parts = [sw.method] if sw.method else []
        if sw.left_out:
            parts.append("left out: " + "; ".join(sw.left_out))
        return "; ".join(parts)

    def driver_losses(self, result: StageResult) -> Losses:
        """Power of one device dissipated outside it, in its driver [W] (gate drive)."""
        return {}

    # ---------------------------------------------------------------- per kind
    def share(self, context) -> None:
        """Offer the shared loss context what this kind knows (the transformer its
        magnetics); nothing by default."""

    def notes(self) -> list[dict]:
        """Warnings about the part sheet (values missing, defaults taken)."""
        return []

    def add_to(self, parts: StageParts, t: np.ndarray) -> None:
        """Put what the converter model needs of this position into ``parts``.

        Parameters
        ----------
        parts : StageParts
            Collector of the part-sheet side of the stage.
        t : ndarray
            The device's temperature [degC], (N,) (used by kinds with thermal feedback).
        """
        raise NotImplementedError

    def losses(self, result: StageResult, t: np.ndarray) -> Losses:
        """Loss terms of one device [W], each (N,), at temperature ``t`` [degC].

        Parameters
        ----------
        result : StageResult
            Waveforms of the converter model.
        t : ndarray
            The device's temperature [degC], (N,).

        Returns
        -------
        dict of str to ndarray
            Term name -> dissipation of one device [W]; empty when none is computed.
        """
        return {}

    def stresses(self, result: StageResult, losses: Losses,
                 temperature: Temperature) -> list[Row]:
        """Every quantity this device is checked on [SI], per device, each (N,).

        Parameters
        ----------
        result : StageResult
            Waveforms of the converter model.
        losses : dict of str to ndarray
            This device's loss terms [W] (from ``losses``).
        temperature : Temperature
            Its solved temperature [degC].

        Returns
        -------
        list of Row
        """
        raise NotImplementedError
