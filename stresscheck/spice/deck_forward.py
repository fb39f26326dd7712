"""ngspice transient netlists of one corner of a forward converter.

Topologies: ``forward`` (one switch, reset winding and reset diode) and
``two-switch-forward`` (two switches gated together, two clamp diodes); diode rectifier
(forward diode = ``rectifiers[0]``, freewheel diode = ``freewheels[0]``), or a
synchronous rectifier: a :class:`SwitchModel` in either or both positions (``S`` switch
with its body diode in the direction of the diode it replaces). The forward MOSFET is
gated with the primary switch (gate ``g1``); the freewheel MOSFET complementary to it
(gate ``g2``), one ``dead_time`` after the switch turns off until one ``dead_time``
before it turns on, its body diode carrying the inductor current in between.

Models as in :mod:`stresscheck.spice.elements` and the project's ngspice notes: ``S``
switches with an antiparallel body diode, straight-line diodes, L with DCR, C with ESR
and a 0 V sense source, a DC input behind a damped choke, and an ideal transformer from
controlled sources: one magnetizing inductance ``lm`` across the primary emf (after the
primary resistance), every other winding k an E source ``V(dot) − V(undot) =
(N_k/N_p)·V(primary)`` in series with its resistance and a 0 V sense source, reflected
to the primary by an F source drawing −(N_k/N_p)·i_k. The reset winding is such a
winding, with its dot at ground and its undotted end on the reset diode's anode (the
diode's cathode on the bus). Leakage inductance is left out, like in the analytic model
(stresses "before any spike").

Element names are those of :mod:`stresscheck.spice.elements` (same :class:`Layout`), plus:

======================  ==========================================================
``vf0``                 offset source of the freewheel diode (anode ``0``, cathode
                        ``rect``): its current is the forward current
``vr{k}``               offset source of reset diode ``k``. Single switch: ``vr0``,
                        anode ``wru`` (reset winding), cathode ``bus``. Two-switch:
                        ``vr0`` from ``0`` to ``pa`` (primary dot), ``vr1`` from ``pb``
                        (undotted end) to ``bus``
``vwr``                 reset winding current sense, into its dot (from ground)
======================  ==========================================================

Synchronous rectifiers (listed in ``Layout.mosfets``): forward MOSFET ``Ssr0``, drain
sense ``vsr0`` from ``rect``, source at ``sa``, body diode offset ``vbsr0``; freewheel
MOSFET ``Ssf0``, drain sense ``vsf0`` from ``rect``, source at ground, body diode
``vbsf0``.

Switches: single switch ``vq0`` from the primary's undotted end ``pd`` to ground.
Two-switch: ``vq0`` from ``bus`` to ``pa``, ``vq1`` from ``pb`` to ground. The
forward diode ``vd0`` goes from the secondary dot ``sa`` to ``rect``; the secondary's
undotted end is ground.
"""

from __future__ import annotations

from .circuit import Circuit, SwitchModel
from .elements import (T_EDGE, Deck, Layout, NetlistWriter, initial_conditions,
                       switching_period)
from .slow_modes import mean_output_voltage, output_filter_shift

TOPOLOGIES = ("forward", "two-switch-forward")
#: Integration method. In the idle interval the magnetizing inductance sits in series with
#: the off switch (R_OFF): a loop of time constant L_m/R_OFF ~ 1e-11 s, far below the
#: step. The trapezoidal rule rings point to point on it (a few µV on the windings), and
#: at the next turn-on after a DCM idle ngspice then crept on with tiny steps for
#: minutes, without an error. Gear's second-order method damps that mode; the stresses
#: agree with trapezoidal runs that do finish to 3e-4 (forward, 5 V 10 A and 0.5 A).
METHOD = "gear"


def check_supported(c: Circuit) -> None:
    """Check that ``c`` is a forward-family circuit this module builds.

    Raises
    ------
    NotImplementedError
        Another topology.
    ValueError
        Position counts, turns or capacitors that do not fit the topology.
    """
    if c.topology not in TOPOLOGIES:
        raise NotImplementedError(f"forward netlist for topology {c.topology!r} not "
                                  f"available; valid: {', '.join(TOPOLOGIES)}")
    two = c.topology == "two-switch-forward"
    n_sw, n_rst = (2, 2) if two else (1, 1)
    if (len(c.switches) != n_sw or len(c.rectifiers) != 1 or len(c.freewheels) != 1
            or len(c.resets) != n_rst):
        raise ValueError(f"{c.topology} needs {n_sw} switch(es), 1 rectifier, 1 freewheel "
                         f"and {n_rst} reset diode(s); got {len(c.switches)}, "
                         f"{len(c.rectifiers)}, {len(c.freewheels)} and {len(c.resets)}")
    if not two and not c.n_r:
        raise ValueError("a single-switch forward needs n_r (reset winding turns)")
    if c.c_out is None or c.c_in is None:
        raise ValueError(f"{c.topology} needs c_in and c_out")


def duty_limit(c: Circuit) -> float:
    """Largest duty ratio that leaves the core time to reset, lossless [1]:
    N_p/(N_p + N_r) for the reset winding, 1/2 for the clamp diodes (Erickson &
    Maksimović, Fundamentals of Power Electronics, 2nd ed., §6.3.3 — from memory), less
    the gate edges.

    Parameters and returns with their units: :attr:`stresscheck.spice.elements.Deck.duty_limit`.
    """
    limit = 0.5 if c.topology == "two-switch-forward" else c.n_p / (c.n_p + c.n_r)
    limit -= 2 * T_EDGE * c.f_sw
    if isinstance(c.freewheels[0], SwitchModel):  # the off-time holds two dead times
        limit = min(limit, 1.0 - 2 * (c.dead_time + T_EDGE) * c.f_sw)
    return limit


def build(c: Circuit, duty: float, t_stop: float, t_measure: float,
          ic: dict | None, choke: str) -> tuple[str, Layout]:
    """Forward-family deck text of one corner, and the :class:`Layout` of its names
    (arguments and units as in :attr:`.elements.Deck.build`)."""
    check_supported(c)
    two = c.topology == "two-switch-forward"
    ts = switching_period(c)
    ic = initial_conditions(c, ic)
    d = NetlistWriter()
    lay = d.lay
    sr, sf = (isinstance(x[0], SwitchModel) for x in (c.rectifiers, c.freewheels))
    kind = {(False, False): "diode rectifier", (True, False): "synchronous forward rectifier",
            (False, True): "synchronous freewheel",
            (True, True): "synchronous rectifiers"}[(sr, sf)]
    td = c.dead_time if sf else 0.0
    d.add(f"* stresscheck reference: {c.topology}, {kind}, v_in={c.v_in:g} V, "
          f"v_out={c.v_out:g} V, i_out={c.i_out:g} A, f_sw={c.f_sw:g} Hz, "
          + (f"dead_time={td:g} s, " if sf else "")
          + f"duty={duty:.9f}, regime={c.regime}, choke={choke}")
    d.options(f" method={METHOD}")
    d.switch_models(c.switches)
    if sr:
        d.switch_models(c.rectifiers, group="sr")
    if sf:
        d.switch_models(c.freewheels, group="sf")

    # Input: source -> choke || damping -> bus, and the input capacitors.
    d.input_filter(c, choke, ic)

    # One gate drives every switch, on from t = 0 for duty·Ts.
    d.gate("1", 0.0, duty * ts, ts)
    n = c.n_s / c.n_p
    i_body = c.i_out * n
    legs = [("bus", "pa"), ("pb", "0")] if two else [("pd", "0")]
    for k, ((drain, source), sw) in enumerate(zip(legs, c.switches)):
        lay.switches.append(d.switch(k, drain, source, "1", sw, i_body))

    # Primary (dot p_top -> undot pu) with its resistance, the magnetizing inductance
    # across the emf (p1, pu).
    p_top, pu = ("pa", "pb") if two else ("bus", "pd")
    d.primary(p_top, c.r_primary)
    lay.windings["primary"] = ("vp1", c.r_primary)
    d.magnetizing(pu, c.l_m, ic["lm"])
    l_m = lay.l_m

    # Reset: winding from ground (dot) to wru, diode to the bus; or the two clamp diodes.
    v_mag = c.v_in * duty * ts / l_m  # magnetizing peak, for the diode offsets
    if two:
        i_reset = v_mag / 2
        pins = [("0", "pa"), ("pb", "bus")]
    else:
        ratio_r = c.n_r / c.n_p
        d.winding("r", "0", "wru", pu, ratio_r, c.r_reset)
        lay.windings["reset"] = ("vwr", c.r_reset)
        i_reset = v_mag / ratio_r / 2
        pins = [("wru", "bus")]
    for k, ((anode, cathode), dm) in enumerate(zip(pins, c.resets)):
        d.diode_at(lay.resets, f"r{k}", anode, cathode, dm, i_reset)

    # Secondary (dot sa, undot ground), forward and freewheel diodes into node rect.
    d.winding("0", "sa", "0", pu, n, c.r_secondary)
    lay.windings["secondary-1"] = ("vw0", c.r_secondary)
    if sr:  # body diode: the idle clamp current only (a small fraction of i_out)
        lay.mosfets[("rectifier", 0)] = d.switch(0, "rect", "sa", "1", c.rectifiers[0],
                                                 0.05 * c.i_out, group="sr")
    else:
        d.diode_at(lay.rectifiers, "d0", "sa", "rect", c.rectifiers[0], c.i_out)
    if sf:
        d.gate("2", duty * ts + td, ts - duty * ts - 2 * td, ts)
        lay.mosfets[("freewheel", 0)] = d.switch(0, "rect", "0", "2", c.freewheels[0],
                                                 c.i_out, group="sf")
    else:
        d.diode_at(lay.freewheels, "f0", "0", "rect", c.freewheels[0], c.i_out)

    # Output filter and load.
    d.inductor("Lout", "rect", "out", c.l_out, c.dcr_out, ic["lout"],
                   roll_off=c.roll_off.get("Lout"))
    d.output(c, ic)
    return d.finish(ts, t_stop, t_measure), lay



def slow_mode_shift(c: Circuit, lay: Layout, w, duty: float):
    """Contract of :attr:`stresscheck.spice.elements.Deck.slow_mode_shift`: the output and
    input filter shift (:func:`stresscheck.spice.slow_modes.output_filter_shift`), no flux
    shift (the core resets every period) and the window's mean output voltage [A, V].

    Parameters and returns with their units:
    :attr:`stresscheck.spice.elements.Deck.slow_mode_shift`.
    """
    return output_filter_shift(c, lay, w), {}, mean_output_voltage(w)


#: The forward family's deck (single and two-switch, diode or synchronous rectifiers).
DECK = Deck("forward", build, duty_limit, slow_mode_shift)
