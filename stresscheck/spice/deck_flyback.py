"""ngspice transient netlists of one corner of a flyback converter (diode rectifier, or a
synchronous rectifier MOSFET with dead time).

Models as in :mod:`stresscheck.spice.elements` and the project's ngspice notes: an ``S``
switch with an antiparallel body diode, a straight-line rectifier diode (offset source +
near-ideal diode + slope resistor), C with ESR and a 0 V sense source, a DC input behind
a damped choke. The coupled inductor is the magnetizing inductance ``lm`` across the
primary emf (after the primary resistance) plus an ideal transformer from controlled
sources: the secondary is an E source ``V(w0e) − V(sa) = (N_s/N_p)·V(p1, pd)`` in series
with its resistance and the sense source ``vw0``, its dot at ground, reflected to the
primary by an F source drawing −(N_s/N_p)·i_s. While the switch conducts, the anode
``sa`` sits at −(N_s/N_p)·V(p1, pd) and the rectifier blocks; when it opens, the
magnetizing current has nowhere to go but into the secondary, through the rectifier:
the secondary carries current only while the switch is off, and the diode ends it at
zero in discontinuous conduction. A synchronous rectifier (``c.rectifiers[0]`` a
:class:`SwitchModel`) is an ``S`` switch with its body diode (anode at the source ``sa``,
cathode at the drain ``out``, the place of the rectifier diode), gated complementary to
the primary switch with ``c.dead_time`` between the gates: on one dead time after the
switch turns off, off one dead time before it turns on again; its body diode carries
the secondary current in the dead times, and its channel conducts both ways (forced
continuous conduction). Leakage inductance is left out, like in the analytic
model (stresses "before any spike"; no clamp or snubber is modelled).

Element names are those of :mod:`stresscheck.spice.elements` (same :class:`Layout`):

======================  ==========================================================
``vq0``                 sense source in the drain lead of the switch, from the
                        primary's undotted end ``pd`` to the drain; source at ground
``vp1``                 primary current sense, from ``bus`` into the dot
``lm``                  magnetizing inductance, from ``p1`` (dot, after R_p) to ``pd``
``vw0``                 secondary current sense, from ground (dot) into the winding
``vd0``                 offset source of the rectifier, anode ``sa``, cathode ``out``
``vq1``                 synchronous rectifier: sense source in its drain lead from
                        ``out``, source at ``sa``, listed in ``Layout.mosfets`` under
                        ("rectifier", 0); ``vb1`` its body-diode offset source
``vco`` / ``vci``       output / input capacitor current sense (into the capacitor)
``lch``                 input choke (``vsrc`` -> ``bus``)
======================  ==========================================================

There is no output inductor (``lout``); the measurement code reads ``i(lm)`` in its place
for the steady-state test. The slow modes (the output capacitor against the magnetizing
inductance in CCM, against the load in DCM, and the input filter) are shifted to their
averaged equilibrium between the runs of the duty search by :func:`slow_mode_shift`
(the flyback's :data:`DECK`).
"""

from __future__ import annotations

import math

import numpy as np

from .circuit import Circuit, DiodeModel, SwitchModel
from .elements import (T_EDGE, Deck, Layout, NetlistWriter, initial_conditions,
                       switching_period)
from .slow_modes import period_ends

TOPOLOGIES = ("flyback",)
#: The magnetizing current counts as continuous when its minimum over a period is above
#: this share of its peak (simulated; the analytic regime is not used).
CCM_SHARE = 0.01


def check_supported(c: Circuit) -> None:
    """Check that ``c`` is a flyback circuit this module builds.

    Raises
    ------
    NotImplementedError
        Another topology, a rectifier that is neither a diode nor a MOSFET, or a
        synchronous rectifier without dead time.
    ValueError
        Position counts, magnetizing inductance or capacitors that do not fit.
    """
    if c.topology not in TOPOLOGIES:
        raise NotImplementedError(f"flyback netlist for topology {c.topology!r} not "
                                  f"available; valid: {', '.join(TOPOLOGIES)}")
    if len(c.switches) != 1 or len(c.rectifiers) != 1:
        raise ValueError(f"a flyback needs 1 switch and 1 rectifier, got "
                         f"{len(c.switches)} and {len(c.rectifiers)}")
    if not isinstance(c.rectifiers[0], (DiodeModel, SwitchModel)):
        raise NotImplementedError("a flyback rectifier is a diode or a synchronous MOSFET")
    if isinstance(c.rectifiers[0], SwitchModel) and not c.dead_time > 0:
        # both gates would switch at the same instant: the ideal switches then overlap
        # through the transformer and ngspice's time step collapses (runs do not finish)
        raise NotImplementedError("a synchronous flyback without dead time is not "
                                  "simulated (the gates of the switch and the rectifier "
                                  "would switch at the same instant); give the dead time")
    if not (math.isfinite(c.l_m) and 0 < c.l_m < 1.0):
        raise ValueError(f"a flyback needs its magnetizing inductance, got l_m = {c.l_m!r}")
    if c.c_out is None or c.c_in is None:
        raise ValueError("a flyback needs c_in and c_out")


def synchronous(c: Circuit) -> bool:
    """True where the rectifier is a MOSFET (synchronous rectifier)."""
    return isinstance(c.rectifiers[0], SwitchModel)


def dead_time(c: Circuit) -> float:
    """Dead time between the two gates [s]; none with a diode rectifier."""
    return c.dead_time if synchronous(c) else 0.0


def duty_limit(c: Circuit) -> float:
    """Largest duty ratio of the circuit [1]: the switch must open in each period for
    the secondary to conduct at all; less the gate edges and, synchronous, the two dead
    times (the rectifier MOSFET keeps a minimal pulse).

    Parameters and returns with their units: :attr:`stresscheck.spice.elements.Deck.duty_limit`.
    """
    if synchronous(c):
        return 1.0 - 2 * (dead_time(c) + 2 * T_EDGE) * c.f_sw
    return 1.0 - 4 * T_EDGE * c.f_sw


def _rectifier_ref_current(c: Circuit, duty: float) -> float:
    """Mean rectifier current over its conduction interval [A], where the diode fit is
    exact: I_o/D_2 with D_2 = 1 − D (CCM) or, lossless DCM, n·V_in·D/V_o (volt-second
    balance), whichever is shorter."""
    n = c.n_s / c.n_p
    d2 = min(1.0 - duty, n * c.v_in * duty / max(c.v_out, 1e-9))
    return c.i_out / max(d2, 1e-3)


def build(c: Circuit, duty: float, t_stop: float, t_measure: float,
          ic: dict | None, choke: str) -> tuple[str, Layout]:
    """Flyback netlist of one corner and its :class:`Layout` (see
    :attr:`.elements.Deck.build` for the parameters and their units)."""
    check_supported(c)
    ts = switching_period(c)
    ic = initial_conditions(c, ic)
    d = NetlistWriter()
    lay = d.lay
    sync, td = synchronous(c), dead_time(c)
    kind = f"synchronous rectifier, dead_time={td:g} s" if sync else "diode rectifier"
    d.add(f"* stresscheck reference: flyback, {kind}, v_in={c.v_in:g} V, "
          f"v_out={c.v_out:g} V, i_out={c.i_out:g} A, f_sw={c.f_sw:g} Hz, "
          f"duty={duty:.9f}, regime={c.regime}, choke={choke}")
    d.options()
    (sw,) = c.switches
    d.switch_models(c.switches + ([c.rectifiers[0]] if sync else []))

    # Input: source -> choke || damping -> bus, and the input capacitors.
    d.input_filter(c, choke, ic)

    # Switch from the primary's undotted end to ground, on from t = 0 for duty·Ts.
    n = c.n_s / c.n_p
    d.gate("1", 0.0, duty * ts, ts)
    lay.switches.append(d.switch(0, "pd", "0", "1", sw, n * c.i_out / max(1.0 - duty, 1e-3)))

    # Primary (dot at the bus) with its resistance, the magnetizing inductance across
    # the emf (p1, pd); check_supported ensures 0 < l_m < 1 H.
    d.primary("bus", c.r_primary)
    lay.windings["primary"] = ("vp1", c.r_primary)
    d.magnetizing("pd", c.l_m, ic["lm"])

    # Secondary: dot at ground, so V(sa) = −n·V(p1, pd) at zero current; rectifier
    # from sa to the output.
    d.winding("0", "0", "sa", "pd", n, c.r_secondary)
    lay.windings["secondary-1"] = ("vw0", c.r_secondary)
    i_ref = _rectifier_ref_current(c, duty)
    if sync:
        # drain at the output, source at the winding; on one dead time after the switch
        # turns off until one dead time before it turns on again
        d.gate("2", duty * ts + td, ts - duty * ts - 2 * td, ts)
        lay.mosfets[("rectifier", 0)] = d.switch(1, "out", "sa", "2", c.rectifiers[0], i_ref)
    else:
        d.diode_at(lay.rectifiers, "d0", "sa", "out", c.rectifiers[0], i_ref)

    # Output capacitors and load.
    d.output(c, ic)
    return d.finish(ts, t_stop, t_measure), lay


def slow_mode_shift(c: Circuit, lay: Layout, w, duty: float):
    """State shifts that bring a run's final state to its averaged equilibrium [A, V].

    Contract of :attr:`stresscheck.spice.elements.Deck.slow_mode_shift`: (shift of the
    filter states, shift of the flux bias, both by netlist IC key, and the estimated steady-state mean output voltage
    at this duty [V], which the duty search steers by). A flyback has no flux bias apart
    from its magnetizing current, which is a filter state here, so the second is empty.

    One Newton step on the state-space averaged model (Erickson & Maksimović,
    Fundamentals of Power Electronics, 2nd ed., ch. 7, the buck-boost with a transformer
    and an input filter, ch. 10 — from memory), x* = x − A⁻¹·ẋ, with the drift ẋ of the
    period means over the last two periods. The states are taken together because the
    converter draws constant power (a negative incremental input resistance) and so
    couples the input filter to its own slow mode; shifting them one by one makes the
    runs ring up. With i_ch the choke current, v_bus the input and v the output
    capacitance voltage, i the magnetizing current:

        L_ch·di_ch/dt = V_in − v_bus
        C_in·dv_bus/dt = i_ch + (V_in − v_bus)/R_damp − I_draw
    - CCM (the simulated magnetizing current stays above ``CCM_SHARE`` of its peak, or
      a synchronous rectifier, forced continuous at every load), I_draw = D·i:
        L_m·di/dt = D·(v_bus − R_a·i) − (1 − D)·(v + v_f0 + R_b·i/n)/n
        C·dv/dt   = (1 − D)·i/n − v/R
      R_a = R_on + R_p + ESR_in, R_b = r_d + R_s + ESR_out (synchronous: R_DS(on) of
      the rectifier in place of r_d; the dead times left out of this step). A lightly
      loaded output (quality factor of 20 or more) rings for thousands of periods
      otherwise.
    - DCM: the magnetizing current starts from zero every period, so it is no state; the
      energy per cycle goes with v_bus², I_draw = v_bus·D²·Ts/(2·L_m) with v_bus, and the
      secondary's mean current I_s with v_bus²/(v + v_f0):
        C·dv/dt = I_s − v/R,  dI_s/dv_bus = 2·I_s/v_bus,  dI_s/dv = −I_s/(v + v_f0)

    Parameters and returns with their units:
    :attr:`stresscheck.spice.elements.Deck.slow_mode_shift`.
    """
    ts = 1.0 / c.f_sw
    t1 = w.t[-1]

    def ends(x):
        return period_ends(w, x, ts)

    def period_mean(x):
        return w.mean_between(x, t1 - ts, t1)

    n, a = c.n_s / c.n_p, 1.0 - duty
    rect = c.rectifiers[0]
    c_in, c_out, r_load = c.c_in.capacitance, c.c_out.capacitance, lay.r_load
    _, _, _, bp, bm = lay.caps[("input-capacitor", 0)]
    _, _, _, cp, cm = lay.caps[("output-capacitor", 0)]
    v_bus, dv_bus = ends(w[f"v({bp})"] - w[f"v({bm})"])
    v_c, dv_c = ends(w[f"v({cp})"] - w[f"v({cm})"])
    di_ch = ends(w["i(lch)"])[1]
    i_m = w["i(lm)"]
    last = w.t >= t1 - ts
    # rows: choke, bus, [magnetizing], output; columns the same states
    rows = [[0.0, -1.0 / lay.l_choke], [1.0 / c_in, -1.0 / (lay.r_damp * c_in)]]
    drift = [di_ch, dv_bus]
    keys = ["lch", "cin"]
    if synchronous(c) or np.min(i_m[last]) > CCM_SHARE * np.max(i_m[last]):
        r_rect = rect.r_on if synchronous(c) else rect.r_d
        r_a = c.switches[0].r_on + c.r_primary + c.c_in.esr
        r_b = r_rect + c.r_secondary + c.c_out.esr
        rows = [r + [0.0, 0.0] for r in rows]
        rows[1][2] = -duty / c_in
        rows.append([0.0, duty / lay.l_m, -(duty * r_a + a * r_b / n ** 2) / lay.l_m,
                     -a / (n * lay.l_m)])
        rows.append([0.0, 0.0, a / (n * c_out), -1.0 / (r_load * c_out)])
        drift += [ends(i_m)[1], dv_c]
        keys += ["lm", "cout"]
    else:
        (src, _, _), = lay.rectifiers
        i_s = period_mean(w[f"i({src})"])
        i_draw = period_mean(w["i(vp1)"])
        rows = [r + [0.0] for r in rows]
        rows[1][1] -= i_draw / (v_bus * c_in)
        rows.append([0.0, 2 * i_s / (v_bus * c_out),
                     -(i_s / (v_c + rect.v_f0) + 1.0 / r_load) / c_out])
        drift += [dv_c]
        keys += ["cout"]
    step = -np.linalg.solve(np.array(rows), np.array(drift) / ts)
    filters = {k: float(x) for k, x in zip(keys, step)}
    return filters, {}, v_c + filters["cout"]



#: The flyback's deck (diode or synchronous rectifier).
DECK = Deck("flyback", build, duty_limit, slow_mode_shift)
