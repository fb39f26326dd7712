"""One source of truth for names: kinds, technologies, topologies, roles, keys, quantities.

Every closed set is a tuple here; loaders reject anything else with the list of valid
names. Key tables give the dimension of every key (see ``units.DIMENSIONS``) and
whether a range or tolerance is allowed.
"""

from __future__ import annotations

from dataclasses import dataclass

from .topologies.registry import TOPOLOGIES as _MODELS

PART_SCHEMA = "stresscheck.part/1"
DESIGN_SCHEMA = "stresscheck.design/1"
POLICY_SCHEMA = "stresscheck.policy/1"
RESULTS_SCHEMA = "stresscheck.results/1"

KINDS = ("mosfet", "diode", "capacitor", "inductor", "transformer")

TECHNOLOGIES = {
    "mosfet": ("si", "sic", "gan"),
    "diode": ("general", "fast-recovery", "ultrafast", "schottky", "sic-schottky"),
    "capacitor": ("al-electrolytic", "al-polymer", "tantalum", "tantalum-polymer",
                  "ceramic-class1", "ceramic-class2", "film"),
    "inductor": ("powder", "ferrite", "other"),
    "transformer": ("ferrite", "other"),
}

# The topologies a design may name: exactly those the registry has a model for.
TOPOLOGIES = tuple(_MODELS)
# What feeds a converter ([operating] input): a DC voltage, or the utility (rms voltage
# at line_frequency). Each model lists the ones it takes (``INPUTS``; default "dc").
INPUTS = ("dc", "ac")
RECTIFIERS = ("center-tap", "full-bridge", "current-doubler")
MODULATIONS = ("pwm", "phase-shift")
# How a MOSFET's hard-switching transition times are found ([converter] overlap_method):
# the sheet's t_rise/t_fall, or from the gate charge and the gate-drive current.
OVERLAP_METHODS = ("times", "gate-charge")

ROLES = ("bridge-rectifier", "switch", "rectifier", "freewheel", "reset", "transformer",
         "inductor", "input-capacitor", "output-capacitor", "split-capacitor")

# Which part kinds may fill a role.
ROLE_KINDS = {
    "bridge-rectifier": ("diode",),
    "switch": ("mosfet",),
    "rectifier": ("diode", "mosfet"),
    "freewheel": ("diode", "mosfet"),
    "reset": ("diode",),
    "transformer": ("transformer",),
    "inductor": ("inductor",),
    "input-capacitor": ("capacitor",),
    "output-capacitor": ("capacitor",),
    "split-capacitor": ("capacitor",),
}


@dataclass(frozen=True)
class Key:
    dimension: str
    spread: bool = False  # a range or tolerance is allowed
    curve: str | None = None  # a table { "<x with unit>" = value } over this dimension


# Core and copper loss keys of inductors and transformers (magnetics_loss.py): Steinmetz
# k (W/m³ with f in Hz and B in T) or a loss density at a stated peak flux and
# frequency, the exponents, the effective core volume, and the temperature at which the
# sheet states its winding resistances (default 25 °C).
CORE_LOSS_KEYS = {"steinmetz_k": Key("count"), "steinmetz_alpha": Key("count"),
                  "steinmetz_beta": Key("count"), "core_volume": Key("volume"),
                  "core_loss_density": Key("power_density"),
                  "core_loss_flux": Key("flux_density"),
                  "core_loss_frequency": Key("frequency"),
                  "resistance_temperature": Key("temperature")}

# Part sheet keys: kind -> section -> key -> Key
PART_KEYS: dict[str, dict[str, dict[str, Key]]] = {
    "mosfet": {
        "ratings": {"v_ds": Key("voltage"), "v_gs": Key("voltage"), "i_d": Key("current"),
                    "i_dm": Key("current"), "t_j_max": Key("temperature"),
                    "p_d": Key("power"), "v_ds_tc": Key("per_kelvin"),
                    "i_d_temperature": Key("temperature"),
                    # avalanche energy, single pulse at 25 °C start, and its factor
                    # against the starting junction temperature (avalanche.py)
                    "e_as": Key("energy"),
                    "e_as_temperature_multipliers": Key("fraction", curve="temperature"),
                    # the SOA lines: a top-level [[soa]] array of the sheet (soa.py), never
                    # a [ratings] value; named here as the rating the SOA rule reads
                    "soa": Key("current")},
        "electrical": {"r_ds_on": Key("resistance"), "r_ds_on_tc": Key("per_kelvin"),
                       "r_ds_on_hot": Key("resistance"),
                       "r_ds_on_hot_temperature": Key("temperature"),
                       "q_g": Key("charge"), "c_oss": Key("capacitance"),
                       "t_rise": Key("time"), "t_fall": Key("time"),
                       "v_sd": Key("voltage"), "r_sd": Key("resistance"),
                       "e_oss": Key("energy"), "q_oss": Key("charge"),
                       "oss_voltage": Key("voltage"), "q_rr": Key("charge"),
                       "q_gd": Key("charge"), "q_gs": Key("charge"),
                       "q_gs2": Key("charge"), "v_plateau": Key("voltage"),
                       "r_g": Key("resistance")},
        "thermal": {"r_th_jc": Key("thermal_resistance")},
    },
    "diode": {
        "ratings": {"v_rrm": Key("voltage"), "i_f_avg": Key("current"),
                    "i_fsm": Key("current"), "t_j_max": Key("temperature"),
                    "v_rrm_tc": Key("per_kelvin"),
                    "i_f_avg_temperature": Key("temperature")},
        "electrical": {"v_f0": Key("voltage"), "r_d": Key("resistance"),
                       "q_rr": Key("charge"), "c_j": Key("capacitance")},
        "thermal": {"r_th_jc": Key("thermal_resistance")},
    },
    "capacitor": {
        "ratings": {"v_rated": Key("voltage"), "i_ripple": Key("current"),
                    "ripple_frequency": Key("frequency"),
                    "ripple_temperature": Key("temperature"), "t_max": Key("temperature"),
                    "life": Key("time"),
                    "ripple_frequency_multipliers": Key("fraction", curve="frequency"),
                    "ripple_temperature_multipliers": Key("fraction", curve="temperature")},
        "electrical": {"capacitance": Key("capacitance", spread=True),
                       "esr": Key("resistance"),
                       "capacitance_dc_bias": Key("fraction", curve="voltage")},
        "thermal": {"r_th": Key("thermal_resistance")},
    },
    "inductor": {
        "ratings": {"i_sat": Key("current"), "i_rms": Key("current"),
                    "t_max": Key("temperature"), "i_sat_hot": Key("current"),
                    "i_sat_hot_temperature": Key("temperature")},
        "electrical": {"inductance": Key("inductance", spread=True),
                       "inductance_vs_current": Key("fraction", curve="current"),
                       "dcr": Key("resistance"), "turns": Key("count"),
                       "core_area": Key("area"), **CORE_LOSS_KEYS},
        "thermal": {"r_th": Key("thermal_resistance")},
    },
    "transformer": {
        "ratings": {"b_sat": Key("flux_density"), "t_max": Key("temperature"),
                    "b_sat_hot": Key("flux_density"),
                    "b_sat_hot_temperature": Key("temperature")},
        "electrical": {"primary_turns": Key("count"), "secondary_turns": Key("count"),
                       "reset_turns": Key("count"),
                       "magnetizing_inductance": Key("inductance", spread=True),
                       "leakage_inductance": Key("inductance"),
                       "core_area": Key("area", spread=True),
                       "r_primary": Key("resistance"), "r_secondary": Key("resistance"),
                       "r_reset": Key("resistance"), **CORE_LOSS_KEYS},
        "thermal": {"r_th": Key("thermal_resistance")},
    },
}

# Electrical keys that must be positive (zero or negative is physically meaningless).
POSITIVE_KEYS = {"r_ds_on", "r_ds_on_hot", "capacitance", "inductance", "primary_turns",
                 "secondary_turns", "reset_turns", "magnetizing_inductance", "core_area",
                 "v_ds", "v_gs", "i_d", "i_dm", "v_rrm", "i_f_avg", "i_fsm", "v_rated",
                 "i_ripple", "ripple_frequency", "i_sat", "i_rms", "b_sat", "life", "p_d",
                 "r_th_jc", "r_th", "e_oss", "q_oss", "oss_voltage", "steinmetz_k",
                 "steinmetz_alpha", "steinmetz_beta", "core_volume", "core_loss_density",
                 "core_loss_flux", "core_loss_frequency", "turns", "b_sat_hot",
                 "e_as"}


@dataclass(frozen=True)
class Quantity:
    unit: str
    family: str  # "voltage": evaluated at every corner, surge included; else steady only
    description: str


QUANTITIES: dict[str, Quantity] = {
    "v_peak": Quantity("V", "voltage", "peak blocking (drain-source or terminal) voltage"),
    "v_reverse_peak": Quantity("V", "voltage", "peak reverse voltage"),
    "i_peak": Quantity("A", "current", "largest magnitude of the device current"),
    "i_rms": Quantity("A", "current", "rms of the whole device current"),
    "i_avg": Quantity("A", "current", "mean forward current"),
    "i_ripple_rms": Quantity("A", "current", "rms current through the capacitor"),
    "p_loss": Quantity("W", "thermal", "power dissipated in the device"),
    "t_j": Quantity("degC", "thermal", "junction temperature"),
    "t_hotspot": Quantity("degC", "thermal", "hot-spot temperature"),
    "b_peak": Quantity("T", "voltage", "peak flux density in the core"),
    "life": Quantity("s", "thermal", "expected life at the hot-spot temperature"),
    "t_rise": Quantity("K", "thermal", "self-heating of a ceramic capacitor: its ESR "
                       "loss times its thermal resistance"),
    "i_ripple_rms_lf": Quantity("A", "current", "line-frequency part of the capacitor's "
                                "rms current (local averages over the line cycle)"),
    "i_ripple_rms_hf": Quantity("A", "current", "switching-frequency part of the "
                                "capacitor's rms current"),
    "v_gs_peak": Quantity("V", "voltage", "peak gate-source voltage (drive, off-bias and "
                          "gate overshoot)"),
    "e_avalanche": Quantity("J", "voltage", "avalanche energy per turn-off where the peak "
                            "drain voltage reaches breakdown"),
    "p_avalanche": Quantity("W", "thermal", "avalanche power: energy per turn-off times "
                            "the switching frequency"),
    "i_transition": Quantity("A", "current", "drain current of a hard switching "
                             "transition, against the SOA at the drain voltage then"),
    "hold_up": Quantity("1", "hold-up", "bulk capacitance the hold-up time needs, as a "
                        "share of the capacitance at the lowest tolerance"),
}

# Quantities per part kind, in report order.
KIND_QUANTITIES = {
    "mosfet": ("v_peak", "i_peak", "i_rms", "i_avg", "p_loss", "t_j", "v_gs_peak",
               "e_avalanche", "p_avalanche", "i_transition"),
    "diode": ("v_reverse_peak", "i_avg", "i_rms", "i_peak", "p_loss", "t_j"),
    "capacitor": ("v_peak", "i_ripple_rms", "i_ripple_rms_lf", "i_ripple_rms_hf", "hold_up",
                  "t_hotspot", "t_rise", "life"),
    "inductor": ("i_peak", "i_rms", "t_hotspot"),
    "transformer": ("b_peak", "t_hotspot"),
}

STRESS_KINDS = ("steady", "overload", "transient")
STATUSES = ("fail", "not-computed", "unrated", "marginal", "pass", "info", "waived")

# Capacitor technologies for which a life figure is computed (wear-out by electrolyte).
LIFE_TECHNOLOGIES = ("al-electrolytic", "al-polymer")
# Capacitor technologies whose self-heating ``t_rise`` is computed (makers limit it to
# about 20 K: common practice, TDK FAQ S18 in docs/derating-sources.md section 11).
CERAMIC_TECHNOLOGIES = ("ceramic-class1", "ceramic-class2")
# Quantities that exist only for some technologies of their kind.
QUANTITY_TECHNOLOGIES = {("capacitor", "life"): LIFE_TECHNOLOGIES,
                         ("capacitor", "t_rise"): CERAMIC_TECHNOLOGIES}
# Quantities where more is better (a life): a rule gives a minimum, the ratio is
# minimum / stress and the worst corner is the one with the lowest value.
MORE_IS_BETTER = ("life",)
# Years beyond which an electrolytic life estimate is not credible: seal wear and
# electrolyte loss through the seal end the life whatever the temperature, so makers cap
# their estimates at about 15 years (common practice, from memory). A computed life
# above is reported as this cap with ``capped = true`` ("> 15 years").
LIFE_CAP_YEARS = 15
YEAR = 365.25 * 24 * 3600.0  # [s] a Julian year
LIFE_CAP = LIFE_CAP_YEARS * YEAR  # [s]
# Design keys a ``minimum`` rule may name instead of a fixed value, per quantity.
DESIGN_MINIMUMS = {"life": "required_life"}


@dataclass(frozen=True)
class Bound:
    """Plausible range of one design key [SI units of the key, degC for temperatures];
    ``None`` leaves that side to the key's own sign rule and the generic magnitude
    limits of ``units``."""

    low: float | None
    high: float | None
    unit: str
    why: str


# Checked when the key is read, before any model runs: an absurd value ("1 THz",
# "1e3 kV") is refused naming its own key and the bound, rather than surfacing later as a
# model failure blamed on another key. Common practice (the span of switch-mode power
# conversion, generous on both sides); the figures in ``why`` are from memory.
DESIGN_BOUNDS: dict[str, Bound] = {
    "converter.switching_frequency": Bound(
        100.0, 1e9, "Hz", "switch-mode converters switch from some hundred hertz (large "
        "IGBT stages) to some hundred megahertz (integrated and VHF converters)"),
    "operating.input_voltage": Bound(None, 100e3, "V", "beyond any switch-mode "
                                     "converter input; check the unit prefix"),
    "operating.input_surge": Bound(None, 100e3, "V", "beyond any line transient a "
                                   "converter is built to ride through; check the unit "
                                   "prefix"),
    "operating.output_voltage": Bound(None, 100e3, "V", "beyond any switch-mode "
                                      "converter output; check the unit prefix"),
    "operating.output_current": Bound(None, 100e3, "A", "beyond any switch-mode "
                                      "converter output; check the unit prefix"),
    "operating.current_limit": Bound(None, 100e3, "A", "beyond any switch-mode "
                                     "converter output; check the unit prefix"),
    "operating.ambient_temperature": Bound(None, 300.0, "degC", "hotter than any "
                                           "electronics assembly runs (high-temperature "
                                           "down-hole electronics work up to about "
                                           "250 degC)"),
    "operating.line_frequency": Bound(10.0, 2000.0, "Hz", "utility lines run at 50 or "
                                      "60 Hz, aircraft at 400 Hz or 360-800 Hz; check the "
                                      "unit prefix"),
    "operating.required_life": Bound(3600.0, 100 * 365.25 * 24 * 3600.0, "s", "a service "
                                     "life between an hour and a century; check the "
                                     "unit (\"50000 h\", \"10 years\")"),
    "operating.hold_up_time": Bound(None, 10.0, "s", "bulk capacitors hold a bus up for "
                                    "milliseconds; check the unit prefix"),
}
