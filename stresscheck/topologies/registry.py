"""The one registry of converter models: topology name -> model module.

Every name of :data:`TOPOLOGIES` is a topology the tool models; ``schema.TOPOLOGIES``
(the closed set a design file may name) is derived from it. A new topology is one line
here (and its model module, which meets :class:`.base.Topology`). The functions below
are what the rest of the tool asks of a topology; each looks the design's model up here
and adds what is common to all (the controller's ``max_duty``).
"""

from __future__ import annotations

import numpy as np

from . import boost, bridge, buck, flyback, forward, pfc_boost, saturation
from ..errors import InputError
from .base import Layout, Stage, StageResult, Topology

TOPOLOGIES: dict[str, Topology] = {
    "full-bridge": bridge,
    "half-bridge": bridge,
    "push-pull": bridge,
    "forward": forward,
    "two-switch-forward": forward,
    "flyback": flyback,
    "buck": buck,
    "boost": boost,
    "pfc-boost": pfc_boost,
}


def check_envelope(design) -> None:
    """Refuse an operating envelope the design's topology cannot produce, naming the
    key (``InputError``); see each model's ``check_envelope``. A model takes a DC input
    unless it lists what it takes in a module-level ``INPUTS`` (``pfc_boost``: "ac")."""
    model = TOPOLOGIES[design.topology]
    inputs = getattr(model, "INPUTS", ("dc",))
    given = getattr(design, "input", "dc")
    if given not in inputs:
        raise InputError(design.path, "operating.input", f"a {design.topology} converter "
                         f"takes input = " + " or ".join(f'"{i}"' for i in inputs)
                         + f", not \"{given}\"")
    model.check_envelope(design)


def layout_for(design) -> Layout:
    """The roles a design's topology needs; InputError for combinations not modelled."""
    return TOPOLOGIES[design.topology].layout(design)


def evaluate(stage: Stage) -> StageResult:
    """Periodic steady state of every corner of ``stage`` by its topology's model, with
    each inductor's inductance at its peak current where its sheet gives a saturation
    roll-off (``saturation.solve``)."""
    return saturation.solve(stage, TOPOLOGIES[stage.topology].evaluate)


def duty_limit_reason(design) -> str:
    """Words for what limits the duty ratio of ``design`` (for error messages)."""
    text = TOPOLOGIES[design.topology].duty_limit_reason(design)
    if design.max_duty is not None:
        text += f"; the controller's max_duty is {design.max_duty:.3g}"
    return text


def topology_duty_limit(design, fs: np.ndarray) -> np.ndarray:
    """Largest duty ratio per switch at each corner: the topology's and the
    controller's (``max_duty``), whichever is lower.

    Parameters
    ----------
    design : Design
        The loaded design (its topology and ``max_duty``).
    fs : numpy.ndarray
        Switching frequency of each switch, (N,) [Hz].

    Returns
    -------
    numpy.ndarray
        Largest duty ratio per switch, (N,) [1].
    """
    limit = TOPOLOGIES[design.topology].duty_limit(design, fs)
    if design.max_duty is not None:
        limit = np.minimum(limit, design.max_duty)
    return limit
