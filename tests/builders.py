"""Test helpers: write small part libraries and design files into a temporary folder.

The parts here are test fixtures, not a parts library: values are chosen to make a
relation easy to check (lossless limit, stiff capacitors), not to look like any product.
"""

from __future__ import annotations

from pathlib import Path

import tomli_w

LOSSLESS = {
    "r_ds_on": "1e-9 ohm", "v_f0": "0 V", "r_d": "0 ohm", "dcr": "0 ohm",
    "esr": "0 ohm", "r_primary": "0 ohm", "r_secondary": "0 ohm",
}


def part(kind, technology, ratings=None, electrical=None, thermal=None, **extra):
    return {"schema": "stresscheck.part/1", "kind": kind, "technology": technology,
            "description": "test fixture", "ratings": ratings or {},
            "electrical": electrical or {}, "thermal": thermal or {}, **extra}


def bridge_parts(*, lossless=False, n_p=4, n_s=2, l_m="200 uH", l_out="10 uH",
                 c_out="1000 uF", c_in="100 uF", esr_out="5 mohm", esr_in="5 mohm"):
    """Parts for a bridge-family test design {id: sheet}."""
    e = LOSSLESS if lossless else {}
    return {
        "t-fet": part("mosfet", "si", {"v_ds": "200 V", "v_gs": "20 V", "i_d": "50 A", "i_dm": "200 A",
                                       "t_j_max": "175 degC"},
                      {"r_ds_on": e.get("r_ds_on", "10 mohm"), "r_ds_on_tc": "0.5 %/K"},
                      {"r_th_jc": "1 K/W"}),
        "t-diode": part("diode", "schottky", {"v_rrm": "150 V", "i_f_avg": "40 A",
                                              "t_j_max": "175 degC"},
                        {"v_f0": e.get("v_f0", "0.4 V"), "r_d": e.get("r_d", "10 mohm")},
                        {"r_th_jc": "1 K/W"}),
        "t-xfmr": part("transformer", "ferrite", {"b_sat": "300 mT", "t_max": "130 degC"},
                       {"primary_turns": n_p, "secondary_turns": n_s,
                        "magnetizing_inductance": l_m, "core_area": "80 mm^2",
                        "r_primary": e.get("r_primary", "10 mohm"),
                        "r_secondary": e.get("r_secondary", "3 mohm")},
                       {"r_th": "10 K/W"}),
        "t-ind": part("inductor", "powder", {"i_sat": "60 A", "i_rms": "40 A",
                                             "t_max": "155 degC"},
                      {"inductance": l_out, "dcr": e.get("dcr", "2 mohm")}, {"r_th": "10 K/W"}),
        "t-cout": part("capacitor", "al-polymer", {"v_rated": "63 V", "i_ripple": "10 A",
                                                   "t_max": "105 degC"},
                       {"capacitance": c_out, "esr": e.get("esr", esr_out)}, {"r_th": "20 K/W"}),
        "t-cin": part("capacitor", "ceramic-class2", {"v_rated": "200 V", "i_ripple": "20 A",
                                                      "t_max": "125 degC"},
                      {"capacitance": c_in, "esr": e.get("esr", esr_in)}, {"r_th": "20 K/W"}),
    }


def bridge_design(topology="full-bridge", rectifier="center-tap", *, vin=None, vo="12 V",
                  io=None, fs="100 kHz", surge=None, ilim=None, ambient=None, name=None):
    n_switch = 4 if topology == "full-bridge" else 2
    n_rect = 2 if rectifier == "center-tap" else 4
    doc = {
        "schema": "stresscheck.design/1",
        "converter": {"name": name or f"test {topology} {rectifier}", "topology": topology,
                      "rectifier": rectifier, "switching_frequency": fs},
        "operating": {"input_voltage": vin or {"min": "40 V", "nom": "48 V", "max": "60 V"},
                      "output_voltage": vo,
                      "output_current": io or {"min": "8 A", "max": "10 A"},
                      "ambient_temperature": ambient or {"min": "0 degC", "max": "50 degC"}},
        "components": [
            {"refs": [f"Q{i + 1}" for i in range(n_switch)], "role": "switch",
             "part": "t-fet", "r_th_ca": "5 K/W"},
            {"refs": [f"D{i + 1}" for i in range(n_rect)], "role": "rectifier",
             "part": "t-diode", "r_th_ca": "5 K/W"},
            {"ref": "T1", "role": "transformer", "part": "t-xfmr"},
            {"ref": "L1", "role": "inductor", "part": "t-ind"},
            {"refs": ["C1"], "role": "output-capacitor", "part": "t-cout"},
        ],
    }
    if topology == "half-bridge":
        doc["components"].append({"refs": ["C2", "C3"], "role": "split-capacitor",
                                  "part": "t-cin"})
    else:
        doc["components"].append({"refs": ["C2"], "role": "input-capacitor", "part": "t-cin"})
    if surge:
        doc["operating"]["input_surge"] = surge
    if ilim:
        doc["operating"]["current_limit"] = ilim
    return doc


def write_case(folder: Path, design: dict, parts: dict) -> Path:
    """Write design.toml and parts/<id>.toml under ``folder``; returns the design path."""
    folder = Path(folder)
    (folder / "parts").mkdir(parents=True, exist_ok=True)
    for pid, sheet in parts.items():
        sheet = dict(sheet, id=pid)
        (folder / "parts" / f"{pid}.toml").write_text(tomli_w.dumps(sheet), encoding="utf-8")
    path = folder / "design.toml"
    path.write_text(tomli_w.dumps(design), encoding="utf-8")
    return path
