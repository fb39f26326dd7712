"""What an evaluation of a design holds: every stress of every ref at every corner.

The engine produces these; checks, results and the ngspice cross-check read them.
Every array is (N,) over the corners (or Monte Carlo samples); NaN marks a value that is
not computed.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from .corners import CornerSet
from .topologies import Stage, StageResult


@dataclass
class Stress:
    """One quantity of one ref at every corner."""

    ref: str
    component: object
    quantity: str
    values: np.ndarray  # (N,) [SI], NaN where not computed
    applicable: np.ndarray  # (N,) bool: corners that count for this quantity
    reason: str = ""  # why not computed, if so
    note: str = ""  # what the value includes (e.g. a leakage spike: spikes.apply)
    spike: str = ""  # "clamp" or "allowance" where the value includes a leakage spike
    # rating key -> (N,) scale of the sheet's rating at each corner's temperature, and
    # that temperature [degC] (ratings.apply)
    rating_scale: dict | None = None
    basis: str = "computed"  # "measured" where a [[measured]] entry applies
    measured: dict | None = None  # {value, instrument, probe_point, date, mode}
    rating_temperature: np.ndarray | None = None
    # ratings that hold at each corner (rating key -> (N,) [SI]), e.g. a current rating
    # derated with the case temperature; they replace the sheet's in the checks
    ratings: dict = field(default_factory=dict)
    # a zero stress at every corner passes without the sheet's rating (e_avalanche: no
    # avalanche, no rating needed); any other value without it is unrated
    zero_needs_no_rating: bool = False


@dataclass
class Evaluation:
    """The solved design: model waveforms, temperatures, losses and stresses."""

    design: object
    corners: CornerSet
    result: StageResult
    stage: Stage
    stresses: list[Stress]
    # temperature [degC] of every device in the electro-thermal loop, by position key
    t_j: dict[tuple[str, int], np.ndarray]
    # corners where that loop ran away, by position key
    runaway: dict[tuple[str, int], np.ndarray]
    p_in: np.ndarray  # [W]
    p_out: np.ndarray  # [W]
    p_loss: np.ndarray  # [W] sum of every computed loss
    notes: list[dict] = field(default_factory=list)
    # loss terms of one device of each ref: ref -> term -> (N,) [W]
    losses: dict[str, dict[str, np.ndarray]] = field(default_factory=dict)
    # worst figures of each modelled leakage clamp (spikes.apply), for results.json
    clamps: list[dict] = field(default_factory=list)
    # power of one device's gate drive, dissipated in its driver: ref -> term -> (N,) [W]
    driver_losses: dict[str, dict[str, np.ndarray]] = field(default_factory=dict)
    # losses the converter model's waveforms do not carry (switching, recovery, core,
    # copper above its sheet temperature), drawn from the input in p_in [W], (N,)
    p_extra: np.ndarray | None = None
