"""The stress engine: design + corners -> per-device stresses at every corner.

Runs the converter model at all corners at once, inside an electro-thermal loop
(R_DS(on) depends on T_j, which depends on the loss), then derives every quantity of
every ref as an (N,) array over the corners. NaN marks a value that is not computed.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from . import schema
from .corners import CornerSet, build_corners, tolerance_column
from .errors import RegulationError
from .spice.circuit import CapacitorModel, Circuit, DiodeModel, SwitchModel
from .thermal import (DEFAULT_HOT, capacitor_life, diode_loss, junction_temperature,
                      r_ds_on_at)
from .topologies import (Stage, StageResult, duty_limit_reason, evaluate,
                         topology_duty_limit)

THERMAL_TOL = 1e-3  # [K] convergence of the electro-thermal loop
THERMAL_MAX_ITER = 200
RUNAWAY_T = 1000.0  # [degC] a junction beyond this is taken as thermal runaway
BODY_DIODE_VF0 = 0.7  # [V] body-diode drop when the part sheet gives no v_sd (common practice)


@dataclass
class Stress:
    """One quantity of one ref at every corner."""

    ref: str
    component: object
    quantity: str
    values: np.ndarray  # (N,), NaN where not computed
    applicable: np.ndarray  # (N,) bool: corners that count for this quantity
    reason: str = ""  # why not computed, if so


@dataclass
class Evaluation:
    design: object
    corners: CornerSet
    result: StageResult
    stage: Stage
    stresses: list[Stress]
    t_j: dict[str, np.ndarray]
    runaway: dict[str, np.ndarray]
    p_in: np.ndarray
    p_out: np.ndarray
    p_loss: np.ndarray  # sum of every computed loss [W]
    notes: list[dict] = field(default_factory=list)

    def circuit_at(self, i: int) -> Circuit:
        return circuit_at(self, i)


def _bank(comp, corners, n_devices=None):
    """Equivalent capacitance [F] (N,) and ESR [ohm] of a capacitor bank."""
    devices = n_devices if n_devices is not None else len(comp.refs) * comp.parallel
    c = tolerance_column(corners, comp, "capacitance", comp.part.spread("capacitance").nom)
    esr = comp.part.electrical.get("esr", 0.0)
    return c * devices, esr / devices, devices


def _thermal_path(comp):
    """Junction (or hot spot) to ambient thermal resistance [K/W], or None."""
    part = comp.part
    if comp.r_th_ja is not None:
        return comp.r_th_ja
    if part.kind in ("mosfet", "diode"):
        jc = part.thermal.get("r_th_jc")
        if jc is None or comp.r_th_ca is None:
            return None
        return jc + comp.r_th_ca
    if comp.r_th_ca is not None:
        return comp.r_th_ca
    return part.thermal.get("r_th")


def build_stage(design, corners: CornerSet, r_switch: list[np.ndarray]) -> Stage:
    n = corners.size
    switches = design.positions("switch")
    rects = design.positions("rectifier")
    (_, xf), = design.positions("transformer")
    (_, ind), = design.positions("inductor")
    xe = xf.part.electrical
    lm = (tolerance_column(corners, xf, "magnetizing_inductance",
                           xf.part.spread("magnetizing_inductance").nom)
          if "magnetizing_inductance" in xe else np.full(n, 1e6))
    cout_comp = design.by_role("output-capacitor")[0]
    c_out, esr_out, _ = _bank(cout_comp, corners)
    stage = Stage(
        topology=design.topology, rectifier=design.rectifier,
        vin=corners["input_voltage"], vo=corners["output_voltage"],
        io=corners["output_current"], fs=corners["switching_frequency"],
        duty_limit=topology_duty_limit(design, corners["switching_frequency"]),
        switch_r=[r / comp.parallel for r, (_, comp) in zip(r_switch, switches)],
        rect_vf0=[np.full(n, c.part.electrical["v_f0"]) for _, c in rects],
        rect_rd=[np.full(n, c.part.electrical.get("r_d", 0.0) / c.parallel) for _, c in rects],
        n_p=xe["primary_turns"], n_s=xe["secondary_turns"], l_m=lm,
        r_p=xe.get("r_primary", 0.0), r_s=xe.get("r_secondary", 0.0),
        core_area=xe.get("core_area"),
        l_out=tolerance_column(corners, ind, "inductance", ind.part.spread("inductance").nom),
        dcr=ind.part.electrical.get("dcr", 0.0) / ind.parallel,
        c_out=c_out, esr_out=esr_out)
    if design.topology == "half-bridge":
        for _, comp in design.positions("split-capacitor"):
            c, esr, _ = _bank(comp, corners, n_devices=comp.parallel)
            stage.c_split.append(c)
            stage.esr_split.append(esr)
    else:
        stage.c_in, stage.esr_in, _ = _bank(design.by_role("input-capacitor")[0], corners)
    return stage


def _check_model(design, corners, result: StageResult, stage: Stage):
    over = result.duty > stage.duty_limit
    if over.any():
        i = int(np.argmax(result.duty - stage.duty_limit))
        raise RegulationError(design.path, "operating", f"cannot regulate at corner "
                              f"{corners.describe(i)}: needs a duty ratio of "
                              f"{result.duty[i]:.3f} per switch, above the limit of "
                              f"{stage.duty_limit[i]:.3f} ({duty_limit_reason(design)})")
    for mask, reason in result.invalid:
        if mask.any():
            i = int(np.flatnonzero(mask)[0])
            raise RegulationError(design.path, "operating", f"at corner "
                                  f"{corners.describe(i)}: {reason}")


def run(design, corners: CornerSet | None = None) -> Evaluation:
    """Evaluate every stress of ``design`` at every corner."""
    corners = corners if corners is not None else build_corners(design)
    ta = corners["ambient_temperature"]
    notes: list[dict] = []
    switches = design.positions("switch")
    rth_switch = [_thermal_path(c) for _, c in switches]
    for (ref, comp), rth in zip(switches, rth_switch):
        e = comp.part.electrical
        if "r_ds_on_tc" not in e and "r_ds_on_hot" not in e:
            notes.append({"level": "warning", "text": f"{ref}: part '{comp.part.id}' gives "
                          "no R_DS(on) temperature dependence; its 25 °C value is used"})
        if rth is None:
            notes.append({"level": "warning", "text": f"{ref}: no thermal path (r_th_jc "
                          "with r_th_ca, or r_th_ja); T_j not computed, R_DS(on) taken at "
                          "T_j,max"})

    def hot_default(comp):
        return np.full(corners.size, comp.part.ratings.get("t_j_max", DEFAULT_HOT))

    t_j = [ta.copy() if rth is not None else hot_default(c)
           for rth, (_, c) in zip(rth_switch, switches)]
    runaway = [np.zeros(corners.size, bool) for _ in switches]
    for _ in range(THERMAL_MAX_ITER):
        r_dev = [r_ds_on_at(c.part, t) for t, (_, c) in zip(t_j, switches)]
        stage = build_stage(design, corners, r_dev)
        result = evaluate(stage)
        moved = 0.0
        new_t = []
        for k, ((ref, comp), rth) in enumerate(zip(switches, rth_switch)):
            if rth is None:
                new_t.append(t_j[k])
                continue
            i_rms = result.currents[("switch", k)].rms() / comp.parallel
            p = r_dev[k] * i_rms ** 2
            t_new = junction_temperature(ta, p, rth)
            runaway[k] |= ~np.isfinite(t_new) | (t_new > RUNAWAY_T)
            t_new = np.where(runaway[k], RUNAWAY_T, t_new)
            moved = max(moved, float(np.max(np.abs(t_new - t_j[k]))))
            new_t.append(t_new)
        t_j = new_t
        if moved < THERMAL_TOL:
            break
    else:
        for k in range(len(switches)):
            runaway[k] |= True  # not converged: treat every corner as runaway
    r_dev = [r_ds_on_at(c.part, t) for t, (_, c) in zip(t_j, switches)]
    stage = build_stage(design, corners, r_dev)
    result = evaluate(stage)
    _check_model(design, corners, result, stage)

    stresses, p_loss = _derive(design, corners, result, stage, r_dev, t_j, runaway, notes)
    if any(r.any() for r in runaway):
        notes.append({"level": "warning", "text": "thermal runaway: the electro-thermal "
                      "loop (R_DS(on) rising with T_j) does not converge at some corners"})
    p_in = corners["input_voltage"] * result.input_current
    p_out = corners["output_voltage"] * corners["output_current"]
    return Evaluation(design, corners, result, stage, stresses,
                      {ref: t for (ref, _), t in zip(switches, t_j)},
                      {ref: r for (ref, _), r in zip(switches, runaway)},
                      p_in, p_out, p_loss, notes)


def _derive(design, corners, result, stage, r_dev, t_j, runaway, notes):
    """Every quantity of every ref [SI] from the model's waveforms."""
    n = corners.size
    ta = corners["ambient_temperature"]
    all_c = np.ones(n, bool)
    steady = corners.steady_mask()
    out: list[Stress] = []
    p_total = np.zeros(n)
    nan = np.full(n, np.nan)

    def add(ref, comp, quantity, values, reason=""):
        family = schema.QUANTITIES[quantity].family
        applicable = all_c if family == "voltage" else steady
        out.append(Stress(ref, comp, quantity, np.asarray(values, dtype=float),
                          applicable, reason))

    for k, (ref, comp) in enumerate(design.positions("switch")):
        i = result.currents[("switch", k)]
        par = comp.parallel
        i_rms = i.rms() / par
        p = r_dev[k] * i_rms ** 2
        p_total += p * par
        add(ref, comp, "v_peak", result.v_block[("switch", k)])
        add(ref, comp, "i_peak", i.peak() / par)
        add(ref, comp, "i_rms", i_rms)
        add(ref, comp, "p_loss", p)
        if _thermal_path(comp) is None:
            add(ref, comp, "t_j", nan, "no thermal path given")
        else:
            add(ref, comp, "t_j", np.where(runaway[k], np.inf, t_j[k]))

    for k, (ref, comp) in enumerate(design.positions("rectifier")):
        i = result.currents[("rectifier", k)]
        par = comp.parallel
        e = comp.part.electrical
        i_avg, i_rms = i.mean() / par, i.rms() / par
        p = diode_loss(e["v_f0"], e.get("r_d", 0.0), i_avg, i_rms)
        p_total += p * par
        add(ref, comp, "v_reverse_peak", result.v_block[("rectifier", k)])
        add(ref, comp, "i_avg", i_avg)
        add(ref, comp, "i_rms", i_rms)
        add(ref, comp, "i_peak", i.peak() / par)
        add(ref, comp, "p_loss", p)
        rth = _thermal_path(comp)
        if rth is None:
            add(ref, comp, "t_j", nan, "no thermal path given")
        else:
            add(ref, comp, "t_j", junction_temperature(ta, p, rth))

    cap_roles = ["output-capacitor", "split-capacitor", "input-capacitor"]
    for role in cap_roles:
        for k, comp in enumerate(design.by_role(role)):
            refs = comp.refs
            for j, ref in enumerate(refs):
                pos = (role, j) if role == "split-capacitor" else (role, 0)
                devices = comp.parallel if role == "split-capacitor" else len(refs) * comp.parallel
                i_dev = result.currents[pos].rms() / devices
                esr = comp.part.electrical.get("esr")
                add(ref, comp, "v_peak", result.v_block[pos])
                add(ref, comp, "i_ripple_rms", i_dev)
                rth = _thermal_path(comp)
                if esr is None or rth is None:
                    why = "no ESR on the part sheet" if esr is None else "no r_th given"
                    add(ref, comp, "t_hotspot", nan, why)
                    t_hs = None
                else:
                    p = esr * i_dev ** 2
                    p_total += p * comp.parallel
                    t_hs = junction_temperature(ta, p, rth)
                    add(ref, comp, "t_hotspot", t_hs)
                if comp.part.technology in schema.LIFE_TECHNOLOGIES:
                    r = comp.part.ratings
                    if t_hs is None or "life" not in r or "t_max" not in r:
                        add(ref, comp, "life", nan, "needs life, t_max, ESR and r_th")
                    else:
                        add(ref, comp, "life", capacitor_life(comp.part.technology,
                                                              r["life"], r["t_max"], t_hs))

    (ref, ind), = design.positions("inductor")
    i = result.currents[("inductor", 0)]
    add(ref, ind, "i_peak", i.peak() / ind.parallel)
    i_rms = i.rms() / ind.parallel
    add(ref, ind, "i_rms", i_rms)
    dcr = ind.part.electrical.get("dcr")
    rth = _thermal_path(ind)
    if dcr is None or rth is None:
        add(ref, ind, "t_hotspot", nan, "needs dcr and r_th")
    else:
        p = dcr * i_rms ** 2
        p_total += p * ind.parallel
        add(ref, ind, "t_hotspot", junction_temperature(ta, p, rth))

    (ref, xf), = design.positions("transformer")
    if result.b_peak is None:
        add(ref, xf, "b_peak", nan, "no core_area on the part sheet")
    else:
        add(ref, xf, "b_peak", result.b_peak)
    p_total += result.winding_loss
    rth = _thermal_path(xf)
    if rth is None:
        add(ref, xf, "t_hotspot", nan, "no r_th on the part sheet")
    else:
        add(ref, xf, "t_hotspot", junction_temperature(ta, result.winding_loss, rth))
    if "magnetizing_inductance" not in xf.part.electrical:
        notes.append({"level": "warning", "text": f"{ref}: no magnetizing_inductance on "
                      "the part sheet; magnetizing current left out of switch currents"})
    return out, p_total


def circuit_at(ev: Evaluation, i: int) -> Circuit:
    """The circuit of corner ``i`` with the engine's solved parameters, for ngspice."""
    st, res, design = ev.stage, ev.result, ev.design
    switches = []
    for k, (ref, comp) in enumerate(design.positions("switch")):
        e = comp.part.electrical
        body = DiodeModel(e.get("v_sd", BODY_DIODE_VF0) * 0.85, e.get("r_sd", 0.01) / comp.parallel)
        switches.append(SwitchModel(float(st.switch_r[k][i]), body))
    rects = [DiodeModel(float(st.rect_vf0[k][i]), float(st.rect_rd[k][i]))
             for k in range(len(st.rect_vf0))]
    c = Circuit(topology=st.topology, rectifier=st.rectifier, v_in=float(st.vin[i]),
                v_out=float(st.vo[i]), i_out=float(st.io[i]), f_sw=float(st.fs[i]),
                duty=float(res.duty[i]), dead_time=design.dead_time, switches=switches,
                rectifiers=rects, n_p=st.n_p, n_s=st.n_s, l_m=float(st.l_m[i]),
                r_primary=st.r_p, r_secondary=st.r_s, core_area=st.core_area,
                l_out=float(st.l_out[i]), dcr_out=st.dcr,
                c_out=CapacitorModel(float(st.c_out[i]), st.esr_out),
                i_l_start=float(res.i_l_start[i]), i_m_start=float(res.i_m_start[i]))
    if st.c_in is not None:
        c.c_in = CapacitorModel(float(st.c_in[i]), st.esr_in)
    c.c_split = [CapacitorModel(float(cc[i]), e) for cc, e in zip(st.c_split, st.esr_split)]
    return c
