"""Test helpers for the buck and boost converters: part sets and design files.

Test fixtures, not a parts library: values chosen to make a relation easy to check.
"""

from __future__ import annotations

from builders import part, write_case
from stresscheck.design import load_design
from stresscheck.engine import run

LOSSLESS = {"r_ds_on": "1e-9 ohm", "v_sd": "0 V", "r_sd": "0 ohm", "v_f0": "0 V",
            "r_d": "0 ohm", "dcr": "0 ohm", "esr": "0 ohm"}


def cell_parts(*, lossless=False, l="10 uH", l_tol=None, c_out="200 uF", c_in="20 uF",
               esr_out="5 mohm", esr_in="3 mohm", v_sd="0.9 V", r_on="10 mohm"):
    """Parts for a buck or boost test design {id: sheet}."""
    e = LOSSLESS if lossless else {}
    inductance = l if l_tol is None else {"nom": l, "tolerance": l_tol}
    return {
        "t-fet": part("mosfet", "si", {"v_ds": "100 V", "v_gs": "20 V", "i_d": "60 A", "i_dm": "240 A",
                                       "t_j_max": "175 degC"},
                      {"r_ds_on": e.get("r_ds_on", r_on), "r_ds_on_tc": "0.5 %/K",
                       "v_sd": e.get("v_sd", v_sd), "r_sd": e.get("r_sd", "10 mohm")},
                      {"r_th_jc": "1 K/W"}),
        "t-diode": part("diode", "schottky", {"v_rrm": "100 V", "i_f_avg": "20 A",
                                              "t_j_max": "175 degC"},
                        {"v_f0": e.get("v_f0", "0.45 V"), "r_d": e.get("r_d", "15 mohm")},
                        {"r_th_jc": "1.5 K/W"}),
        "t-ind": part("inductor", "powder", {"i_sat": "30 A", "i_rms": "20 A",
                                             "t_max": "155 degC"},
                      {"inductance": inductance, "dcr": e.get("dcr", "8 mohm")},
                      {"r_th": "20 K/W"}),
        "t-cout": part("capacitor", "al-polymer", {"v_rated": "100 V", "i_ripple": "10 A",
                                                   "t_max": "105 degC", "life": "5000 h"},
                       {"capacitance": c_out, "esr": e.get("esr", esr_out)},
                       {"r_th": "20 K/W"}),
        "t-cin": part("capacitor", "ceramic-class2", {"v_rated": "100 V",
                                                      "i_ripple": "20 A",
                                                      "t_max": "125 degC"},
                      {"capacitance": c_in, "esr": e.get("esr", esr_in)}, {"r_th": "50 K/W"}),
    }


def cell_design(topology="buck", *, sync=False, vin=None, vo=None, io=None, fs="200 kHz",
                dead_time=None, surge=None, ilim=None, ambient=None, max_duty=None,
                name=None):
    """A buck or boost test design; ``sync`` puts a MOSFET in the freewheel/rectifier."""
    if vin is None:
        vin = {"min": "20 V", "nom": "24 V", "max": "30 V"} if topology == "buck" else \
            {"min": "12 V", "nom": "18 V", "max": "24 V"}
    if vo is None:
        vo = "12 V" if topology == "buck" else "48 V"
    io = io or ({"min": "1 A", "max": "5 A"} if topology == "buck" else
                {"min": "0.5 A", "max": "2 A"})
    p_role = "freewheel" if topology == "buck" else "rectifier"
    conv = {"name": name or f"test {topology}{' sync' if sync else ''}",
            "topology": topology, "switching_frequency": fs}
    if dead_time is not None:
        conv["dead_time"] = dead_time
    if max_duty is not None:
        conv["max_duty"] = max_duty
    doc = {
        "schema": "stresscheck.design/1",
        "converter": conv,
        "operating": {"input_voltage": vin, "output_voltage": vo, "output_current": io,
                      "ambient_temperature": ambient or {"min": "0 degC", "max": "50 degC"}},
        "components": [
            {"ref": "Q1", "role": "switch", "part": "t-fet", "r_th_ca": "10 K/W"},
            {"ref": "Q2" if sync else "D1", "role": p_role,
             "part": "t-fet" if sync else "t-diode", "r_th_ca": "10 K/W"},
            {"ref": "L1", "role": "inductor", "part": "t-ind"},
            {"refs": ["C1"], "role": "input-capacitor", "part": "t-cin"},
            {"refs": ["C2"], "role": "output-capacitor", "part": "t-cout"},
        ],
    }
    if surge:
        doc["operating"]["input_surge"] = surge
    if ilim:
        doc["operating"]["current_limit"] = ilim
    return doc


# --- shared cases of the buck and boost test modules ---------------------------------------

REL = 1e-6
BUCK_LOADS = {"min": "0.2 A", "max": "5 A"}  # the light load enters DCM (diode)
BOOST_LOADS = {"min": "0.05 A", "max": "2 A"}


def evaluate(tmp_path, topology, *, sync=False, lossless=True, parts=None, **design):
    design.setdefault("io", BUCK_LOADS if topology == "buck" else BOOST_LOADS)
    parts = parts or cell_parts(lossless=lossless, c_in="1 F", c_out="1 F")
    path = write_case(tmp_path, cell_design(topology, sync=sync, **design), parts)
    return run(load_design(path))


def values(ev, ref, quantity):
    (s,) = [s for s in ev.stresses if s.ref == ref and s.quantity == quantity]
    return s.values


def columns(ev):
    c = ev.corners
    return (c["input_voltage"], c["output_voltage"], c["output_current"],
            c["switching_frequency"], ev.stage.inductors[0].l)


def k_factor(ev):
    """K = 2L/(R·Ts) of every corner (E&M §5.1)."""
    vin, vo, io, fs, l = columns(ev)
    return 2 * l * fs * io / vo



V_BODY = 0.85 * 1.0  # [V] body-diode v_f0 of the dead-time tests (engine: 0.85·v_sd)
T_DEAD = 100e-9  # [s]


def dead_time_parts(**kw):
    """Lossless, except for the body diodes: v_sd = 1 V, r_sd = 0."""
    parts = cell_parts(lossless=True, c_in="1 F", c_out="1 F", **kw)
    parts["t-fet"]["electrical"].update(v_sd="1 V", r_sd="0 ohm")
    return parts



def write(tmp_path, topology, **design):
    return write_case(tmp_path, cell_design(topology, **design), cell_parts())
