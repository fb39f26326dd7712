"""ngspice netlists with the transformer's leakage inductance and a clamp on the switch:
flyback and push-pull (``Circuit.clamp`` set).

The leakage inductance is an explicit series inductor ``llk{k}`` between the winding's
switch end and the drain (on the switch side of the magnetizing branch, as in the
project's ngspice notes), one per primary half in a push-pull. When the switch opens,
the leakage current charges the drain until the clamp takes it:

- RCD (``clamp["kind"] == "rcd"``): a straight-line clamp diode ``dc{k}`` (drop
  ``diode_drop`` at the switch's peak current, slope :data:`R_CLAMP_DIODE`) from the drain
  to the clamp node ``cl{k}``; the clamp capacitor ``ccl{k}`` (ESR :data:`ESR_CLAMP`,
  current sense ``vccl{k}``) and resistor ``Rcl{k}`` from ``cl{k}`` to the input rail;
- voltage (Zener/TVS): a near-ideal diode ``dz{k}`` from the drain to ``zk{k}``, held at
  ``voltage`` above the rail by the source ``vz{k}``.

A resistor :data:`R_LEAK_DAMP` across each leakage inductor stops the numerical ringing
of the node between two inductors once the clamp diode stops (ngspice notes); it carries
(V_c − V_r)/R, under 1e-2 of the leakage current, during the clamp interval. Doubling
it moved the flyback case at 375 V (tests/test_spice_clamps.py) by 0.05 % on the switch
peak, 0.17 % on the clamp voltage and 0.35 % on the clamp power, the push-pull at 60 V by
under 0.08 %: well inside the tolerances those are checked with (5 % and 10 %). The clamp
interval lasts a few hundred ns, so the maximum step is Ts/:data:`STEPS_PER_PERIOD`.

Everything else is the family's own deck (:mod:`stresscheck.spice.deck_flyback`,
:mod:`stresscheck.spice.deck_bridge`); the registry's flyback and push-pull decks
(:data:`FLYBACK`, :data:`PUSH_PULL`) build here when a clamp is given, else theirs.
"""

from __future__ import annotations

from . import deck_bridge, deck_flyback
from .bridge_parts import (BRIDGE_LEGS, bridge_secondaries, bridge_switches,
                           bridge_transformer)
from .bridge_parts import check_supported as check_bridge
from .circuit import Circuit, DiodeModel
from .elements import (I_REF_FRACTION, Deck, NetlistWriter, initial_conditions,
                       switching_period)

R_LEAK_DAMP = 20e3  # [ohm] across each leakage inductor (see the module notes)
#: Slope resistance of the clamp diode [ohm]: a clamp diode with none feeding the clamp
#: capacitor stalls ngspice's time step (seen on a push-pull); its offset is set so that
#: the drop at the switch's peak current is exactly the clamp's ``diode_drop`` (RCD) or
#: zero (voltage clamp: exactly V_z there), the relation of the analytic model.
R_CLAMP_DIODE = 0.05
#: ESR of the clamp capacitor [ohm]: without one the diode-capacitor loop stalled the
#: time step too (push-pull, high line); 10 mohm drops 0.05 V at 5 A.
ESR_CLAMP = 0.01
STEPS_PER_PERIOD = 2000  # the clamp interval gets tens of steps (ngspice notes)


def _clamp(d: NetlistWriter, c: Circuit, k: int, drain: str, ic: dict, i_pk: float) -> None:
    """Leakage from ``winding`` to ``drain`` is placed by the caller; this adds clamp
    ``k`` from ``drain`` to the rail and records it in ``d.lay.clamps``."""
    cl = c.clamp
    if cl["kind"] == "rcd":
        d.diode(f"dc{k}", drain, f"cl{k}",
                DiodeModel(cl["diode_drop"] - R_CLAMP_DIODE * i_pk, R_CLAMP_DIODE), i_pk)
        key = f"ccl{k}"
        v0 = ic.get(key, cl.get("v0", 0.0))
        sense, _, _, c_plus, c_minus = d.cap(key, f"cl{k}", "bus", cl["capacitance"],
                                             ESR_CLAMP, v0)
        d.add(f"Rcl{k} cl{k} bus {cl['resistance']:.12g}")
        d.lay.clamps.append({"ic_key": key, "sense": sense, "plus": c_plus,
                             "minus": c_minus, "capacitance": cl["capacitance"],
                             "resistance": cl["resistance"], "kind": "rcd"})
    else:
        d.diode(f"dz{k}", drain, f"zk{k}", DiodeModel(-R_CLAMP_DIODE * i_pk, R_CLAMP_DIODE),
                i_pk)
        d.add(f"vz{k} zk{k} bus DC {cl['voltage']:.12g}")
        d.lay.clamps.append({"sense": f"vz{k}", "voltage": cl["voltage"],
                             "kind": "voltage"})


def _leakage(d: NetlistWriter, k: int, winding: str, drain: str, l_lk: float, ic: dict) -> None:
    key = f"llk{k}"
    d.add(f"Llk{k} {winding} {drain} {l_lk:.12g} IC={ic.get(key, 0.0):.12g}")
    d.add(f"Rlk{k} {winding} {drain} {R_LEAK_DAMP:g}")
    d.lay.inductors[key] = l_lk


def build_flyback(c: Circuit, duty: float, t_stop: float, t_measure: float,
                  ic: dict | None, choke: str):
    """Flyback deck with leakage and clamp (contract of ``Deck.build``)."""
    if not c.clamp:
        return deck_flyback.build(c, duty, t_stop, t_measure, ic, choke)
    deck_flyback.check_supported(c)
    ts = switching_period(c)
    ic = initial_conditions(c, ic)
    d = NetlistWriter()
    lay = d.lay
    d.add(f"* stresscheck reference: flyback with leakage {c.l_leak:g} H and "
          f"{c.clamp['kind']} clamp, v_in={c.v_in:g} V, v_out={c.v_out:g} V, "
          f"i_out={c.i_out:g} A, f_sw={c.f_sw:g} Hz, duty={duty:.9f}, choke={choke}")
    d.options(" method=gear")  # trapezoidal stalled on the clamp diode (see notes)
    (sw,) = c.switches
    sync = deck_flyback.synchronous(c)
    td = deck_flyback.dead_time(c)
    d.switch_models(c.switches + ([c.rectifiers[0]] if sync else []))
    d.input_filter(c, choke, ic)
    n = c.n_s / c.n_p
    i_pk = c.clamp.get("i_pk", n * c.i_out / max(1.0 - duty, 1e-3))
    d.gate("1", 0.0, duty * ts, ts)
    lay.switches.append(d.switch(0, "dr", "0", "1", sw, i_pk))
    d.primary("bus", c.r_primary)
    lay.windings["primary"] = ("vp1", c.r_primary)
    d.magnetizing("pd", c.l_m, ic["lm"])
    _leakage(d, 0, "pd", "dr", c.l_leak, ic)
    _clamp(d, c, 0, "dr", ic, i_pk)
    d.winding("0", "0", "sa", "pd", n, c.r_secondary)
    lay.windings["secondary-1"] = ("vw0", c.r_secondary)
    i_ref = deck_flyback._rectifier_ref_current(c, duty)
    if sync:
        d.gate("2", duty * ts + td, ts - duty * ts - 2 * td, ts)
        lay.mosfets[("rectifier", 0)] = d.switch(1, "out", "sa", "2", c.rectifiers[0], i_ref)
    else:
        d.diode_at(lay.rectifiers, "d0", "sa", "out", c.rectifiers[0], i_ref)
    d.output(c, ic)
    return d.finish(ts, t_stop, t_measure, steps=STEPS_PER_PERIOD), lay


def build_push_pull(c: Circuit, duty: float, t_stop: float, t_measure: float,
                    ic: dict | None, choke: str):
    """Push-pull deck with leakage per primary half and a clamp per switch."""
    if not c.clamp:
        return deck_bridge.build_bridge(c, duty, t_stop, t_measure, ic, choke)
    check_bridge(c)
    ts = switching_period(c)
    ic = initial_conditions(c, ic)
    d = NetlistWriter()
    lay = d.lay
    d.add(f"* stresscheck reference: push-pull / {c.rectifier} rectifier with leakage "
          f"{c.l_leak:g} H per half and {c.clamp['kind']} clamps, v_in={c.v_in:g} V, "
          f"v_out={c.v_out:g} V, i_out={c.i_out:g} A, f_sw={c.f_sw:g} Hz, "
          f"duty={duty:.9f}, choke={choke}")
    d.options(" method=gear")  # trapezoidal stalled on the clamp diode (see notes)
    d.switch_models(c.switches)
    d.input_filter(c, choke, ic)
    d.gate("1", 0.0, duty * ts, ts)
    d.gate("2", ts / 2, duty * ts, ts)
    legs = [(f"x{k}", src, gate) for k, (_, src, gate) in enumerate(BRIDGE_LEGS["push-pull"])]
    bridge_switches(d, c, legs)
    pu = bridge_transformer(d, c, ic)
    i_pk = c.clamp.get("i_pk", c.i_out * c.n_s / c.n_p)
    for k, winding in enumerate(("d1", "d2")):
        _leakage(d, k, winding, f"x{k}", c.l_leak, ic)
        _clamp(d, c, k, f"x{k}", ic, i_pk)
    pins, _ = bridge_secondaries(d, c, pu)
    i_rect = I_REF_FRACTION * c.i_out
    for k, ((anode, cathode), dm) in enumerate(zip(pins, c.rectifiers)):
        d.diode_at(lay.rectifiers, f"d{k}", anode, cathode, dm, i_rect)
    d.inductor("Lout", "rect", "out", c.l_out, c.dcr_out, ic["lout"],
                   roll_off=c.roll_off.get("Lout"))
    d.output(c, ic)
    return d.finish(ts, t_stop, t_measure, steps=STEPS_PER_PERIOD), lay


#: The flyback and push-pull decks of the registry (:mod:`stresscheck.spice.decks`): with
#: a clamp the builders above, otherwise the family's own deck.
FLYBACK = Deck("flyback", build_flyback, deck_flyback.duty_limit,
               deck_flyback.slow_mode_shift)
PUSH_PULL = Deck("bridge", build_push_pull, deck_bridge.duty_limit,
                 deck_bridge.slow_mode_shift)
