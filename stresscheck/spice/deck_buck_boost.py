"""ngspice transient netlists of one corner of a buck or boost converter.

Topologies: ``buck`` (high-side switch ``switches[0]``, freewheel ``freewheels[0]``) and
``boost`` (low-side switch ``switches[0]``, rectifier ``rectifiers[0]``); the freewheel
or rectifier is a diode, or a MOSFET (synchronous, driven complementary to the switch
with ``dead_time`` between the two gates).

Models as in :mod:`stresscheck.spice.elements` and the project's ngspice notes: ``S``
switches with an antiparallel body diode, straight-line diodes (offset source +
near-ideal diode + slope resistor), L with DCR, C with ESR and a 0 V sense source, a
DC input behind a damped choke (the input capacitors carry all the AC current), a load
resistor v_out/i_out. No switch-node capacitance: in the idle interval of
discontinuous conduction the node follows the inductor (zero current), as in the
analytic model.

Element names are those of :mod:`stresscheck.spice.elements` (same :class:`Layout`):

======================  ==========================================================
``vq0``                 sense source in the drain lead of the switch (buck: from
                        ``bus``, source at the switch node ``rect``; boost: from the
                        switch node ``sw``, source at ground)
``vq1``                 synchronous MOSFET's drain sense (buck: from ``rect``, source
                        at ground; boost: from ``out``, source at ``sw``), listed in
                        ``Layout.mosfets`` under its position
``vb{k}``               body-diode offset source of MOSFET ``k`` (forward current)
``vf0`` / ``vd0``       offset source of the freewheel diode (buck: anode ``0``, cathode
                        ``rect``) / the boost diode (anode ``sw``, cathode ``out``)
``lout``                the inductor. Buck: from ``lo`` (after the DCR from ``rect``)
                        to ``out``; boost: from ``li`` (after the DCR from ``bus``) to
                        ``sw``. Its current is positive in the direction of power flow
``vci`` / ``vco``       input / output capacitor current sense
``lch``                 input choke (``vsrc`` -> ``bus``)
======================  ==========================================================

The buck's switch node is named ``rect`` so that the output-filter equilibrium of
:func:`stresscheck.spice.slow_modes.output_filter_shift` (averaged over whole periods,
<v_rect> into R_load + DCR) applies to it; the boost has its own
(:func:`boost_slow_mode_shift`).
"""

from __future__ import annotations

import numpy as np

from .circuit import Circuit, SwitchModel
from .elements import (T_EDGE, Deck, Layout, NetlistWriter, initial_conditions,
                       switching_period)
from .slow_modes import mean_output_voltage, output_filter_shift, period_ends

TOPOLOGIES = ("buck", "boost")


def check_supported(c: Circuit) -> None:
    """Check that ``c`` is a buck or boost circuit this module builds: one switch, one
    freewheel (buck) or rectifier (boost), input and output capacitors.

    Raises
    ------
    NotImplementedError
        A topology other than buck or boost.
    ValueError
        Missing positions or capacitors.
    """
    if c.topology not in TOPOLOGIES:
        raise NotImplementedError(f"buck/boost netlist for topology {c.topology!r} not "
                                  f"available; valid: {', '.join(TOPOLOGIES)}")
    passive = c.freewheels if c.topology == "buck" else c.rectifiers
    role = "freewheel" if c.topology == "buck" else "rectifier"
    if len(c.switches) != 1 or len(passive) != 1:
        raise ValueError(f"a {c.topology} needs 1 switch and 1 {role}; got "
                         f"{len(c.switches)} and {len(passive)}")
    if c.c_out is None or c.c_in is None:
        raise ValueError(f"a {c.topology} needs c_in and c_out")


def passive_position(c: Circuit):
    """The freewheel (buck) or rectifier (boost) model: DiodeModel or SwitchModel."""
    return c.freewheels[0] if c.topology == "buck" else c.rectifiers[0]


def synchronous(c: Circuit) -> bool:
    """True where the freewheel (buck) or rectifier (boost) is a MOSFET."""
    return isinstance(passive_position(c), SwitchModel)


def dead_time(c: Circuit) -> float:
    """Dead time between the two gates [s]; none with a diode."""
    return c.dead_time if synchronous(c) else 0.0


def duty_limit(c: Circuit) -> float:
    """Largest duty ratio of the switch [1]: the period less two dead times and the gate
    edges (the synchronous MOSFET keeps a minimal pulse).

    Parameters and returns with their units: :attr:`stresscheck.spice.elements.Deck.duty_limit`.
    """
    return 1.0 - 2 * (dead_time(c) + T_EDGE) * c.f_sw


def inductor_current(c: Circuit) -> float:
    """Mean inductor current, lossless [A]: buck I_o, boost I_o·V_o/V_in."""
    return c.i_out if c.topology == "buck" else c.i_out * c.v_out / c.v_in


def build(c: Circuit, duty: float, t_stop: float, t_measure: float,
          ic: dict | None, choke: str) -> tuple[str, Layout]:
    """A buck or boost corner as a netlist, with its :class:`Layout`; the contract with
    units is :attr:`.elements.Deck.build`."""
    check_supported(c)
    ts = switching_period(c)
    td = dead_time(c)
    ic = initial_conditions(c, ic)
    d = NetlistWriter()
    lay = d.lay
    p = passive_position(c)
    kind = "synchronous" if synchronous(c) else "diode"
    d.add(f"* stresscheck reference: {c.topology}, {kind}, v_in={c.v_in:g} V, "
          f"v_out={c.v_out:g} V, i_out={c.i_out:g} A, f_sw={c.f_sw:g} Hz, "
          f"dead_time={td:g} s, duty={duty:.9f}, regime={c.regime}, choke={choke}")
    d.options()
    d.switch_models([c.switches[0]] + ([p] if synchronous(c) else []))

    # Input: source -> choke || damping -> bus, and the input capacitors.
    d.input_filter(c, choke, ic)

    # Gates: the switch from t = 0 for duty·Ts; the synchronous MOSFET in between, one
    # dead time after the switch turns off until one dead time before it turns on.
    d.gate("1", 0.0, duty * ts, ts)
    if synchronous(c):
        d.gate("2", duty * ts + td, ts - duty * ts - 2 * td, ts)
    i_ref = 0.75 * inductor_current(c)  # the diode fits are exact near the mean current

    if c.topology == "buck":
        node = "rect"
        lay.switches.append(d.switch(0, "bus", node, "1", c.switches[0], i_ref))
        if synchronous(c):
            lay.mosfets[("freewheel", 0)] = d.switch(1, node, "0", "2", p, i_ref)
        else:
            d.diode_at(lay.freewheels, "f0", "0", node, p, i_ref)
        d.inductor("Lout", node, "out", c.l_out, c.dcr_out, ic["lout"],
                   roll_off=c.roll_off.get("Lout"))
    else:
        node = "sw"
        d.inductor("Lout", "bus", node, c.l_out, c.dcr_out, ic["lout"], mid="li",
                   roll_off=c.roll_off.get("Lout"))
        lay.switches.append(d.switch(0, node, "0", "1", c.switches[0], i_ref))
        if synchronous(c):
            lay.mosfets[("rectifier", 0)] = d.switch(1, "out", node, "2", p, i_ref)
        else:
            d.diode_at(lay.rectifiers, "d0", node, "out", p, i_ref)

    # Output capacitors and load.
    d.output(c, ic)
    return d.finish(ts, t_stop, t_measure), lay


def boost_slow_mode_shift(c: Circuit, lay: Layout, w, duty: float):
    """State shift of a boost to the averaged equilibrium of its duty [A, V].

    Returns (filters, flux, v_steady): shifts by netlist IC key, no flux shift, and the
    estimated steady mean output voltage of this duty [V] for the duty search.

    Averaged model over one period (state-space averaging, Erickson & Maksimović,
    Fundamentals of Power Electronics, 2nd ed., §7.2 and ch. 3 — from memory), states:
    choke current i_ch, input-capacitor voltage v_b, inductor current i_L, output-
    capacitor voltage v_C:
      L_ch·di_ch/dt = v_in − v_b
      C_in·dv_b/dt  = i_ch + (v_in − v_b)/R_damp − <i_L>
      L·di_L/dt     = v_b − R_s·i_L − k·v_C           (continuous conduction)
      C·dv_C/dt     = <i_P> − v_C/R_load,   <i_P> = g·i_L
    with k = <v_sw>/<v_out> and g = <i_P>/<i_L> measured over the last period (about
    1 − D) and R_s = DCR + D·R_on + (1 − D)·r_P. In discontinuous conduction i_L is no
    state: at fixed duty <i_L> ∝ v_b·v_C/(v_C − v_b) and <i_P> ∝ v_b²/(v_C − v_b)
    (fixed energy per period; same book, §5.3), linearised at the measured point. The
    equilibrium is x − A⁻¹·dx/dt with dx/dt from the means of the last two periods: a
    Newton step, in which an error in A slows the approach but does not move the
    equilibrium.

    Parameters and returns with their units:
    :attr:`stresscheck.spice.elements.Deck.slow_mode_shift`.
    """
    ts = 1.0 / c.f_sw
    t1 = w.t[-1]

    def last(x):
        return w.mean_between(x, t1 - ts, t1)

    def end_and_rate(x):
        end, change = period_ends(w, x, ts)
        return end, change / ts

    def cap_voltage(key):
        _, _, _, cp, cm = lay.caps[key]
        return w[f"v({cp})"] - w[f"v({cm})"]

    r, l_ch, r_d = lay.r_load, lay.l_choke, lay.r_damp
    c_in, c_out, l = c.c_in.capacitance, c.c_out.capacitance, c.l_out
    i_l = w["i(lout)"]
    if lay.rectifiers:
        i_p = w[f"i({lay.rectifiers[0][0]})"]
        r_p = c.rectifiers[0].r_d
    else:  # the drain sense carries channel and body diode, counted out -> sw
        i_p = -w[f"i({lay.mosfets[('rectifier', 0)][0]})"]
        r_p = c.rectifiers[0].r_on
    names = ["lch", "cin", "lout", "cout"]
    waves = [w["i(lch)"], cap_voltage(("input-capacitor", 0)), i_l,
             cap_voltage(("output-capacitor", 0))]
    x, rate = np.array([end_and_rate(v) for v in waves]).T
    v_bus, v_c = last(waves[1]), last(waves[3])
    i_p_avg, i_l_avg = last(i_p), last(i_l)
    continuous = synchronous(c) or float(np.min(i_l[w.t >= t1 - ts])) > 0.01 * i_l_avg
    if continuous:
        k, g = last(w["v(sw)"]) / last(w["v(out)"]), i_p_avg / i_l_avg
        r_s = c.dcr_out + duty * c.switches[0].r_on + (1 - duty) * r_p
        a = np.array([[0, -1 / l_ch, 0, 0],
                      [1 / c_in, -1 / (r_d * c_in), -1 / c_in, 0],
                      [0, 1 / l, -r_s / l, -k / l],
                      [0, 0, g / c_out, -1 / (r * c_out)]])
        keep = [0, 1, 2, 3]
    else:
        d_il = (i_l_avg * (1 / v_bus + 1 / (v_c - v_bus)),
                i_l_avg * (1 / v_c - 1 / (v_c - v_bus)))
        d_ip = (i_p_avg * (2 / v_bus + 1 / (v_c - v_bus)), -i_p_avg / (v_c - v_bus))
        a = np.array([[0, -1 / l_ch, 0],
                      [1 / c_in, (-1 / r_d - d_il[0]) / c_in, -d_il[1] / c_in],
                      [0, d_ip[0] / c_out, (d_ip[1] - 1 / r) / c_out]])
        keep = [0, 1, 3]
    step = np.linalg.solve(a, rate[keep])
    filters = {names[j]: -float(dx) for j, dx in zip(keep, step)}
    v_eq = float(x[3] - step[-1])
    return filters, {}, v_eq



def buck_slow_mode_shift(c: Circuit, lay: Layout, w, duty: float):
    """Contract of :attr:`stresscheck.spice.elements.Deck.slow_mode_shift` for a buck: the
    output and input filter shift (:func:`stresscheck.spice.slow_modes.output_filter_shift`;
    the switch node is ``rect``), no flux shift and the window's mean output voltage
    [A, V].

    Parameters and returns with their units:
    :attr:`stresscheck.spice.elements.Deck.slow_mode_shift`.
    """
    return output_filter_shift(c, lay, w), {}, mean_output_voltage(w)


#: The buck's and the boost's decks.
BUCK = Deck("buck", build, duty_limit, buck_slow_mode_shift)
BOOST = Deck("boost", build, duty_limit, boost_slow_mode_shift)
