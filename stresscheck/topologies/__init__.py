"""Converter models, one module per family, behind one registry.

A model turns the per-corner electrical parameters of a design (``Stage``) into periodic
waveforms on a shared segment grid (``StageResult``); the engine derives every stress
from those. The shapes live in :mod:`.base` (with the ``Topology`` protocol every model
meets), the name -> model table in :mod:`.registry`. Adding a topology = its model
module and one line in the registry (see DEVELOPERS.md).
"""

from .base import (CapacitorBank, Device, Inductor, Layout, Magnetics, RoleSpec, Stage,
                   StageResult, Topology)
from .registry import (TOPOLOGIES, check_envelope, duty_limit_reason, evaluate, layout_for,
                       topology_duty_limit)

__all__ = ["CapacitorBank", "Device", "Inductor", "Layout", "Magnetics", "RoleSpec",
           "Stage", "StageResult", "Topology", "TOPOLOGIES", "check_envelope",
           "duty_limit_reason", "evaluate", "layout_for", "topology_duty_limit"]
