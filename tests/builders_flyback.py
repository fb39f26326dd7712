"""Test helpers for flyback designs (see builders.py for the shared ones).

The parts are test fixtures: values chosen so that each regime (CCM, DCM) is reached
where a test wants it, not to look like any product.
"""

from __future__ import annotations

import copy

from builders import LOSSLESS, part


def flyback_parts(*, lossless=False, n_p=20, n_s=10, l_m="100 uH", l_m_tol=None,
                  c_out="1000 uF", c_in="20 uF", esr_out="5 mohm", esr_in="5 mohm",
                  core_area="60 mm^2", rectifier_kind="diode", v_sd=None, r_sd=None,
                  l_leak=None):
    """Parts for a flyback test design {id: sheet}; ``rectifier_kind="mosfet"`` adds the
    synchronous rectifier "t-sr" (the switch's sheet, body diode ``v_sd``/``r_sd`` when
    given) and makes "t-diode" the same MOSFET. ``l_leak``: the transformer's leakage
    inductance (none by default: the spike-free relations are what most tests check)."""
    e = LOSSLESS if lossless else {}
    lm = {"nom": l_m, "tolerance": l_m_tol} if l_m_tol else l_m
    xf = {"primary_turns": n_p, "secondary_turns": n_s, "magnetizing_inductance": lm,
          "r_primary": e.get("r_primary", "30 mohm"),
          "r_secondary": e.get("r_secondary", "10 mohm")}
    if core_area:
        xf["core_area"] = core_area
    if l_leak:
        xf["leakage_inductance"] = l_leak
    parts = {
        "t-fet": part("mosfet", "si", {"v_ds": "200 V", "v_gs": "20 V", "i_d": "30 A", "i_dm": "100 A",
                                       "t_j_max": "175 degC"},
                      {"r_ds_on": e.get("r_ds_on", "40 mohm"), "r_ds_on_tc": "0.5 %/K"},
                      {"r_th_jc": "1 K/W"}),
        "t-diode": part("diode", "schottky", {"v_rrm": "100 V", "i_f_avg": "20 A",
                                              "t_j_max": "175 degC"},
                        {"v_f0": e.get("v_f0", "0.4 V"), "r_d": e.get("r_d", "15 mohm")},
                        {"r_th_jc": "1.5 K/W"}),
        "t-xfmr": part("transformer", "ferrite", {"b_sat": "350 mT", "t_max": "130 degC"},
                       xf, {"r_th": "15 K/W"}),
        "t-cout": part("capacitor", "al-polymer", {"v_rated": "25 V", "i_ripple": "10 A",
                                                   "t_max": "105 degC"},
                       {"capacitance": c_out, "esr": e.get("esr", esr_out)},
                       {"r_th": "20 K/W"}),
        "t-cin": part("capacitor", "ceramic-class2", {"v_rated": "200 V", "i_ripple": "20 A",
                                                      "t_max": "125 degC"},
                      {"capacitance": c_in, "esr": e.get("esr", esr_in)}, {"r_th": "20 K/W"}),
    }
    if rectifier_kind == "mosfet":
        parts["t-diode"] = parts["t-fet"]
        sr = copy.deepcopy(parts["t-fet"])
        if v_sd is not None:
            sr["electrical"]["v_sd"] = v_sd
        if r_sd is not None:
            sr["electrical"]["r_sd"] = r_sd
        parts["t-sr"] = sr
    return parts


def flyback_design(*, vin=None, vo="12 V", io=None, fs="150 kHz", surge=None, ilim=None,
                   ambient=None, max_duty=None, name=None, sync=False, **converter):
    """A flyback test design; ``sync``: the rectifier is the MOSFET "t-sr" (ref Q2)."""
    doc = {
        "schema": "stresscheck.design/1",
        "converter": {"name": name or "test flyback", "topology": "flyback",
                      "switching_frequency": fs, **converter},
        "operating": {"input_voltage": vin or {"min": "36 V", "nom": "48 V", "max": "75 V"},
                      "output_voltage": vo,
                      "output_current": io or {"min": "0.2 A", "max": "2 A"},
                      "ambient_temperature": ambient or {"min": "0 degC", "max": "50 degC"}},
        "components": [
            {"ref": "Q1", "role": "switch", "part": "t-fet", "r_th_ca": "10 K/W"},
            {"ref": "Q2" if sync else "D1", "role": "rectifier",
             "part": "t-sr" if sync else "t-diode", "r_th_ca": "10 K/W"},
            {"ref": "T1", "role": "transformer", "part": "t-xfmr"},
            {"refs": ["C1"], "role": "input-capacitor", "part": "t-cin"},
            {"refs": ["C2", "C3"], "role": "output-capacitor", "part": "t-cout"},
        ],
    }
    if max_duty is not None:
        doc["converter"]["max_duty"] = max_duty
    if surge:
        doc["operating"]["input_surge"] = surge
    if ilim:
        doc["operating"]["current_limit"] = ilim
    return doc
