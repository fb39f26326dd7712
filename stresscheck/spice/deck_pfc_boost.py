"""The pfc-boost in the deck registry: refused by ``verify``.

``verify`` drives a deck with one duty ratio per corner and runs a few switching
periods to a periodic steady state; a PFC boost has a duty ratio that changes over the
line cycle and needs a transient over whole line cycles with an average-current
controller. That transient is built in the tests instead (``tests/pfc_spice.py``:
behavioural average-current controller, two line cycles, netlists under
``tests/reference/spice/``). Every function here raises ``NotImplementedError`` with
that explanation, and ``DECK.refused`` holds it, so ``verify`` refuses the topology
before running anything (exit status 2).
"""

from __future__ import annotations

from .elements import Deck

REASON = ("ngspice cross-check of a pfc-boost is not part of 'verify': its duty ratio "
          "changes over the line cycle, which the per-period deck does not cover; the "
          "line-cycle transients with an average-current controller are in the tests")


def check_supported(c) -> None:
    """Raise ``NotImplementedError``: see the module docstring."""
    raise NotImplementedError(REASON)


def build(c, duty, t_stop, t_measure, ic, choke):
    """Raise ``NotImplementedError``: see the module docstring."""
    check_supported(c)


def duty_limit(c) -> float:
    """Raise ``NotImplementedError``: see the module docstring."""
    check_supported(c)


def slow_mode_shift(c, lay, w, duty):
    """Raise ``NotImplementedError``: see the module docstring."""
    check_supported(c)


DECK = Deck("pfc-boost", build, duty_limit, slow_mode_shift, refused=REASON)
