"""The ngspice deck of the bridge family: transient netlists of one corner.

Topologies: ``full-bridge`` (PWM), ``half-bridge``, ``push-pull``; rectifiers
``center-tap`` and ``full-bridge`` here, phase shift, current doubler and synchronous
rectifiers in :mod:`stresscheck.spice.deck_bridge_ext`; :data:`DECK` takes both. The
models follow the project's ngspice notes (shared reference, "ngspice-notes"): ``S``
switches with an antiparallel body diode, an ideal transformer built from controlled
sources plus one magnetizing inductance, straight-line diodes (offset source +
near-ideal diode + slope resistor), L with DCR, C with ESR and a 0 V sense source, and
a DC input behind a damped choke.

Names shared with the measurement code (all lower case, as ngspice reports them):

======================  ==========================================================
``vq{k}``               sense source in the drain lead of switch ``k`` (switch and body
                        diode together); drain node ``q{k}d``, source node per layout
``vb{k}``               offset source of the body diode of switch ``k``: its current
                        is the body-diode forward current
``vd{k}``               offset source of rectifier ``k``: its current is the forward
                        current; anode/cathode nodes per layout
``lout``                output inductor, current from the rectifier node ``rect``
                        towards the output node ``out``
``lm``                  magnetizing inductance, current from the reference winding's
                        dot to its undotted end (ramps up in the first on-interval)
``lch``                 input choke (source node ``vsrc`` -> node ``bus``)
``vco`` / ``vci``       output / input capacitor current sense (into the capacitor)
``vct`` / ``vcb``       half-bridge top / bottom split-capacitor current sense
``vp1``, ``vp2``        primary winding (half) current sense, into the dot
``vw{k}``               secondary winding ``k`` current sense, into the dot
======================  ==========================================================

Initial conditions (``ic``) use the keys of :data:`stresscheck.spice.elements.IC_KEYS`.
"""

from __future__ import annotations

from . import deck_bridge_ext
from .bridge_parts import (BRIDGE_LEGS, bridge_secondaries, bridge_switches,
                           bridge_transformer, check_supported, flux_bias_shift)
from .circuit import Circuit
from .elements import (I_REF_FRACTION, T_EDGE, Deck, Layout, NetlistWriter,
                       initial_conditions, switching_period)
from .slow_modes import mean_output_voltage, output_filter_shift

def build(c: Circuit, duty: float, t_stop: float, t_measure: float,
          ic: dict | None, choke: str) -> tuple[str, Layout]:
    """Transient netlist of one corner (plain PWM circuits) and its :class:`Layout`.

    Parameters
    ----------
    c : Circuit
        The corner (bridge family).
    duty : float
        On-time of each switch (full-bridge: each diagonal pair) per period [1].
    t_stop : float
        Simulated time from the initial conditions [s]; a whole number of periods.
    t_measure : float
        Length of the window at the end whose time points are saved [s]; saving starts
        one maximum step earlier so the window's first instant can be interpolated.
    ic : dict or None
        Initial state by :data:`.elements.IC_KEYS` [A, V]; missing keys come from
        :func:`stresscheck.spice.elements.analytic_ic`.
    choke : {"short", "real"}
        Input choke, see :data:`stresscheck.spice.elements.CHOKE_RESONANCE`.

    Returns
    -------
    (str, Layout)
        The deck, ending with ``.tran ... uic`` and ``.end`` (no ``.control`` block),
        and its element names.
    """
    check_supported(c)
    ts = switching_period(c)
    ic = initial_conditions(c, ic)
    d = NetlistWriter()
    lay = d.lay
    d.add(f"* stresscheck reference: {c.topology} / {c.rectifier} rectifier, "
          f"v_in={c.v_in:g} V, v_out={c.v_out:g} V, i_out={c.i_out:g} A, "
          f"f_sw={c.f_sw:g} Hz, duty={duty:.9f}, choke={choke}")
    d.options()
    d.switch_models(c.switches)

    # Input: source -> choke || damping -> bus, and the input (or split) capacitors.
    d.input_filter(c, choke, ic)

    # Gate 1 drives the first half-cycle from t = 0, gate 2 the second from Ts/2
    # (switch legs: BRIDGE_LEGS).
    d.gate("1", 0.0, duty * ts, ts)
    d.gate("2", ts / 2, duty * ts, ts)
    bridge_switches(d, c, BRIDGE_LEGS[c.topology])

    # Transformer: reference winding (dot p1, undot pu) with Lm; E/F for the others.
    pu = bridge_transformer(d, c, ic)

    # Rectifier into node rect; output return is ground.
    pins, _ = bridge_secondaries(d, c, pu)
    i_rect = I_REF_FRACTION * c.i_out
    for k, ((anode, cathode), dm) in enumerate(zip(pins, c.rectifiers)):
        d.diode_at(lay.rectifiers, f"d{k}", anode, cathode, dm, i_rect)

    # Output filter and load.
    d.inductor("Lout", "rect", "out", c.l_out, c.dcr_out, ic["lout"],
                   roll_off=c.roll_off.get("Lout"))
    d.output(c, ic)
    return d.finish(ts, t_stop, t_measure), lay


def duty_limit(c: Circuit) -> float:
    """Largest duty ratio that keeps the two half-cycles apart [1]: half the period less
    the dead time and the gate edges."""
    return 0.5 - (c.dead_time + 2 * T_EDGE) * c.f_sw


def slow_mode_shift(c: Circuit, lay: Layout, w, duty: float):
    """Contract of :attr:`stresscheck.spice.elements.Deck.slow_mode_shift` for every bridge
    circuit: the output and input filter shift
    (:func:`stresscheck.spice.slow_modes.output_filter_shift`), the flux-bias shift
    (:func:`stresscheck.spice.bridge_parts.flux_bias_shift`) and the window's mean
    output voltage [A, V]; phase shift and current doubler in
    :func:`stresscheck.spice.deck_bridge_ext.slow_mode_shift`.

    Parameters and returns with their units:
    :attr:`stresscheck.spice.elements.Deck.slow_mode_shift`.
    """
    if deck_bridge_ext.own_shift(c):
        return deck_bridge_ext.slow_mode_shift(c, lay, w, duty)
    return (output_filter_shift(c, lay, w), flux_bias_shift(c, lay, w, duty),
            mean_output_voltage(w))


def build_bridge(c: Circuit, duty: float, t_stop: float, t_measure: float,
                 ic: dict | None, choke: str) -> tuple[str, Layout]:
    """The bridge family's netlist (contract of :func:`build`): the extensions' deck for
    its circuits (:func:`stresscheck.spice.deck_bridge_ext.handles`), :func:`build` for
    the others.

    Parameters and returns with their units: :attr:`stresscheck.spice.elements.Deck.build`.
    """
    if deck_bridge_ext.handles(c):
        return deck_bridge_ext.build(c, duty, t_stop, t_measure, ic, choke)
    return build(c, duty, t_stop, t_measure, ic, choke)


#: The bridge family's deck (every bridge topology, modulation and rectifier).
DECK = Deck("bridge", build_bridge, duty_limit, slow_mode_shift)
