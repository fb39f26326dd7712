"""The rectifier groups of a bridge-family converter: the positions that conduct with
one half-cycle, and their forward drops (shared by :mod:`.bridge_pwm` and
:mod:`.bridge_phase_shift`).
"""

from __future__ import annotations

import numpy as np

from ..waveforms import per_corner
from .base import Stage

# Rectifier positions of group A (conducts with the first half-cycle) and group B.
GROUPS = {"center-tap": ((0,), (1,)), "full-bridge": ((0, 3), (1, 2)),
          "current-doubler": ((0,), (1,))}


class RectifierGroup:
    """The rectifier positions that conduct with one half-cycle, averaged [SI].

    ``drop(i, body)`` is the forward drop at forward current ``i`` [V]: a diode (or a
    MOSFET's body diode, ``body=True``) v_f0 + r_d·i, a synchronous rectifier's channel
    R_DS(on)·i (in either direction). ``i`` may be (N,), (N, S) or (N, S, k).
    """

    def __init__(self, devices):
        self.sync = devices[0].kind == "mosfet"
        self.v_f0 = np.mean([d.v_f0 for d in devices], axis=0)
        self.r_d = np.mean([d.r_d for d in devices], axis=0)
        self.r_on = np.mean([d.r_on for d in devices], axis=0) if self.sync else None

    def drop(self, i, body=False):
        i = np.asarray(i, dtype=float)
        body = np.asarray(body, dtype=bool)
        diode = per_corner(self.v_f0, i.ndim) + per_corner(self.r_d, i.ndim) * i
        if not self.sync:
            return diode
        return np.where(body, diode, per_corner(self.r_on, i.ndim) * i)


def rectifier_groups(st: Stage) -> tuple[RectifierGroup, RectifierGroup]:
    """Groups A and B of ``st``'s rectifier positions (:data:`GROUPS`), each averaged."""
    rects = st.group("rectifier")
    a, b = GROUPS[st.rectifier]
    return (RectifierGroup([rects[k] for k in a]), RectifierGroup([rects[k] for k in b]))
