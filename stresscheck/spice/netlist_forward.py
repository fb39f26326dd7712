"""ngspice transient netlists of one corner of a forward converter.

Topologies: ``forward`` (one switch, reset winding and reset diode) and
``two-switch-forward`` (two switches gated together, two clamp diodes); diode rectifier
(forward diode = ``rectifiers[0]``, freewheel diode = ``freewheels[0]``).

Models as in :mod:`stresscheck.spice.netlist` and the project's ngspice notes: ``S``
switches with an antiparallel body diode, straight-line diodes, L with DCR, C with ESR
and a 0 V sense source, a DC input behind a damped choke, and an ideal transformer from
controlled sources: one magnetizing inductance ``lm`` across the primary emf (after the
primary resistance), every other winding k an E source ``V(dot) − V(undot) =
(N_k/N_p)·V(primary)`` in series with its resistance and a 0 V sense source, reflected
to the primary by an F source drawing −(N_k/N_p)·i_k. The reset winding is such a
winding, with its dot at ground and its undotted end on the reset diode's anode (the
diode's cathode on the bus). Leakage inductance is left out, like in the analytic model
(stresses "before any spike").

Element names are those of :mod:`stresscheck.spice.netlist` (same :class:`Layout`), plus:

======================  ==========================================================
``vf0``                 offset source of the freewheel diode (anode ``0``, cathode
                        ``rect``): its current is the forward current
``vr{k}``               offset source of reset diode ``k``. Single switch: ``vr0``,
                        anode ``wru`` (reset winding), cathode ``bus``. Two-switch:
                        ``vr0`` from ``0`` to ``pa`` (primary dot), ``vr1`` from ``pb``
                        (undotted end) to ``bus``
``vwr``                 reset winding current sense, into its dot (from ground)
======================  ==========================================================

Switches: single switch ``vq0`` from the primary's undotted end ``pd`` to ground.
Two-switch: ``vq0`` from ``bus`` to ``pa``, ``vq1`` from ``pb`` to ground. The
forward diode ``vd0`` goes from the secondary dot ``sa`` to ``rect``; the secondary's
undotted end is ground.
"""

from __future__ import annotations

import math

from .circuit import Circuit
from . import netlist
from .netlist import (ABSTOL, DIODE_IS, DIODE_N, R_OFF, STEPS_PER_PERIOD, SW_VH, SW_VT,
                      T_EDGE, Layout, _Deck, _gate, analytic_ic, choke_values,
                      switching_period)

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
        Another topology, or a MOSFET in a rectifier position (synchronous rectifiers
        are not modelled).
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
    if any(hasattr(d, "r_on") for d in c.rectifiers + c.freewheels):
        raise NotImplementedError("synchronous rectifiers are not modelled for the forward")
    if not two and not c.n_r:
        raise ValueError("a single-switch forward needs n_r (reset winding turns)")
    if c.c_out is None or c.c_in is None:
        raise ValueError(f"{c.topology} needs c_in and c_out")


def duty_limit(c: Circuit) -> float:
    """Largest duty ratio that leaves the core time to reset, lossless [1]:
    N_p/(N_p + N_r) for the reset winding, 1/2 for the clamp diodes (Erickson &
    Maksimović, Fundamentals of Power Electronics, 2nd ed., §6.3.3 — from memory), less
    the gate edges."""
    limit = 0.5 if c.topology == "two-switch-forward" else c.n_p / (c.n_p + c.n_r)
    return limit - 2 * T_EDGE * c.f_sw


def build(c: Circuit, duty: float, t_stop: float, t_measure: float,
          ic: dict | None, choke: str) -> tuple[str, Layout]:
    """Netlist text and its :class:`Layout` (contract of :func:`netlist.build`)."""
    check_supported(c)
    two = c.topology == "two-switch-forward"
    ts = switching_period(c)
    ic = {**analytic_ic(c), **(ic or {})}
    lay = Layout()
    d = _Deck()
    d.add(f"* stresscheck reference: {c.topology}, diode rectifier, v_in={c.v_in:g} V, "
          f"v_out={c.v_out:g} V, i_out={c.i_out:g} A, f_sw={c.f_sw:g} Hz, "
          f"duty={duty:.9f}, regime={c.regime}, choke={choke}")
    d.add(f".options rshunt=1e9 reltol=1e-5 abstol={ABSTOL:g} method={METHOD}")
    d.add(f".model didl D(IS={DIODE_IS:g} N={DIODE_N:g})")
    for k, sw in enumerate(c.switches):
        d.add(f".model sw{k} SW(RON={sw.r_on:.9g} ROFF={R_OFF:g} VT={SW_VT:g} VH={SW_VH:g})")

    # Input: source -> choke || damping -> bus, and the input capacitors.
    l_ch, r_damp = choke_values(c, choke)
    lay.l_choke, lay.r_damp = l_ch, r_damp
    d.add(f"Vin vsrc 0 DC {c.v_in:.12g}")
    d.add(f"Lch vsrc bus {l_ch:.12g} IC={ic['lch']:.12g}")
    d.add(f"Rdamp vsrc bus {r_damp:.12g}")
    lay.caps[("input-capacitor", 0)] = d.cap("ci", "bus", "0", c.c_in.capacitance,
                                              c.c_in.esr, ic["cin"])

    # One gate drives every switch, on from t = 0 for duty·Ts.
    _gate(d, "1", 0.0, duty * ts, ts)
    n = c.n_s / c.n_p
    i_body = c.i_out * n
    legs = [("bus", "pa"), ("pb", "0")] if two else [("pd", "0")]
    for k, ((drain, source), sw) in enumerate(zip(legs, c.switches)):
        d.add(f"vq{k} {drain} q{k}d 0")
        d.add(f"S{k} q{k}d {source} g1 0 sw{k} OFF")
        body = d.diode(f"b{k}", source, f"q{k}d", sw.body, i_body)
        lay.switches.append((f"vq{k}", drain, source, body))

    # Primary (dot p_top -> undot pu) with its resistance, the magnetizing inductance
    # across the emf (p1, pu).
    p_top, pu = ("pa", "pb") if two else ("bus", "pd")
    d.add(f"vp1 {p_top} p1r 0")
    d.res("p1", "p1r", "p1", c.r_primary)
    lay.windings["primary"] = ("vp1", c.r_primary)
    l_m = c.l_m if math.isfinite(c.l_m) and c.l_m > 0 else 1e3  # "no Lm" -> negligible
    lay.l_m = l_m
    d.add(f"Lm p1 {pu} {l_m:.12g} IC={ic['lm']:.12g}")

    def winding(tag: str, dot: str, undot: str, ratio: float, r: float) -> None:
        d.add(f"vw{tag} {dot} w{tag}i 0")
        d.res(f"w{tag}", f"w{tag}i", f"w{tag}e", r)
        d.add(f"Ew{tag} w{tag}e {undot} p1 {pu} {ratio:.12g}")
        d.add(f"Fw{tag} p1 {pu} vw{tag} {-ratio:.12g}")

    # Reset: winding from ground (dot) to wru, diode to the bus; or the two clamp diodes.
    v_mag = c.v_in * duty * ts / l_m  # magnetizing peak, for the diode offsets
    if two:
        i_reset = v_mag / 2
        pins = [("0", "pa"), ("pb", "bus")]
    else:
        ratio_r = c.n_r / c.n_p
        winding("r", "0", "wru", ratio_r, c.r_reset)
        lay.windings["reset"] = ("vwr", c.r_reset)
        i_reset = v_mag / ratio_r / 2
        pins = [("wru", "bus")]
    for k, ((anode, cathode), dm) in enumerate(zip(pins, c.resets)):
        lay.resets.append((d.diode(f"r{k}", anode, cathode, dm, i_reset), anode, cathode))

    # Secondary (dot sa, undot ground), forward and freewheel diodes into node rect.
    winding("0", "sa", "0", n, c.r_secondary)
    lay.windings["secondary-1"] = ("vw0", c.r_secondary)
    lay.rectifiers.append((d.diode("d0", "sa", "rect", c.rectifiers[0], c.i_out), "sa",
                           "rect"))
    lay.freewheels.append((d.diode("f0", "0", "rect", c.freewheels[0], c.i_out), "0",
                           "rect"))

    # Output filter and load.
    d.res("dcr", "rect", "lo", c.dcr_out)
    d.add(f"Lout lo out {c.l_out:.12g} IC={ic['lout']:.12g}")
    lay.caps[("output-capacitor", 0)] = d.cap("co", "out", "0", c.c_out.capacitance,
                                               c.c_out.esr, ic["cout"])
    lay.r_load = c.v_out / c.i_out
    d.add(f"Rload out 0 {lay.r_load:.12g}")

    t_start = max(t_stop - t_measure - ts / STEPS_PER_PERIOD, 0.0)
    h = ts / STEPS_PER_PERIOD
    d.add(f".tran {h:.12g} {t_stop:.12g} {t_start:.12g} {h:.12g} uic")
    d.add(".end")
    return "\n".join(d.lines) + "\n", lay


netlist.BUILDERS.update(dict.fromkeys(TOPOLOGIES, build))
netlist.DUTY_LIMITS.update(dict.fromkeys(TOPOLOGIES, duty_limit))
