"""The circuit of one design at one corner, as plain numbers [SI units].

This is the hand-over between the analytic engine and the ngspice decks:
:func:`circuit_at` fills it from an evaluation at one corner (with the electro-thermal
solution, e.g. R_DS(on) at the junction temperature found), a deck turns it into a
netlist. The engine knows nothing of it.
Every position holds the *equivalent* of its paralleled devices (R_DS(on)/parallel, the
capacitance of the whole bank, ...); per-device values are divided out by the caller.
"""

from __future__ import annotations

from dataclasses import dataclass, field


@dataclass
class DiodeModel:
    v_f0: float  # [V] forward drop at zero current of the straight-line model
    r_d: float  # [ohm] slope resistance


@dataclass
class SwitchModel:
    r_on: float  # [ohm] R_DS(on) of the position at the solved junction temperature
    body: DiodeModel  # antiparallel body diode


@dataclass
class CapacitorModel:
    capacitance: float  # [F] whole bank of the position
    esr: float  # [ohm] whole bank of the position


@dataclass
class Circuit:
    """One corner of a converter.

    Conventions
    - ``duty`` is the on-time of each switch as a fraction of its switching period 1/f_sw.
      For the bridge family each switch (full-bridge: each diagonal pair) conducts once per
      period, so the output inductor sees 2·f_sw.
    - Turns: push-pull ``n_p`` is per primary half; center-tap ``n_s`` per secondary half.
    - ``l_m`` is the magnetizing inductance referred to ``n_p`` turns (push-pull: across
      one primary half).
    - Switch order: full-bridge [Q_A_high, Q_A_low, Q_B_high, Q_B_low] where the diagonal
      pair (0, 3) conducts first in each period and (2, 1) second; half-bridge
      [high, low]; push-pull [first half, second half]. Rectifier order: center-tap
      [conducts with the first half-cycle, with the second]; full-bridge rectifier
      [D1, D4 conduct with the first half-cycle; D2, D3 (indexes 1, 2) with the second].
    - The input source is ``v_in`` behind a choke that passes DC only, so the input (or
      split) capacitors carry all the AC current.
    - The load draws ``i_out`` at the target output voltage: a resistor v_out/i_out.
    """

    topology: str  # full-bridge | half-bridge | push-pull | ...
    rectifier: str | None  # center-tap | full-bridge | ...
    v_in: float  # [V]
    v_out: float  # [V] regulation target (mean output voltage)
    i_out: float  # [A] mean load current
    f_sw: float  # [Hz] switching frequency of each switch
    duty: float  # [1] analytic duty ratio, a starting point for the regulation loop
    dead_time: float = 0.0  # [s]
    switches: list[SwitchModel] = field(default_factory=list)
    rectifiers: list[DiodeModel] = field(default_factory=list)
    n_p: float = 1.0  # primary turns
    n_s: float = 1.0  # secondary turns
    l_m: float = 1.0  # [H]
    r_primary: float = 0.0  # [ohm] per primary winding (push-pull: per half)
    r_secondary: float = 0.0  # [ohm] per secondary winding (center-tap: per half)
    core_area: float | None = None  # [m^2]
    l_out: float = 1.0  # [H] output inductor
    # saturation roll-off by inductor name ("Lout", "Lout2"): (currents of the position
    # [A], fractions of the inductance [1]) where the sheet gives inductance_vs_current
    roll_off: dict = field(default_factory=dict)
    dcr_out: float = 0.0  # [ohm]
    c_out: CapacitorModel | None = None
    c_in: CapacitorModel | None = None  # full-bridge, push-pull
    c_split: list[CapacitorModel] = field(default_factory=list)  # half-bridge [top, bottom]
    # Analytic warm start for the simulation, at the start of the first on-interval:
    i_l_start: float = 0.0  # [A] output inductor current
    i_m_start: float = 0.0  # [A] magnetizing current (referred to n_p)
    # Beyond the bridge family (all optional). Positions of the roles 'freewheel' and
    # 'reset' in design order; rectifier and freewheel positions may hold a SwitchModel
    # (synchronous rectifier).
    modulation: str = "pwm"  # full-bridge: pwm | phase-shift
    freewheels: list = field(default_factory=list)
    resets: list = field(default_factory=list)
    n_r: float | None = None  # reset winding turns (forward)
    r_reset: float = 0.0  # [ohm] reset winding
    l_leak: float = 0.0  # [H] leakage inductance referred to the primary
    l_out_2: float | None = None  # [H] second output inductor (current doubler)
    dcr_out_2: float = 0.0  # [ohm]
    regime: str = "CCM"  # the analytic model's conduction regime at this corner
    # leakage clamp of the switches (flyback, push-pull): {"kind": "rcd", "resistance"
    # [ohm], "capacitance" [F], "diode_drop" [V], "v0" [V] start voltage} or {"kind":
    # "voltage", "voltage" [V]}, plus "i_pk" [A] the analytic switch current at turn-off
    clamp: dict | None = None


def circuit_at(ev, i: int) -> Circuit:
    """The circuit of one corner with the engine's solved parameters, for ngspice.

    Parameters
    ----------
    ev : stresscheck.evaluation.Evaluation
        An evaluation: its ``stage`` (per-corner parameters, every position the
        equivalent of its paralleled devices) and ``result`` (duty, warm start, regime).
    i : int
        Index of the corner.

    Returns
    -------
    Circuit
        Values of corner ``i`` [SI units].
    """
    st, res = ev.stage, ev.result

    def diode(dev):
        return DiodeModel(float(dev.v_f0[i]), float(dev.r_d[i]))

    def semi(dev):
        if dev.kind == "mosfet":
            return SwitchModel(float(dev.r_on[i]), diode(dev))
        return diode(dev)

    xf = st.transformer
    out = st.capacitors[("output-capacitor", 0)]
    c = Circuit(topology=st.topology, rectifier=st.rectifier, v_in=float(st.v_in[i]),
                v_out=float(st.vo[i]), i_out=float(st.io[i]), f_sw=float(st.fs[i]),
                duty=float(res.duty[i]), dead_time=st.dead_time,
                switches=[semi(d) for d in st.group("switch")],
                rectifiers=[semi(d) for d in st.group("rectifier")],
                c_out=CapacitorModel(float(out.c[i]), out.esr),
                i_l_start=float(res.i_l_start[i]), i_m_start=float(res.i_m_start[i]),
                modulation=st.modulation,
                freewheels=[semi(d) for d in st.group("freewheel")],
                resets=[semi(d) for d in st.group("reset")],
                regime=str(res.regime[i]) if res.regime is not None else "CCM")
    if st.inductors:
        c.l_out, c.dcr_out = float(st.inductors[0].l[i]), st.inductors[0].dcr
    if len(st.inductors) > 1:
        c.l_out_2, c.dcr_out_2 = float(st.inductors[1].l[i]), st.inductors[1].dcr
    for name, ind in zip(("Lout", "Lout2"), st.inductors):
        if ind.roll_off is not None:
            c.roll_off[name] = (tuple(x * ind.devices for x in ind.roll_off.x),
                                tuple(ind.roll_off.y))
    if xf is not None:
        c.n_p, c.n_s, c.l_m = xf.n_p, xf.n_s, float(xf.l_m[i])
        # the peak flux is checked at the low end of the core area's tolerance
        c.r_primary, c.r_secondary = xf.r_p, xf.r_s
        c.core_area = xf.core_area_low or xf.core_area
        c.n_r, c.r_reset, c.l_leak = xf.n_r, xf.r_r, xf.l_leak
    if ("input-capacitor", 0) in st.capacitors:
        cin = st.capacitors[("input-capacitor", 0)]
        c.c_in = CapacitorModel(float(cin.c[i]), cin.esr)
    if getattr(ev.design, "clamp", None) is not None and xf is not None:
        from ..spikes import circuit_clamp  # the clamp's parameters and start values
        c.clamp = circuit_clamp(ev.design, st, res, i)
    c.c_split = [CapacitorModel(float(b.c[i]), b.esr)
                 for (role, _), b in sorted(st.capacitors.items()) if role == "split-capacitor"]
    return c
