"""Overlap, C_oss and junction-capacitance losses of a hard-switched buck and boost
against ngspice runs whose switch has finite transition times.

The switch in the deck is a first-order gate-charge MOSFET: a channel that is a
transconductance g_m·(v_gs − V_th) limited by v_ds/R_DS(on), constant C_gs and C_gd,
and a constant-current gate drive ±I_g clamped at 0 and V_drv. Such a switch in a
clamped inductive cell (the freewheel or boost diode holding the voltage until the
current has moved) gives the piecewise-linear transitions of the relation: at turn-on the
current rises at full voltage over t_ri = (I/g_m)·(C_gs + C_gd)/I_g, then the voltage
falls at full current over t_fv = V·C_gd/I_g (Miller plateau); at turn-off the reverse
(Mohan, Undeland & Robbins, Power Electronics, 3rd ed., §2-5 and the gate-charge
description of ch. 22 — from memory). A linear C_oss across the switch and C_j across
the diode add ½·(C_oss + C_j)·V² to the turn-on (charge moved through the channel).
The run is the reference; the comparison uses the run's own currents and voltage at
each transition (relation check), and the engine's currents at the same corner
(event detection check).
"""

from __future__ import annotations

import numpy as np
import pytest

from builders import write_case
from builders_buck_boost import cell_design, cell_parts
from spice_support import keep_folder
from stresscheck import losses as L
from stresscheck import loss_model, switching
from stresscheck.design import load_design
from stresscheck.devices import positions
from stresscheck.engine import run
from stresscheck.spice.run import run_netlist

GM, VTH, VDRV = 10.0, 3.0, 5.0  # [S], [V], [V]
CGS, CGD, IG = 2e-9, 50e-12, 0.05  # [F], [F], [A]
R_ON = 5e-3  # [ohm]
T_MAX_STEP = 0.5e-9  # [s]: 40+ steps in the shortest transition (~20 ns)
PERIODS = 40


def _delays(i_on, i_off):
    """Gate command to mid-transition delays [s] at turn-on and turn-off: to V_th and
    through the current rise, half the voltage fall (turn-on); from V_drv down to the
    plateau, half the voltage rise (turn-off); the half voltage swings cancel."""
    t_on = (VTH + i_on / GM) * (CGS + CGD) / IG
    t_off = (VDRV - VTH - i_off / GM) * (CGS + CGD) / IG
    return t_on, t_off


def _deck(kind, v_in, v_out, r_load, l, c_out, duty, fs, i_valley, i_peak, c_oss=0.0,
          c_j=0.0):
    """Buck or boost cell, diode rectifier, gate-charge switch (channel current sensed by
    ``Vsense``, so the capacitances' own currents are not in it). The
    gate command starts each period at t = k·Ts and is widened by the difference of the
    delays, so that the switch node's on-time is the engine's D·Ts; the inductor starts
    at the engine's valley current, moved back by the turn-on delay."""
    ts = 1.0 / fs
    t_on, t_off = _delays(i_valley, i_peak)
    width = duty * ts + t_on - t_off
    if kind == "buck":
        drain, source, diode = "in", "sw", "Dfw 0 sw didl"
        i_l0 = i_valley + (v_out + 0.04) / l * t_on
        lines = [f"L1 sw out {l:.9g} IC={i_l0:.9g}"]
        cj = f"Cj 0 sw {c_j:.6g}" if c_j else ""
    else:
        drain, source, diode = "sw", "0", "Dbo sw out didl"
        i_l0 = i_valley + (v_out + 0.04 - v_in) / l * t_on
        lines = [f"L1 in sw {l:.9g} IC={i_l0:.9g}"]
        cj = f"Cj sw out {c_j:.6g}" if c_j else ""
    net = [
        f"* {kind} cell, gate-charge switch (g_m={GM} S, C_gs={CGS}, C_gd={CGD}, I_g={IG})",
        ".options reltol=1e-5 abstol=1e-9",
        ".model didl D(IS=1e-12 N=0.05)",
        f"Vin in 0 DC {v_in:.9g}",
        *lines,
        diode,
        f"Co out 0 {c_out:.9g} IC={v_out:.9g}",
        f"Rl out 0 {r_load:.9g}",
        # parallel RC damper of the output filter (R ≈ sqrt(L/C), C = 4·C_out): the run
        # settles within a few filter periods; no DC path, ripple changes < 1 %
        f"Rd out dmp {np.sqrt(l / c_out):.6g}",
        f"Cd dmp 0 {4 * c_out:.6g} IC={v_out:.9g}",
        f"Vsense {drain} dch 0",
        f"Bch dch {source} I = max(0, min({GM}*(V(g,{source})-{VTH}), "
        f"V(dch,{source})/{R_ON}))",
        f"Cgs g {source} {CGS}",
        f"Cgd g {drain} {CGD}",
        f"Vctl ctl 0 PULSE(0 1 0 1e-10 1e-10 {width:.9g} {ts:.9g})",
        f"Bg {source} g I = {IG}*(2*V(ctl)-1)",
        f"Vhi hi {source} DC {VDRV}",
        "Dhi g hi didl",
        f"Dlo {source} g didl",
    ]
    if c_oss:
        net.append(f"Coss {drain} {source} {c_oss:.6g}")
    if cj:
        net.append(cj)
    net += [f".tran {T_MAX_STEP:g} {PERIODS * ts:.9g} 0 {T_MAX_STEP:g} uic", ".end"]
    return "\n".join(net) + "\n", width


SPAN = 600e-9  # [s] window after each gate command: the transitions end within ~250 ns


def _transitions(vec, kind, fs, width):
    """Energies of the last period's turn-on and turn-off windows [J] (channel
    conduction R_DS(on)·i² removed), the current at mid voltage swing of each [A]
    (flat there) and the blocking voltage before turn-on and after turn-off [V]."""
    t = vec["time"]
    ts = 1.0 / fs
    v_d = vec["v(in)"] if kind == "buck" else vec["v(sw)"]
    v_s = vec["v(sw)"] if kind == "buck" else np.zeros_like(t)
    v_ds, i = v_d - v_s, vec["i(vsense)"]
    t0 = (PERIODS - 1) * ts
    p = v_ds * i - R_ON * np.maximum(i, 0.0) ** 2
    w_on = (t >= t0) & (t <= t0 + SPAN)
    w_off = (t >= t0 + width) & (t <= t0 + width + SPAN)
    e_on = np.trapezoid(np.where(w_on, p, 0.0), t)
    e_off = np.trapezoid(np.where(w_off, p, 0.0), t)
    v_before = float(np.interp(t0, t, v_ds))
    v_after = float(np.interp(t0 + width + SPAN, t, v_ds))
    k_on = np.flatnonzero(w_on & (v_ds < v_before / 2))[0]
    k_off = np.flatnonzero(w_off & (v_ds > v_after / 2))[0]
    return e_on, e_off, float(i[k_on]), float(i[k_off]), v_before, v_after


def _case(tmp_path, kind, c_oss_pf=0.0, c_j_pf=0.0):
    fet = {"t_rise": "30 ns", "t_fall": "40 ns"}
    if c_oss_pf:
        fet["c_oss"] = f"{c_oss_pf} pF"
    parts = cell_parts(lossless=False, r_on="5 mohm", esr_out="1 mohm", esr_in="1 mohm",
                       c_in="2000 uF", c_out="20 uF")
    parts["t-fet"]["electrical"].update(fet)
    parts["t-diode"]["electrical"].update({"v_f0": "0.04 V", "r_d": "0 ohm"})
    if c_j_pf:
        parts["t-diode"]["electrical"]["c_j"] = f"{c_j_pf} pF"
    parts["t-fet"]["electrical"]["r_ds_on_tc"] = "0 %/K"
    parts["t-ind"]["electrical"]["dcr"] = "0 ohm"
    if kind == "buck":
        design = cell_design("buck", vin="24 V", vo="12 V", io="5 A", fs="200 kHz",
                             ambient="25 degC")
    else:
        design = cell_design("boost", vin="24 V", vo="48 V", io="2 A", fs="200 kHz",
                             ambient="25 degC")
    ev = run(load_design(write_case(tmp_path / kind, design, parts)))
    sw = switching.compute(ev.result, loss_model.semis(positions(ev.design)))[("switch", 0)]
    return ev, sw


def _simulate(tmp_path, ev, kind, c_oss=0.0, c_j=0.0):
    st, res = ev.stage, ev.result
    fs = float(st.fs[0])
    i_l = res.currents[("inductor", 0)]
    v_in, v_out, i_o = float(st.v_in[0]), float(st.vo[0]), float(st.io[0])
    deck, width = _deck(kind, v_in, v_out, v_out / i_o, float(st.inductors[0].l[0]),
                        float(st.capacitors[("output-capacitor", 0)].c[0]),
                        float(res.duty[0]), fs, float(i_l.min()[0]), float(i_l.max()[0]),
                        c_oss, c_j)
    folder = keep_folder(tmp_path)
    name = f"switching-loss-{kind}{'-caps' if c_oss or c_j else ''}"
    (folder / f"{name}.cir").write_text(deck)
    return _transitions(run_netlist(deck, tmp_path / name), kind, fs, width), fs


@pytest.mark.parametrize("kind", ["buck", "boost"])
def test_overlap_relation_against_gate_charge_switch(tmp_path, kind):
    ev, sw = _case(tmp_path, kind)
    (e_on, e_off, i_on, i_off, v_on, v_off), fs = _simulate(tmp_path, ev, kind)
    # the run's transition times from its gate-charge model at the run's currents
    t_ri, t_fi = (i_on / GM) * (CGS + CGD) / IG, (i_off / GM) * (CGS + CGD) / IG
    t_fv, t_rv = v_on * CGD / IG, v_off * CGD / IG
    # relation vs run: the linearised transitions are exact for this switch up to the
    # C_gd displacement current (I_g, 1 % of I during t_fv only) and the inductor
    # ripple during the ~45 ns transitions (< 0.5 %): 2 %
    assert e_on == pytest.approx(L.overlap_energy(v_on, i_on, 0.0, t_ri + t_fv, 0.0), rel=0.02)
    assert e_off == pytest.approx(L.overlap_energy(v_off, 0.0, i_off, 0.0, t_rv + t_fi),
                                  rel=0.02)
    # engine: its currents at the switching instants (inductor valley and peak) and
    # blocking voltage, through the relation with the sheet's t_rise = 30 ns,
    # t_fall = 40 ns, against the same relation with the run's values: 3 %. The run's
    # peak current is within 1 % of the model's; its valley is up to 0.2 A higher in
    # the boost (the gate-charge switch's effective on-time differs from the engine's
    # duty by a few tens of ns), a small share of the energy (the turn-off term
    # I_off·t_fall dominates).
    expected = L.overlap_loss(0.5 * (v_on + v_off), i_on, i_off, 30e-9, 40e-9, fs)
    assert sw.terms["overlap"][0] == pytest.approx(expected, rel=0.03)


R_S = 0.2  # [ohm] the capacitive case's switch resistance (R·C = 2 ns with 10 nF)


def _cap_deck(kind, v_in, v_out, r_load, l, c_out, duty, fs, i_valley, c_oss, c_j):
    """The same cell with an ideal switch of resistance R_S closing in ~10 ps (an ngspice
    S switch), C_oss across it and C_j across the diode; the channel current is sensed."""
    ts = 1.0 / fs
    if kind == "buck":
        drain, source = "in", "sw"
        lines = [f"L1 sw out {l:.9g} IC={i_valley:.9g}", "Dfw 0 sw didl",
                 f"Cj 0 sw {c_j:.6g}"]
    else:
        drain, source = "sw", "0"
        lines = [f"L1 in sw {l:.9g} IC={i_valley:.9g}", "Dbo sw out didl",
                 f"Cj sw out {c_j:.6g}"]
    net = [f"* {kind} cell, resistive switch R={R_S} ohm, C_oss={c_oss}, C_j={c_j}",
           ".options reltol=1e-5 abstol=1e-9",
           ".model didl D(IS=1e-12 N=0.05)",
           f".model swr SW(RON={R_S} ROFF=1e7 VT=0.5 VH=0.2)",
           f"Vin in 0 DC {v_in:.9g}", *lines,
           f"Co out 0 {c_out:.9g} IC={v_out:.9g}", f"Rl out 0 {r_load:.9g}",
           f"Rd out dmp {np.sqrt(l / c_out):.6g}", f"Cd dmp 0 {4 * c_out:.6g} IC={v_out:.9g}",
           f"Vsense {drain} dch 0", f"S1 dch {source} ctl 0 swr OFF",
           f"Coss {drain} {source} {c_oss:.6g}",
           f"Vctl ctl 0 PULSE(0 1 0 1e-11 1e-11 {duty * ts:.9g} {ts:.9g})",
           f".tran 0.02n {CAP_PERIODS * ts:.9g} {(CAP_PERIODS - 1) * ts:.9g} 0.02n uic",
           ".end"]
    return "\n".join(net) + "\n"


CAP_PERIODS = 8


@pytest.mark.parametrize("kind", ["buck", "boost"])
def test_output_and_junction_capacitance_at_hard_turn_on(tmp_path, kind):
    # A resistance R closing on the node capacitance C = C_oss + C_j (C_oss discharged
    # through it, C_j charged through it) while the inductor current I_L moves over:
    # the node follows v = V'·(1 − e^(−t/RC)), V' = V − R·I_L, and the switch
    # dissipates R·I_L²·t + 2·I_L·V'·R·C + ½·C·V'² (the integral of u²/R with
    # u = R·I_L + V'·e^(−t/RC); Kirchhoff's laws, first-order RC circuit). The last term
    # is the capacitive turn-on loss ½·(C_oss + C_j)·V² of the relation.
    c_oss, c_j = 4e-9, 6e-9
    ev, sw = _case(tmp_path, kind, c_oss_pf=4000, c_j_pf=6000)
    st, res = ev.stage, ev.result
    fs = float(st.fs[0])
    i_l = res.currents[("inductor", 0)]
    v_in, v_out, i_o = float(st.v_in[0]), float(st.vo[0]), float(st.io[0])
    deck = _cap_deck(kind, v_in, v_out, v_out / i_o, float(st.inductors[0].l[0]),
                     float(st.capacitors[("output-capacitor", 0)].c[0]), float(res.duty[0]),
                     fs, float(i_l.min()[0]), c_oss, c_j)
    name = f"switching-loss-{kind}-caps"
    (keep_folder(tmp_path) / f"{name}.cir").write_text(deck)
    vec = run_netlist(deck, tmp_path / name)
    t = vec["time"]
    v_d = vec["v(in)"] if kind == "buck" else vec["v(sw)"]
    v_s = vec["v(sw)"] if kind == "buck" else np.zeros_like(t)
    v_ds, i = v_d - v_s, vec["i(vsense)"]
    t0 = (CAP_PERIODS - 1) * (1.0 / fs)
    w = (t >= t0) & (t <= t0 + 40 * R_S * (c_oss + c_j))
    v_before = float(np.interp(t0, t, v_ds))
    i_l0 = float(np.interp(t0, t, vec["i(l1)"]))
    # the switch is a resistor: its whole dissipation v·i, less the conduction of the
    # inductor current R·i_L² (i_L drifts ~3 % over the window: taken from the run)
    i_ind = vec["i(l1)"]
    e_run = np.trapezoid(np.where(w, v_ds * i - R_S * i_ind ** 2, 0.0), t)
    tau = R_S * (c_oss + c_j)
    v_p = v_before - R_S * i_l0
    e_cap = 0.5 * (c_oss + c_j) * v_p ** 2
    # time step 20 ps against R·C = 2 ns, the switch closing in ~10 ps: 1 %
    assert e_run == pytest.approx(e_cap + 2 * i_l0 * v_p * tau, rel=0.01)
    assert e_cap > 0.85 * e_run  # the capacitive term is most of it
    # engine terms c_oss and commutation (C_j of the commutated diode) against
    # ½·C·V²·f_s at the run's blocking voltage: 1 % (the engine takes the peak blocking
    # voltage, capacitor ripple included; V' differs from V by R·I_L, 3 %, which is why
    # the relation is compared at V, the ideal-switch limit R -> 0)
    assert sw.terms["c_oss"][0] == pytest.approx(0.5 * c_oss * v_before ** 2 * fs, rel=0.01)
    assert sw.terms["commutation"][0] == pytest.approx(0.5 * c_j * v_before ** 2 * fs,
                                                       rel=0.01)
