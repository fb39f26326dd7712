"""Test helpers for the forward family: part sheets and design files in a tmp folder.

Test fixtures, not a parts library: values chosen to make a relation easy to check.
"""

from __future__ import annotations

from builders import LOSSLESS, part, write_case
from stresscheck.design import load_design
from stresscheck.engine import run

FORWARD_TOPOLOGIES = ("forward", "two-switch-forward")


def forward_parts(*, lossless=False, two_switch=False, n_p=8, n_s=3, n_r=6, l_m="150 uH",
                  l_out="10 uH", c_out="1000 uF", c_in="100 uF", esr_out="5 mohm",
                  esr_in="5 mohm", r_reset="20 mohm", v_fet="400 V", core_area="60 mm^2",
                  sr_r_on="4 mohm", sr_v_sd="0.8 V", sr_r_sd="10 mohm",
                  sr_lossless_body=True):
    """Parts for a forward-family test design {id: sheet}.

    ``two_switch``: the transformer has no reset winding. ``t-sr`` is the synchronous
    rectifier MOSFET (R_DS(on) ``sr_r_on``, body diode ``sr_v_sd`` + ``sr_r_sd``); with
    ``lossless`` its body diode is ideal too unless ``sr_lossless_body`` is False.
    """
    e = dict(LOSSLESS) if lossless else {}
    if lossless and sr_lossless_body:
        e.update(v_sd="0 V", r_sd="0 ohm")
    xfmr = {"primary_turns": n_p, "secondary_turns": n_s,
            "magnetizing_inductance": l_m, "core_area": core_area,
            "r_primary": e.get("r_primary", "20 mohm"),
            "r_secondary": e.get("r_secondary", "3 mohm")}
    if not two_switch:
        xfmr["reset_turns"] = n_r
        xfmr["r_reset"] = "0 ohm" if lossless else r_reset
    diode_e = {"v_f0": e.get("v_f0", "0.4 V"), "r_d": e.get("r_d", "10 mohm")}
    return {
        "t-fet": part("mosfet", "si", {"v_ds": v_fet, "v_gs": "20 V", "i_d": "30 A", "i_dm": "120 A",
                                       "t_j_max": "175 degC"},
                      {"r_ds_on": e.get("r_ds_on", "30 mohm"), "r_ds_on_tc": "0.5 %/K"},
                      {"r_th_jc": "1 K/W"}),
        "t-sr": part("mosfet", "si", {"v_ds": "100 V", "v_gs": "20 V", "i_d": "60 A", "i_dm": "240 A",
                                      "t_j_max": "175 degC"},
                     {"r_ds_on": e.get("r_ds_on", sr_r_on), "r_ds_on_tc": "0.5 %/K",
                      "v_sd": e.get("v_sd", sr_v_sd), "r_sd": e.get("r_sd", sr_r_sd)},
                     {"r_th_jc": "1 K/W"}),
        "t-rect": part("diode", "schottky", {"v_rrm": "100 V", "i_f_avg": "30 A",
                                             "t_j_max": "175 degC"},
                       diode_e, {"r_th_jc": "1 K/W"}),
        "t-reset": part("diode", "ultrafast", {"v_rrm": "600 V", "i_f_avg": "2 A",
                                               "t_j_max": "175 degC"},
                        {"v_f0": e.get("v_f0", "0.8 V"), "r_d": e.get("r_d", "100 mohm")},
                        {"r_th_jc": "5 K/W"}),
        "t-xfmr": part("transformer", "ferrite", {"b_sat": "350 mT", "t_max": "130 degC"},
                       xfmr, {"r_th": "15 K/W"}),
        "t-ind": part("inductor", "powder", {"i_sat": "40 A", "i_rms": "30 A",
                                             "t_max": "155 degC"},
                      {"inductance": l_out, "dcr": e.get("dcr", "2 mohm")}, {"r_th": "10 K/W"}),
        "t-cout": part("capacitor", "al-polymer", {"v_rated": "16 V", "i_ripple": "10 A",
                                                   "t_max": "105 degC"},
                       {"capacitance": c_out, "esr": e.get("esr", esr_out)}, {"r_th": "20 K/W"}),
        "t-cin": part("capacitor", "ceramic-class2", {"v_rated": "200 V", "i_ripple": "20 A",
                                                      "t_max": "125 degC"},
                      {"capacitance": c_in, "esr": e.get("esr", esr_in)}, {"r_th": "20 K/W"}),
    }


def forward_design(topology="forward", *, vin=None, vo="5 V", io=None, fs="250 kHz",
                   surge=None, ilim=None, ambient=None, name=None, extra=None,
                   sync=(), dead_time=None):
    """A forward-family design using the parts of :func:`forward_parts`.

    ``sync``: roles ("rectifier", "freewheel") that take the MOSFET ``t-sr``;
    ``dead_time``: the converter's dead_time key (e.g. "100 ns")."""
    two = topology == "two-switch-forward"
    doc = {
        "schema": "stresscheck.design/1",
        "converter": {"name": name or f"test {topology}", "topology": topology,
                      "switching_frequency": fs},
        "operating": {"input_voltage": vin or {"min": "36 V", "nom": "48 V", "max": "72 V"},
                      "output_voltage": vo,
                      "output_current": io or {"min": "6 A", "max": "10 A"},
                      "ambient_temperature": ambient or {"min": "0 degC", "max": "50 degC"}},
        "components": [
            {"refs": ["Q1", "Q2"] if two else ["Q1"], "role": "switch", "part": "t-fet",
             "r_th_ca": "5 K/W"},
            {"ref": "T1", "role": "transformer", "part": "t-xfmr"},
            {"ref": "D1", "role": "rectifier", "part": "t-rect", "r_th_ca": "5 K/W"},
            {"ref": "D2", "role": "freewheel", "part": "t-rect", "r_th_ca": "5 K/W"},
            {"refs": ["D3", "D4"] if two else ["D3"], "role": "reset", "part": "t-reset",
             "r_th_ca": "20 K/W"},
            {"ref": "L1", "role": "inductor", "part": "t-ind"},
            {"refs": ["C1"], "role": "output-capacitor", "part": "t-cout"},
            {"refs": ["C2"], "role": "input-capacitor", "part": "t-cin"},
        ],
    }
    for comp in doc["components"]:
        if comp["role"] in sync:
            comp["part"] = "t-sr"
    if dead_time is not None:
        doc["converter"]["dead_time"] = dead_time
    if surge:
        doc["operating"]["input_surge"] = surge
    if ilim:
        doc["operating"]["current_limit"] = ilim
    for section, values in (extra or {}).items():
        doc[section].update(values)
    return doc


# --- shared cases of the forward test modules ---------------------------------------------

REL = 1e-4  # lossless limit: the relations are exact; the margin covers the bus ripple
N_P, N_S, N_R = 8, 3, 6  # single switch: D_max = 8/14 = 0.571, switch 2.33·V_in
AREA = 60e-6  # [m^2] core_area of the test transformer
TOPOLOGIES = FORWARD_TOPOLOGIES
SYNC = ("rectifier", "freewheel")


def case(topology, *, lossless=True, io=None, l_m=None, n_s=None, vin=None, vo=None,
         sync=(), dead_time=None, **kw):
    """(design, parts) of a test case: 36-72 V -> 5 V (single switch) or
    300-400 V -> 24 V (two-switch)."""
    two = topology == "two-switch-forward"
    if two:
        parts = forward_parts(lossless=lossless, two_switch=True, n_p=40, n_s=n_s or 8,
                              l_m=l_m or "5 mH", l_out="47 uH", core_area="60 mm^2", **kw)
        design = forward_design(topology, vin=vin or {"min": "300 V", "max": "400 V"},
                                vo=vo or "24 V", io=io, fs="120 kHz", sync=sync,
                                dead_time=dead_time)
    else:
        kw.setdefault("n_r", N_R)
        parts = forward_parts(lossless=lossless, n_p=N_P, n_s=n_s or N_S, l_m=l_m or "150 uH",
                              **kw)
        design = forward_design(topology, vin=vin, vo=vo or "5 V", io=io, sync=sync,
                                dead_time=dead_time)
    return design, parts


def evaluate(tmp_path, topology, c_in="1 F", **kw):
    design, parts = case(topology, c_in=c_in, **kw)
    return run(load_design(write_case(tmp_path, design, parts)))


def values(ev, ref, quantity):
    (s,) = [s for s in ev.stresses if s.ref == ref and s.quantity == quantity]
    return s.values


def turns(ev):
    xf = ev.stage.transformer
    return xf.n_p, xf.n_s, (xf.n_r if xf.n_r else xf.n_p)


def sync_case(tmp_path, topology, sync=SYNC, dead_time="100 ns", lossless=True, io=None,
              c_in="1 F", **kw):
    design, parts = case(topology, lossless=lossless, sync=sync, dead_time=dead_time, io=io,
                         c_in=c_in, **kw)
    return run(load_design(write_case(tmp_path, design, parts)))


def load(tmp_path, design, parts):
    return load_design(write_case(tmp_path, design, parts))
