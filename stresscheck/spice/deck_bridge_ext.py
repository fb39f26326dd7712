"""ngspice transient netlists of the bridge-family extensions: phase-shift modulation
(full bridge), the current-doubler rectifier and synchronous rectifiers.

Models as in :mod:`stresscheck.spice.deck_bridge` and the project's ngspice notes (``S``
switches with an antiparallel body diode, ideal transformer from controlled sources plus
one magnetizing inductance, straight-line diodes, L with DCR, C with ESR and a sense
source, DC input behind a damped choke), with the same element names and
:class:`~stresscheck.spice.elements.Layout`, plus:

======================  ==========================================================
``llk``                 phase shift: the leakage (and series resonant) inductance,
                        between the bridge node ``pa`` and the primary sense ``vp1``
``lout2``               current doubler: the second output inductor, from the winding's
                        undotted end ``sb`` (through its DCR) to ``out``; ``lout`` is
                        the first, from the dot ``sa``
``vr{k}``               synchronous rectifier ``k``: sense source in its drain lead
                        (drain-source current); switch ``Sr{k}``, body diode ``vbr{k}``
======================  ==========================================================

Phase shift (switch order of the analytic model: Q0 leg A high, Q1 leg A low, Q2 leg B
high, Q3 leg B low): every switch is gated for Ts/2 − t_d; the lagging leg B switches
at 0 (Q2 -> Q3) and Ts/2 (Q3 -> Q2), the leading leg A at D·Ts (Q0 -> Q1) and
Ts/2 + D·Ts (Q1 -> Q0), each switch turning on t_d after its complement turns off.

Current doubler: rectifier 0 from ground to ``sb`` (conducts while the first half-cycle
drives ``sa`` high, and in freewheel), rectifier 1 from ground to ``sa``.

Synchronous rectifiers with phase shift (center-tap or full-bridge positions): group A
(conducting with the first half, +V_in) is gated on from t_d to Ts/2, group B from
Ts/2 + t_d to Ts, fixed to the lagging leg (the analytic model's gating); everything
else goes through the body diodes.

Synchronous rectifiers (center-tap, full-bridge or current-doubler positions; PWM): a
rectifier of group A (conducting with the first half-cycle: center-tap and doubler 0,
bridge 0 and 3) is gated off from t_b before the second half-cycle's on-interval until
t_b after it, group B likewise around the first; t_b = min(t_d, (1/2 − D)·Ts/2). Its
source is the diode's anode, its drain the cathode.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np

from .bridge_parts import (BRIDGE_LEGS, TOPOLOGIES, bridge_secondaries, bridge_switches,
                           bridge_transformer, check_supported, flux_bias_shift)
from .circuit import Circuit, DiodeModel, SwitchModel
from .elements import (I_REF_FRACTION, Layout, NetlistWriter, analytic_ic,
                       initial_conditions, switching_period)
from .slow_modes import mean_output_voltage, output_filter_shift

#: Integration of the phase-shift decks: backward Euler (first-order Gear). At the end of
#: each commutation a rectifier turns off and the leakage, magnetizing and (reflected)
#: output inductances form an all-inductor cutset: the trapezoidal rule then rings from
#: point to point (the rectifier voltage alternated 15.8 / 62.0 V around its 38.9 V) and
#: second-order Gear overshoots one step (53 V); backward Euler is L-stable and exact
#: for the piecewise-linear inductor currents of these circuits.
PS_METHOD = " method=gear maxord=1"


def _sync(c: Circuit) -> bool:
    return any(isinstance(r, SwitchModel) for r in c.rectifiers)


def handles(c: Circuit) -> bool:
    """Whether ``c`` is a bridge circuit of this module (not of the plain
    :func:`stresscheck.spice.deck_bridge.build`)."""
    return c.topology in TOPOLOGIES and (getattr(c, "modulation", "pwm") == "phase-shift"
                                         or c.rectifier == "current-doubler" or _sync(c))


def body_window(c: Circuit, duty: float) -> float:
    """Body-diode interval of a synchronous rectifier at each of its edges [s]."""
    return min(c.dead_time, (0.5 - duty) / c.f_sw / 2)


def warm_start(c: Circuit, duty: float) -> dict[str, float]:
    """Initial conditions of a first run [A, V]: the bridge's, plus the second output
    inductor (current doubler: at t = 0 it has fallen for (1/2 − D)·Ts from its peak,
    V_o·(1 − D)·Ts/L2 above its valley) and the leakage current (phase shift: minus the
    freewheeling primary current, n·i_L + i_m, of the previous half period)."""
    ic = analytic_ic(c)
    ts = switching_period(c)
    if c.rectifier == "current-doubler":
        ripple = c.v_out * (1 - duty) * ts / c.l_out_2
        ic["lout2"] = c.i_out / 2 + ripple / 2 - c.v_out * (0.5 - duty) * ts / c.l_out_2
    if c.modulation == "phase-shift":
        ic["llk"] = -(c.n_s / c.n_p) * c.i_l_start + c.i_m_start
    return ic


def build(c: Circuit, duty: float, t_stop: float, t_measure: float,
          ic: dict | None, choke: str) -> tuple[str, Layout]:
    """The netlist of a phase-shift, current-doubler or synchronous bridge corner, and its
    :class:`Layout` (parameters, returns, units: :attr:`.elements.Deck.build`)."""
    check_supported(c)
    ts = switching_period(c)
    ps = c.modulation == "phase-shift"
    doubler = c.rectifier == "current-doubler"
    sync = _sync(c)
    ic = initial_conditions(c, ic, lambda c: warm_start(c, duty))
    d = NetlistWriter()
    lay = d.lay
    d.add(f"* stresscheck reference: {c.topology} ({c.modulation}) / {c.rectifier} "
          f"rectifier{' (synchronous)' if sync else ''}, v_in={c.v_in:g} V, "
          f"v_out={c.v_out:g} V, i_out={c.i_out:g} A, f_sw={c.f_sw:g} Hz, "
          f"duty={duty:.9f}, dead_time={c.dead_time:g} s, choke={choke}")
    d.options(PS_METHOD if ps else "")
    d.switch_models(c.switches)
    if sync:
        d.switch_models(c.rectifiers, group="r")

    # Input: source -> choke || damping -> bus, and the input (or split) capacitors.
    d.input_filter(c, choke, ic)

    # Gates and switches.
    if ps:
        t_d = c.dead_time
        half_on = ts / 2 - t_d
        d.gate_off("q0", duty * ts, ts / 2 + t_d, ts)  # Q0 on at t = 0 until D·Ts
        d.gate("q1", duty * ts + t_d, half_on, ts)
        d.gate("q2", ts / 2 + t_d, half_on, ts)
        d.gate("q3", t_d, half_on, ts)
        legs = [("bus", "pa", "q0"), ("pa", "0", "q1"), ("bus", "pb", "q2"),
                ("pb", "0", "q3")]
    else:
        # Gate 1 drives the first half-cycle from t = 0, gate 2 the second from Ts/2.
        d.gate("1", 0.0, duty * ts, ts)
        d.gate("2", ts / 2, duty * ts, ts)
        legs = BRIDGE_LEGS[c.topology]
    bridge_switches(d, c, legs)

    # Transformer: reference winding (dot p1, undot pu) with Lm; E/F for the others;
    # phase shift: the leakage inductance between the bridge node pa and the primary.
    if ps:
        d.add(f"Llk pa pl {c.l_leak:.12g} IC={ic['llk']:.12g}")
        lay.inductors["llk"] = c.l_leak
    pu = bridge_transformer(d, c, ic, lead="pl" if ps else "pa")

    # Rectifier positions (anode, cathode) and their group (A: first half-cycle).
    pins, group_a = bridge_secondaries(d, c, pu)
    i_rect = I_REF_FRACTION * c.i_out
    if sync and ps:
        # group A's channels on in the first half after the lagging leg's dead time,
        # group B's in the second: the body diodes carry the rest (commutation, dead
        # times, a freewheel where both rectifiers conduct)
        d.gate("ra", c.dead_time, ts / 2 - c.dead_time, ts)
        d.gate("rb", ts / 2 + c.dead_time, ts / 2 - c.dead_time, ts)
    elif sync:
        t_b = body_window(c, duty)
        # group A off around the second on-interval, group B around the first
        d.gate_off("ra", ts / 2 - t_b, duty * ts + 2 * t_b, ts)
        d.gate("rb", duty * ts + t_b, ts - duty * ts - 2 * t_b, ts)
    for k, ((anode, cathode), dm) in enumerate(zip(pins, c.rectifiers)):
        if isinstance(dm, DiodeModel):
            d.diode_at(lay.rectifiers, f"d{k}", anode, cathode, dm, i_rect)
            continue
        gate = "ra" if k in group_a else "rb"
        # drain at the cathode, source at the anode
        lay.mosfets[("rectifier", k)] = d.switch(k, cathode, anode, gate, dm, c.i_out / 2,
                                                 group="r")

    # Output filter and load.
    if doubler:
        d.inductor("Lout", "sa", "out", c.l_out, c.dcr_out, ic["lout"],
                   roll_off=c.roll_off.get("Lout"))
        d.inductor("Lout2", "sb", "out", c.l_out_2, c.dcr_out_2, ic["lout2"],
                   dcr_tag="dcr2", mid="lo2", roll_off=c.roll_off.get("Lout2"))
        lay.inductors["lout2"] = c.l_out_2
    else:
        d.inductor("Lout", "rect", "out", c.l_out, c.dcr_out, ic["lout"],
                   roll_off=c.roll_off.get("Lout"))
    d.output(c, ic)
    return d.finish(ts, t_stop, t_measure), lay


class _DoublerView:
    """A measurement window as the bridges' slow-mode shift sees a current doubler: the
    two inductors as one (their sum) fed from the mean of the two winding ends."""

    def __init__(self, w):
        self._w, self.t = w, w.t

    def __getitem__(self, name):
        if name == "v(rect)":
            return (self._w["v(sa)"] + self._w["v(sb)"]) / 2
        if name == "i(lout)":
            return self._w["i(lout)"] + self._w["i(lout2)"]
        return self._w[name]

    def mean_between(self, x, t0, t1):
        return self._w.mean_between(x, t0, t1)


def _filters_consistent(c: Circuit, lay: Layout, w) -> dict[str, float]:
    """The output- and input-filter shift of
    :func:`stresscheck.spice.slow_modes.output_filter_shift` (same
    averaged equilibria, full bridge), with every period mean taken in a way that is
    exact for the integration method: under backward Euler the window's trapezoidal
    mean of a switched waveform is biased (an input-capacitor current that steps by
    amperes came out 11 mA off), so the capacitor current's mean is C·Δv_C/T and the
    rectified voltage's is <v_out> + DCR·<i_L> + L·Δi_L/T (Kirchhoff's laws over the
    period); the choke current, capacitor voltages and v_out are smooth."""
    ts = 1.0 / c.f_sw
    t1 = w.t[-1]

    def at(x, t):
        return float(np.interp(t, w.t, x))

    def period(k):  # (start, end) of the k-th period back from the end
        return t1 - (k + 1) * ts, t1 - k * ts

    def ends(means):  # last period's mean extrapolated half a period (as the bridges')
        return 1.5 * means[0] - 0.5 * means[1]

    sense, _, _, cp, cm = lay.caps[("input-capacitor", 0)]
    v_c = w[f"v({cp})"] - w[f"v({cm})"]
    i_choke, i_l = w["i(lch)"], w["i(lout)"]
    i_cap = [c.c_in.capacitance * (at(v_c, b) - at(v_c, a)) / ts for a, b in map(period, (0, 1))]
    v_bus = [w.mean_between(v_c, *period(k)) + c.c_in.esr * i_cap[k] for k in (0, 1)]
    i_bridge = [w.mean_between(i_choke, *period(k)) + (c.v_in - v_bus[k]) / lay.r_damp
                - i_cap[k] for k in (0, 1)]
    a, b = period(0)
    v_rect = (w.mean_between(w["v(out)"], a, b) + c.dcr_out * w.mean_between(i_l, a, b)
              + c.l_out * (at(i_l, b) - at(i_l, a)) / ts)
    i_now = ends([w.mean_between(i_l, *period(k)) for k in (0, 1)])
    i_eq = c.v_in / v_bus[0] * v_rect / (lay.r_load + c.dcr_out)
    _, _, _, op, om = lay.caps[("output-capacitor", 0)]
    v_out = w[f"v({op})"] - w[f"v({om})"]
    return {"lout": i_eq - i_now,
            "cout": lay.r_load * i_eq - ends([w.mean_between(v_out, *period(k)) for k in (0, 1)]),
            "lch": ends(i_bridge) * i_eq / i_now
            - ends([w.mean_between(i_choke, *period(k)) for k in (0, 1)]),
            "cin": c.v_in - ends(v_bus)}


def own_shift(c: Circuit) -> bool:
    """True where the bridge circuit ``c`` (phase shift, current doubler) needs this
    module's :func:`slow_mode_shift`, False where the plain bridges' applies."""
    return c.modulation == "phase-shift" or c.rectifier == "current-doubler"


def slow_mode_shift(c: Circuit, lay: Layout, w, duty: float):
    """Contract of :attr:`stresscheck.spice.elements.Deck.slow_mode_shift`: (filter
    shift, flux shift [A, V], steady mean output voltage [V]) for the circuits of
    :func:`own_shift`.

    Current doubler: the same with the two equal inductors in parallel (L/2, DCR/2, the mean of
    the winding-end voltages drives their sum, Kirchhoff's laws); the common-mode shift
    goes half to each, their difference decays by itself. Phase shift (integrated by
    backward Euler, see :data:`PS_METHOD`): the filter shift from
    :func:`_filters_consistent`; the flux-bias shift of the magnetizing current is also
    a shift of the primary (leakage) current, the secondary carrying no bias.

    Parameters and returns with their units:
    :attr:`stresscheck.spice.elements.Deck.slow_mode_shift`.
    """
    v_steady = mean_output_voltage(w)
    if c.modulation == "phase-shift":
        flux = flux_bias_shift(c, lay, w, duty)
        return _filters_consistent(c, lay, w), {**flux, "llk": flux["lm"]}, v_steady
    par = replace(c, dcr_out=c.dcr_out * c.dcr_out_2 / (c.dcr_out + c.dcr_out_2)
                  if c.dcr_out + c.dcr_out_2 > 0 else 0.0)
    view = _DoublerView(w)
    filters = output_filter_shift(par, lay, view)
    flux = flux_bias_shift(par, lay, view, duty)
    shared = filters.pop("lout") / 2
    filters.update(lout=shared, lout2=shared)
    return filters, flux, v_steady

