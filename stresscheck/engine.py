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
from .topologies import (CapacitorBank, Device, Inductor, Magnetics, Stage, StageResult,
                         duty_limit_reason, evaluate, layout_for, topology_duty_limit)

THERMAL_TOL = 1e-3  # [K] convergence of the electro-thermal loop
THERMAL_MAX_ITER = 200
RUNAWAY_T = 1000.0  # [degC] a junction beyond this is taken as thermal runaway
BODY_DIODE_VF0 = 0.9  # [V] body-diode v_sd when the part sheet gives none (common practice)
BODY_VF0_SHARE = 0.85  # v_f0 of the straight-line body-diode model as a share of v_sd
BODY_DIODE_RD = 0.01  # [ohm] body-diode slope resistance when the sheet gives no r_sd
NO_MAGNETIZING = 1e6  # [H] stands for "no magnetizing current" when L_m is not given


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


@dataclass
class Position:
    """One circuit position: a ref (or, for a capacitor bank, all refs of the bank)."""

    role: str
    index: int
    component: object
    refs: list[str]
    devices: int  # identical devices sharing the position's current

    @property
    def key(self) -> tuple[str, int]:
        return (self.role, self.index)


def positions(design) -> list[Position]:
    """Every position of the design, in layout order; a capacitor bank is one position."""
    layout = layout_for(design)
    out: list[Position] = []
    for role, spec in layout.roles.items():
        if spec.count is None:
            for comp in design.by_role(role):
                out.append(Position(role, 0, comp, list(comp.refs),
                                    len(comp.refs) * comp.parallel))
        else:
            for k, (ref, comp) in enumerate(design.positions(role)):
                out.append(Position(role, k, comp, [ref], comp.parallel))
    return out


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


def body_diode(part) -> tuple[float, float]:
    """(v_f0 [V], r_d [ohm]) of a MOSFET's body diode per device, from v_sd and r_sd."""
    e = part.electrical
    return e.get("v_sd", BODY_DIODE_VF0) * BODY_VF0_SHARE, e.get("r_sd", BODY_DIODE_RD)


def build_stage(design, corners: CornerSet, r_mosfet: dict) -> Stage:
    """Per-corner parameters; ``r_mosfet[(role, k)]`` is R_DS(on) per device [ohm]."""
    n = corners.size
    devices: dict = {}
    capacitors: dict = {}
    inductors: list[Inductor] = []
    transformer = None
    for pos in positions(design):
        comp, part = pos.component, pos.component.part
        e = part.electrical
        if part.kind == "mosfet":
            vf0, rd = body_diode(part)
            devices[pos.key] = Device("mosfet", np.full(n, vf0), np.full(n, rd / pos.devices),
                                      r_mosfet[pos.key] / pos.devices)
        elif part.kind == "diode":
            devices[pos.key] = Device("diode", np.full(n, e["v_f0"]),
                                      np.full(n, e.get("r_d", 0.0) / pos.devices))
        elif part.kind == "capacitor":
            c = tolerance_column(corners, comp, "capacitance", part.spread("capacitance").nom)
            capacitors[pos.key] = CapacitorBank(c * pos.devices,
                                                e.get("esr", 0.0) / pos.devices)
        elif part.kind == "inductor":
            ind = tolerance_column(corners, comp, "inductance", part.spread("inductance").nom)
            inductors.append(Inductor(ind, e.get("dcr", 0.0) / pos.devices))
        elif part.kind == "transformer":
            lm = (tolerance_column(corners, comp, "magnetizing_inductance",
                                   part.spread("magnetizing_inductance").nom)
                  if "magnetizing_inductance" in e else np.full(n, NO_MAGNETIZING))
            transformer = Magnetics(e["primary_turns"], e["secondary_turns"], lm,
                                    e.get("r_primary", 0.0), e.get("r_secondary", 0.0),
                                    e.get("core_area"), e.get("reset_turns"),
                                    e.get("r_reset", 0.0), e.get("leakage_inductance", 0.0))
    return Stage(topology=design.topology, rectifier=design.rectifier,
                 modulation=design.modulation, vin=corners["input_voltage"],
                 vo=corners["output_voltage"], io=corners["output_current"],
                 fs=corners["switching_frequency"],
                 duty_limit=topology_duty_limit(design, corners["switching_frequency"]),
                 dead_time=design.dead_time, devices=devices, transformer=transformer,
                 inductors=inductors, capacitors=capacitors)


def _check_model(design, corners, result: StageResult, stage: Stage):
    """Refuse the design where the model does not hold: first a duty beyond the limit
    (at such a corner nothing else the model says is meaningful), then the model's own
    reasons (a model that cannot reach the output at all reports at the limit)."""
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


def mosfet_loss(result, key, r_on, devices, diode) -> np.ndarray:
    """Conduction loss per device [W]: R_DS(on)·I_ch,rms² for the channel, plus
    v_f0·I_avg + r_d·I_rms² for the body diode where the model has it conduct."""
    i_ch = result.currents[key].rms() / devices
    p = r_on * i_ch ** 2
    body = result.body.get(key)
    if body is not None:
        vf0, rd = diode
        p = p + diode_loss(vf0, rd, body.mean() / devices, body.rms() / devices)
    return p


def _device_rms(result, key):
    """Rms of the whole device current, body diode included (they never overlap)."""
    i = result.currents[key].rms()
    body = result.body.get(key)
    return np.sqrt(i ** 2 + body.rms() ** 2) if body is not None else i


def _device_peak(result, key):
    i = result.currents[key].peak()
    body = result.body.get(key)
    return np.maximum(i, body.peak()) if body is not None else i


def run(design, corners: CornerSet | None = None) -> Evaluation:
    """Evaluate every stress of ``design`` at every corner."""
    corners = corners if corners is not None else build_corners(design)
    ta = corners["ambient_temperature"]
    notes: list[dict] = []
    fets = [p for p in positions(design) if p.component.part.kind == "mosfet"]
    rth = {p.key: _thermal_path(p.component) for p in fets}
    for p in fets:
        e, ref = p.component.part.electrical, p.refs[0]
        if "r_ds_on_tc" not in e and "r_ds_on_hot" not in e:
            notes.append({"level": "warning", "text": f"{ref}: part '{p.component.part.id}' "
                          "gives no R_DS(on) temperature dependence; its 25 °C value is used"})
        if rth[p.key] is None:
            notes.append({"level": "warning", "text": f"{ref}: no thermal path (r_th_jc "
                          "with r_th_ca, or r_th_ja); T_j not computed, R_DS(on) taken at "
                          "T_j,max"})
    t_j = {p.key: (ta.copy() if rth[p.key] is not None else
                   np.full(corners.size, p.component.part.ratings.get("t_j_max", DEFAULT_HOT)))
           for p in fets}
    runaway = {key: np.zeros(corners.size, bool) for key in t_j}

    def r_now():
        return {p.key: r_ds_on_at(p.component.part, t_j[p.key]) for p in fets}

    converged = not fets
    for _ in range(THERMAL_MAX_ITER if fets else 0):
        r_dev = r_now()
        result = evaluate(build_stage(design, corners, r_dev))
        moved = 0.0
        for p in fets:
            if rth[p.key] is None:
                continue
            loss = mosfet_loss(result, p.key, r_dev[p.key], p.devices,
                               body_diode(p.component.part))
            t_new = junction_temperature(ta, loss, rth[p.key])
            runaway[p.key] |= ~np.isfinite(t_new) | (t_new > RUNAWAY_T)
            t_new = np.where(runaway[p.key], RUNAWAY_T, t_new)
            moved = max(moved, float(np.max(np.abs(t_new - t_j[p.key]))))
            t_j[p.key] = t_new
        if moved < THERMAL_TOL:
            converged = True
            break
    if not converged:
        for key in runaway:
            runaway[key] |= True  # no convergence: every corner counts as runaway
    r_dev = r_now()
    stage = build_stage(design, corners, r_dev)
    result = evaluate(stage)
    _check_model(design, corners, result, stage)

    notes.extend({"level": "assumption", "text": text} for text in result.notes)
    stresses, p_loss = _derive(design, corners, result, r_dev, t_j, runaway, notes)
    if any(r.any() for r in runaway.values()):
        notes.append({"level": "warning", "text": "thermal runaway: the electro-thermal "
                      "loop (R_DS(on) rising with T_j) does not converge at some corners"})
    p_in = corners["input_voltage"] * result.input_current
    p_out = corners["output_voltage"] * corners["output_current"]
    return Evaluation(design, corners, result, stage, stresses, t_j, runaway,
                      p_in, p_out, p_loss, notes)


def _derive(design, corners, result, r_dev, t_j, runaway, notes):
    """Every quantity of every ref [SI] from the model's waveforms; also the total loss."""
    n = corners.size
    ta = corners["ambient_temperature"]
    all_c = np.ones(n, bool)
    steady = corners.steady_mask()
    nan = np.full(n, np.nan)
    out: list[Stress] = []
    p_total = np.zeros(n)

    def temperature(p_dev, rth, why):
        if rth is None:
            return nan, why
        return junction_temperature(ta, p_dev, rth), ""

    for pos in positions(design):
        comp, part, key, dev = pos.component, pos.component.part, pos.key, pos.devices
        rth = _thermal_path(comp)
        e = part.electrical
        rows: list[tuple[str, np.ndarray, str]] = []
        if part.kind == "mosfet":
            p = mosfet_loss(result, key, r_dev[key], dev, body_diode(part))
            p_total += p * dev
            t = np.where(runaway[key], np.inf, t_j[key]) if rth is not None else nan
            rows = [("v_peak", result.v_block[key], ""),
                    ("i_peak", _device_peak(result, key) / dev, ""),
                    ("i_rms", _device_rms(result, key) / dev, ""),
                    ("p_loss", p, ""),
                    ("t_j", t, "" if rth is not None else "no thermal path given")]
        elif part.kind == "diode":
            i = result.currents[key]
            i_avg, i_rms = i.mean() / dev, i.rms() / dev
            p = diode_loss(e["v_f0"], e.get("r_d", 0.0), i_avg, i_rms)
            p_total += p * dev
            rows = [("v_reverse_peak", result.v_block[key], ""), ("i_avg", i_avg, ""),
                    ("i_rms", i_rms, ""), ("i_peak", i.peak() / dev, ""), ("p_loss", p, ""),
                    ("t_j", *temperature(p, rth, "no thermal path given"))]
        elif part.kind == "capacitor":
            i_dev = result.currents[key].rms() / dev
            esr = e.get("esr")
            rows = [("v_peak", result.v_block[key], ""), ("i_ripple_rms", i_dev, "")]
            t_hs = None
            if esr is None:
                rows.append(("t_hotspot", nan, "no ESR on the part sheet"))
            else:
                p = esr * i_dev ** 2
                p_total += p * dev
                t_hs, why = temperature(p, rth, "no r_th given")
                rows.append(("t_hotspot", t_hs, why))
                t_hs = None if why else t_hs
            if part.technology in schema.LIFE_TECHNOLOGIES:
                r = part.ratings
                if t_hs is None or "life" not in r or "t_max" not in r:
                    rows.append(("life", nan, "needs life, t_max, ESR and r_th"))
                else:
                    rows.append(("life", capacitor_life(part.technology, r["life"],
                                                        r["t_max"], t_hs), ""))
        elif part.kind == "inductor":
            i = result.currents[key]
            i_rms = i.rms() / dev
            rows = [("i_peak", i.peak() / dev, ""), ("i_rms", i_rms, "")]
            dcr = e.get("dcr")
            if dcr is None:
                rows.append(("t_hotspot", nan, "no dcr on the part sheet"))
            else:
                p = dcr * i_rms ** 2
                p_total += p * dev
                rows.append(("t_hotspot", *temperature(p, rth, "no r_th given")))
        elif part.kind == "transformer":
            if result.b_peak is None:
                rows.append(("b_peak", nan, "no core_area on the part sheet"))
            else:
                rows.append(("b_peak", result.b_peak, ""))
            p_total += result.winding_loss
            rows.append(("t_hotspot", *temperature(result.winding_loss, rth,
                                                   "no r_th on the part sheet")))
            if "magnetizing_inductance" not in e:
                notes.append({"level": "warning", "text": f"{pos.refs[0]}: no "
                              "magnetizing_inductance on the part sheet; magnetizing "
                              "current left out of the switch currents"})
        for ref in pos.refs:
            for quantity, values, reason in rows:
                family = schema.QUANTITIES[quantity].family
                applicable = all_c if family == "voltage" else steady
                out.append(Stress(ref, comp, quantity, np.asarray(values, dtype=float),
                                  applicable, reason))
    return out, p_total


def circuit_at(ev: Evaluation, i: int) -> Circuit:
    """The circuit of corner ``i`` with the engine's solved parameters, for ngspice."""
    st, res = ev.stage, ev.result

    def diode(dev):
        return DiodeModel(float(dev.v_f0[i]), float(dev.r_d[i]))

    def semi(dev):
        if dev.kind == "mosfet":
            return SwitchModel(float(dev.r_on[i]), diode(dev))
        return diode(dev)

    xf = st.transformer
    out = st.capacitors[("output-capacitor", 0)]
    c = Circuit(topology=st.topology, rectifier=st.rectifier, v_in=float(st.vin[i]),
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
    if xf is not None:
        c.n_p, c.n_s, c.l_m = xf.n_p, xf.n_s, float(xf.l_m[i])
        c.r_primary, c.r_secondary, c.core_area = xf.r_p, xf.r_s, xf.core_area
        c.n_r, c.r_reset, c.l_leak = xf.n_r, xf.r_r, xf.l_leak
    if ("input-capacitor", 0) in st.capacitors:
        cin = st.capacitors[("input-capacitor", 0)]
        c.c_in = CapacitorModel(float(cin.c[i]), cin.esr)
    c.c_split = [CapacitorModel(float(b.c[i]), b.esr)
                 for (role, _), b in sorted(st.capacitors.items()) if role == "split-capacitor"]
    return c
