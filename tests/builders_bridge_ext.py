"""Test helpers for the bridge extensions: phase-shift modulation, current-doubler
rectifier, synchronous rectifiers. Built on tests/builders.py; the parts are test
fixtures (values chosen to make a relation easy to check), not a parts library.
"""

from __future__ import annotations

from builders import LOSSLESS, bridge_design, bridge_parts, part, write_case
from stresscheck.design import load_design
from stresscheck.engine import run


def ext_parts(*, lossless=False, l_leak=None, sync_r_on="4 mohm", **kw):
    """Bridge test parts plus a synchronous-rectifier MOSFET ("t-srfet") and, if
    ``l_leak`` is given, the transformer's leakage inductance."""
    parts = bridge_parts(lossless=lossless, **kw)
    e = LOSSLESS if lossless else {}
    parts["t-srfet"] = part("mosfet", "si", {"v_ds": "100 V", "v_gs": "20 V", "i_d": "80 A", "i_dm": "300 A",
                                             "t_j_max": "175 degC"},
                            {"r_ds_on": e.get("r_ds_on", sync_r_on), "r_ds_on_tc": "0.5 %/K",
                             "v_sd": "0.8 V"},
                            {"r_th_jc": "1 K/W"})
    if lossless:
        # body diode of the lossless limit: no drop (r_sd ~ 0, v_sd 0)
        parts["t-srfet"]["electrical"].update(v_sd="0 V", r_sd="1e-9 ohm")
        parts["t-fet"]["electrical"].update(v_sd="0 V", r_sd="1e-9 ohm")
    if l_leak is not None:
        parts["t-xfmr"]["electrical"]["leakage_inductance"] = l_leak
    return parts


def ext_design(topology="full-bridge", rectifier="center-tap", *, modulation="pwm",
               sync=False, dead_time=None, overshoot=None, **kw):
    """A bridge test design with the extension options; current doubler: inductors
    L1, L2 in one entry; ``sync``: MOSFET rectifiers ("t-srfet"). Phase shift (whose
    transformer has leakage inductance) states a rectifier overshoot allowance of 0 %
    unless ``overshoot`` is given: its tests check the ringing-free relations, and its
    ngspice decks have no diode capacitance to ring with."""
    doc = bridge_design(topology, rectifier if rectifier != "current-doubler"
                        else "center-tap", **kw)
    doc["converter"]["rectifier"] = rectifier
    doc["converter"]["modulation"] = modulation
    if dead_time is not None:
        doc["converter"]["dead_time"] = dead_time
    if overshoot is None and modulation == "phase-shift":
        overshoot = {"rectifier": "0 %"}
    if overshoot is not None:
        doc["converter"]["overshoot"] = overshoot
    name = kw.get("name") or f"test {topology} {modulation} {rectifier}" + (
        " synchronous" if sync else "")
    doc["converter"]["name"] = name
    for comp in doc["components"]:
        if comp["role"] == "inductor" and rectifier == "current-doubler":
            comp.pop("ref", None)
            comp["refs"] = ["L1", "L2"]
        if comp["role"] == "rectifier" and sync:
            comp["part"] = "t-srfet"
            comp["refs"] = [f"SR{i + 1}" for i in range(len(comp["refs"]))]
    return doc


# --- shared cases of the bridge test modules ---------------------------------------------

REL = 1e-4
L_LK = 1e-6  # [H] test leakage inductance


def values(ev, ref, quantity):
    (s,) = [s for s in ev.stresses if s.ref == ref and s.quantity == quantity]
    return s.values


def case(tmp_path, topology="full-bridge", rectifier="center-tap", *, parts=None, **kw):
    parts = parts if parts is not None else ext_parts()
    return run(load_design(write_case(tmp_path, ext_design(topology, rectifier, **kw), parts)))


def lossless_ps(tmp_path, rectifier, dead_time=None, l_out="1 H", sync=False):
    parts = ext_parts(lossless=True, l_m="1 H", c_in="1 F", l_out=l_out, l_leak="1 uH")
    return case(tmp_path, "full-bridge", rectifier, parts=parts, modulation="phase-shift",
                dead_time=dead_time, sync=sync)


def sabate_duty(ev):
    """Phase overlap D = D_eff + Δt·fs with Δt = 2·n·I_o·L_lk/V_in [S] [1]."""
    c = ev.corners
    n = ev.stage.transformer.n_s / ev.stage.transformer.n_p
    vin, io, fs = c["input_voltage"], c["output_current"], c["switching_frequency"]
    dt = L_LK * 2 * n * io / vin
    return c["output_voltage"] / (2 * n * vin) + dt * fs, dt
