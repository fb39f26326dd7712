"""The registry of ngspice decks: one :class:`~stresscheck.spice.elements.Deck` per
topology name (the names of :data:`stresscheck.schema.TOPOLOGIES`).

Built here, explicitly, from the deck modules; no module writes into it. Adding a
topology is its deck module and one line of :data:`DECKS`.
"""

from __future__ import annotations

from . import deck_bridge, deck_buck_boost, deck_clamp, deck_forward, deck_pfc_boost
from .circuit import Circuit
from .elements import Deck, Layout

DECKS: dict[str, Deck] = {
    "full-bridge": deck_bridge.DECK,
    "half-bridge": deck_bridge.DECK,
    "push-pull": deck_clamp.PUSH_PULL,  # deck_bridge's, or with leakage and clamps
    "forward": deck_forward.DECK,
    "two-switch-forward": deck_forward.DECK,
    "flyback": deck_clamp.FLYBACK,  # deck_flyback's, or with leakage and a clamp
    "buck": deck_buck_boost.BUCK,
    "boost": deck_buck_boost.BOOST,
    "pfc-boost": deck_pfc_boost.DECK,
}


def deck_for(topology: str) -> Deck:
    """The deck of a topology.

    Parameters
    ----------
    topology : str
        Topology name of the circuit.

    Returns
    -------
    Deck

    Raises
    ------
    NotImplementedError
        No deck for ``topology``; the message lists the topologies that have one.
    """
    try:
        return DECKS[topology]
    except KeyError:
        raise NotImplementedError(f"ngspice netlist for topology {topology!r} not "
                                  f"available; valid: {', '.join(DECKS)}") from None


def build_deck(c: Circuit, duty: float, t_stop: float, t_measure: float,
               ic: dict | None, choke: str) -> tuple[str, Layout]:
    """Transient netlist of one corner by the deck of its topology.

    Parameters
    ----------
    c : Circuit
        The corner.
    duty : float
        On-time of each switch per period [1].
    t_stop : float
        Simulated time from the initial conditions [s].
    t_measure : float
        Length of the saved window at the end [s].
    ic : dict or None
        Initial state by :data:`stresscheck.spice.elements.IC_KEYS` [A, V].
    choke : {"short", "real"}
        Input choke (:data:`stresscheck.spice.elements.CHOKE_RESONANCE`).

    Returns
    -------
    (str, Layout)
        The deck text (ending with ``.end``, no ``.control`` block) and its element
        names.
    """
    return deck_for(c.topology).build(c, duty, t_stop, t_measure, ic, choke)
