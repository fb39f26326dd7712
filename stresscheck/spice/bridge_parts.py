"""Element blocks of the bridge family (full-bridge, half-bridge, push-pull) that its
plain deck (:mod:`stresscheck.spice.deck_bridge`) and its extensions
(:mod:`stresscheck.spice.deck_bridge_ext`) share: switch legs, transformer, secondary
windings, and the flux-bias shift of the duty search. Element names as in
:mod:`stresscheck.spice.deck_bridge`.
"""

from __future__ import annotations

from .circuit import Circuit, SwitchModel
from .elements import I_REF_FRACTION, R_FLOAT, Layout, NetlistWriter
from .slow_modes import period_ends

TOPOLOGIES = ("full-bridge", "half-bridge", "push-pull")
RECTIFIERS = ("center-tap", "full-bridge", "current-doubler")


def check_supported(c: Circuit) -> None:
    """Check that ``c`` is a bridge circuit that the bridge decks build.

    Raises
    ------
    NotImplementedError
        Another topology; phase shift on a half-bridge or push-pull, or with a current
        doubler.
    ValueError
        Position counts, inductors or capacitors that do not fit; phase shift without
        leakage inductance; mixed diode and MOSFET rectifiers.
    """
    if c.topology not in TOPOLOGIES:
        raise NotImplementedError(f"ngspice netlist for topology {c.topology!r} not "
                                  f"available; valid: {', '.join(TOPOLOGIES)}")
    if c.rectifier not in RECTIFIERS:
        raise NotImplementedError(f"ngspice netlist for rectifier {c.rectifier!r} not "
                                  f"available; valid: {', '.join(RECTIFIERS)}")
    if len({isinstance(r, SwitchModel) for r in c.rectifiers}) > 1:
        raise ValueError("rectifiers must be all diodes or all synchronous MOSFETs")
    if c.modulation == "phase-shift":
        if c.topology != "full-bridge":
            raise NotImplementedError("phase-shift modulation needs a full bridge")
        if c.rectifier == "current-doubler":
            raise NotImplementedError("ngspice netlist for phase shift with a current "
                                      "doubler not available")
        if not c.l_leak > 0:
            raise ValueError("phase-shift modulation needs l_leak > 0")
    elif c.modulation != "pwm":
        raise NotImplementedError(f"modulation {c.modulation!r} not available")
    n_sw = {"full-bridge": 4, "half-bridge": 2, "push-pull": 2}[c.topology]
    n_rect = {"center-tap": 2, "full-bridge": 4, "current-doubler": 2}[c.rectifier]
    if len(c.switches) != n_sw or len(c.rectifiers) != n_rect:
        raise ValueError(f"{c.topology}/{c.rectifier} needs {n_sw} switches and {n_rect} "
                         f"rectifiers, got {len(c.switches)} and {len(c.rectifiers)}")
    if c.rectifier == "current-doubler" and not c.l_out_2:
        raise ValueError("a current doubler needs l_out_2")
    if c.c_out is None:
        raise ValueError("c_out is missing")
    if c.topology == "half-bridge" and len(c.c_split) != 2:
        raise ValueError("half-bridge needs c_split = [top, bottom]")
    if c.topology != "half-bridge" and c.c_in is None:
        raise ValueError(f"{c.topology} needs c_in")


#: Switch legs (drain, source, gate) of the bridge family in switch order. Gate 1 drives
#: the first half-cycle from t = 0, gate 2 the second from Ts/2: full-bridge pairs (0, 3)
#: and (2, 1), half-bridge high and low, push-pull 0 and 1.
BRIDGE_LEGS = {"full-bridge": [("bus", "pa", "1"), ("pa", "0", "2"), ("bus", "pb", "2"),
                               ("pb", "0", "1")],
               "half-bridge": [("bus", "sw", "1"), ("sw", "0", "2")],
               "push-pull": [("d1", "0", "1"), ("d2", "0", "2")]}


def bridge_switches(d: NetlistWriter, c: Circuit, legs) -> None:
    """Switches with body diodes (anode at the source), a sense source in each drain
    lead; legs (drain, source, gate) in switch order. The body-diode fit is exact at
    :data:`I_REF_FRACTION` of i_out reflected to the primary [A].

    Parameters
    ----------
    d : NetlistWriter
        The deck being written; the switches are appended to ``d.lay.switches``.
    c : Circuit
    legs : list of (str, str, str)
        (drain node, source node, gate name) per switch, in switch order.
    """
    i_body = I_REF_FRACTION * c.i_out * c.n_s / c.n_p
    for k, ((drain, source, gate), sw) in enumerate(zip(legs, c.switches)):
        d.lay.switches.append(d.switch(k, drain, source, gate, sw, i_body))


def bridge_transformer(d: NetlistWriter, c: Circuit, ic: dict, lead: str = "pa") -> str:
    """Transformer of the bridge family: reference winding (dot p1, undot pu) with Lm;
    E/F for the second primary half (push-pull). ``lead``: the full-bridge node that
    feeds the primary sense. Returns pu.

    Parameters
    ----------
    d : NetlistWriter
    c : Circuit
    ic : dict
        Initial state by IC key (``lm`` [A]).
    lead : str
        Full-bridge node feeding the primary sense.

    Returns
    -------
    str
        The undotted node ``pu`` of the reference winding.
    """
    lay = d.lay
    if c.topology == "full-bridge":
        d.primary(lead, c.r_primary)
        pu = "pb"
    elif c.topology == "half-bridge":
        d.primary("sw", c.r_primary)
        pu = "mid"
    else:
        # Half 1: bus (centre tap) -> dot p1 ... undot d1; half 2: bus ... dot d2.
        d.primary("bus", c.r_primary)
        pu = "d1"
        d.add("vp2 d2 p2d 0")
        d.add("Ep2 p2d p2u p1 d1 1")
        d.add("Fp2 p1 d1 vp2 -1")
        d.res("p2", "p2u", "bus", c.r_primary)
        lay.windings["primary-2"] = ("vp2", c.r_primary)
    lay.windings["primary-1" if c.topology == "push-pull" else "primary"] = ("vp1", c.r_primary)
    d.magnetizing(pu, c.l_m, ic["lm"])
    return pu


def bridge_secondaries(d: NetlistWriter, c: Circuit, pu: str):
    """Secondary windings of the bridge family (reference winding (p1, pu)); returns the
    rectifier positions (anode, cathode) and the indexes of group A (conducting with the
    first half-cycle). Center-tap and full-bridge rectifiers feed node ``rect``; the
    current doubler's winding ends ``sa`` and ``sb`` feed its two inductors.

    Parameters
    ----------
    d : NetlistWriter
    c : Circuit
    pu : str
        Undotted node of the reference winding.

    Returns
    -------
    (list of (str, str), tuple of int)
        (anode, cathode) per rectifier position, and the positions of group A.
    """
    ratio = c.n_s / c.n_p

    def winding(k: int, dot: str, undot: str) -> None:
        d.winding(str(k), dot, undot, pu, ratio, c.r_secondary)
        d.lay.windings[f"secondary-{k + 1}"] = (f"vw{k}", c.r_secondary)

    if c.rectifier == "center-tap":
        winding(0, "sa", "0")  # V(sa) = +n·Vp
        winding(1, "0", "sb")  # V(sb) = -n·Vp
        return [("sa", "rect"), ("sb", "rect")], (0,)
    if c.rectifier == "full-bridge":
        winding(0, "sa", "sb")
        d.add(f"Rfloat sb 0 {R_FLOAT:g}")
        return [("sa", "rect"), ("sb", "rect"), ("0", "sa"), ("0", "sb")], (0, 3)
    winding(0, "sa", "sb")  # current doubler
    return [("0", "sb"), ("0", "sa")], (0,)


def flux_bias_shift(c: Circuit, lay: Layout, w, duty: float) -> dict[str, float]:
    """Shift of the transformer's flux bias at the end of a run [A, V].

    Added to a run's final state before the next run of the duty search and before a
    confirmation run (it leaves mean v_out and i_L alone).

    - Full-bridge and push-pull: zero mean magnetizing current, by the half-wave
      symmetry of the circuit (identical positions); an asymmetric circuit would
      settle, over milliseconds, at a bias the engine does not model either.
    - Half-bridge: the split capacitors block DC, so the mean primary current is zero,
      and the midpoint sits where the primary's volt-seconds balance. A symmetric
      circuit has zero mean magnetizing current and the midpoint at half the bus.
      Otherwise (less precise, so more runs): a bias di of the magnetizing current flows
      in the primary only while a switch conducts, adding 2·D·di to the mean primary
      current; an offset dv of the midpoint changes the magnetizing current by
      -2·dv·D·Ts/L_m per period.

    Parameters
    ----------
    c : Circuit
    lay : Layout
    w : measurement window
        The end of the run (see :func:`stresscheck.spice.slow_modes.period_ends`).
    duty : float
        Duty ratio of the run [1].

    Returns
    -------
    dict of str to float
        Shift by IC key: ``lm`` [A]; half-bridge also ``ctop`` and ``cbot`` [V].
    """
    ts = 1.0 / c.f_sw
    if c.topology != "half-bridge":
        return {"lm": -period_ends(w, w["i(lm)"], ts)[0]}
    if c.c_split[0] == c.c_split[1] and c.switches[0] == c.switches[1]:
        di = -period_ends(w, w["i(lm)"], ts)[0]
        dv = period_ends(w, w["v(mid)"] - 0.5 * w["v(bus)"], ts)[0]
    else:
        di = -period_ends(w, w["i(vp1)"], ts)[0] / (2 * duty)
        dv = -lay.l_m * period_ends(w, w["i(lm)"], ts)[1] / (2 * duty * ts)
    return {"lm": di, "ctop": dv, "cbot": -dv}
