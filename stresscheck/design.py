"""Design files: the converter, its operating envelope and its bill of materials.

``load_design`` reads and validates a design file (CONTRACT.md, "Design file") and
resolves every component's part through the parts libraries.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from pathlib import Path

from . import schema
from .errors import InputError
from .parts import Part, PartLibrary, shipped_library
from .review import load_review
from .measured import load_measured
from .spikes import Clamp, check_spike_options, load_clamp, load_overshoot
from .tomlio import (check_keys, optional_text, read_toml, require_str, require_table,
                     shorten, type_name)
from .topologies import check_envelope, layout_for
from .units import Spread, parse_quantity, parse_spread
from .waivers import read_waivers


@dataclass
class Component:
    """One [[components]] entry: one or more refs sharing a part and a role."""

    refs: list[str]
    role: str
    part: Part
    parallel: int = 1
    r_th_ca: float | None = None  # [K/W] case (or hot spot) to ambient, per device
    r_th_ja: float | None = None  # [K/W] junction to ambient, per device
    key: str = ""  # "components[3]" for messages
    heatsink: str | None = None  # id of a [[heatsinks]] entry the devices are mounted on
    r_th_cs: float | None = None  # [K/W] case to sink, per device (with heatsink)


@dataclass
class Design:
    path: Path
    name: str
    topology: str
    rectifier: str | None
    modulation: str
    switching_frequency: Spread  # [Hz] of each switch
    dead_time: float  # [s]
    max_duty: float | None  # controller limit on each switch's duty ratio, if given
    input_voltage: Spread  # [V]
    input_surge: float | None  # [V]
    output_voltage: Spread  # [V]
    output_current: Spread  # [A]; min may be 0 (no load)
    current_limit: float | None  # [A]
    ambient_temperature: Spread  # [degC]
    components: list[Component] = field(default_factory=list)
    # what feeds the converter: "dc" (input_voltage is a DC voltage) or "ac" (the
    # utility: input_voltage is an rms line voltage at line_frequency). A later stage fed
    # from another stage's bus would add a third value here.
    input: str = "dc"
    line_frequency: Spread | None = None  # [Hz], input = "ac" only
    hold_up_time: float | None = None  # [s]
    hold_up_voltage: float | None = None  # [V] lowest bus voltage the load accepts
    waivers: list = field(default_factory=list)  # waivers.Waiver, see waivers.py
    review: dict = field(default_factory=dict)  # [review] sign-off block (review.py)
    clamp: Clamp | None = None  # [converter] clamp: RCD or voltage clamp of the switches
    overshoot: dict[str, float] = field(default_factory=dict)  # "switch"/"rectifier" -> [1]
    measured: list = field(default_factory=list)  # [[measured]] (measured.Measurement)
    # [operating] minimum_load: a bleeder across the output, ("resistance", R [ohm]) or
    # ("current", I [A]); None when not given. Drawn at every corner on top of
    # output_current (see minimum_load_current).
    minimum_load: tuple[str, float] | None = None

    def minimum_load_current(self, v_out):
        """Current the minimum load draws at output voltage ``v_out`` [V] -> [A]."""
        if self.minimum_load is None:
            return 0.0 * v_out
        kind, value = self.minimum_load
        return v_out / value if kind == "resistance" else 0.0 * v_out + value
    heatsinks: dict[str, float] = field(default_factory=dict)  # id -> sink to ambient [K/W]
    # [operating] required_life: the service life the capacitors must reach [s]; None
    # when not given (a policy rule ``minimum = "required_life"`` then leaves life info)
    required_life: float | None = None
    gate_voltage: float | None = None  # [V] gate drive; None: per technology default
    # overlap transition times: "times" (sheet t_rise/t_fall) or "gate-charge"
    overlap_method: str = "times"
    gate_resistance: float | None = None  # [ohm] driver output + external gate resistor
    gate_off_voltage: float | None = None  # [V] off-state gate bias (negative), if any
    gate_overshoot: float = 0.0  # [1] gate ringing above the drive, share of the drive

    def by_role(self, role: str) -> list[Component]:
        return [c for c in self.components if c.role == role]

    def positions(self, role: str) -> list[tuple[str, Component]]:
        """(ref, component) for every ref of ``role`` in file order."""
        return [(ref, c) for c in self.by_role(role) for ref in c.refs]


CONVERTER_KEYS = ("name", "topology", "rectifier", "modulation", "switching_frequency",
                  "dead_time", "max_duty", "clamp", "overshoot", "gate_voltage",
                  "overlap_method", "gate_resistance",
                  "gate_off_voltage", "gate_overshoot")
OPERATING_KEYS = ("input", "input_voltage", "input_surge", "output_voltage", "output_current",
                  "current_limit", "ambient_temperature", "line_frequency", "hold_up_time",
                  "hold_up_voltage", "minimum_load", "required_life")
COMPONENT_KEYS = ("ref", "refs", "role", "part", "r_th_ca", "r_th_ja", "parallel", "note",
                  "heatsink", "r_th_cs")
HEATSINK_KEYS = ("id", "r_th", "note")
MAX_NAME = 200  # converter.name: one line in report headers and on the terminal
# A designator: up to 40 printable characters, no blanks, control or format characters
# (no bidirectional overrides or zero-width marks): "Q1", "C10A", "T1.2".
DESIGNATOR = re.compile(r"[^\s\x00-\x1f\x7f-\x9f]{1,40}")
MAX_PARALLEL = 1000


def part_folders(design_path: Path, extra_dirs) -> list[Path]:
    """Search order: --parts folders, parts/ beside the design, the shipped library."""
    folders = [Path(d) for d in extra_dirs or ()]
    beside = design_path.parent / "parts"
    if beside.is_dir():
        folders.append(beside)
    folders.append(shipped_library())
    return folders


def load_design(path: str | Path, parts_dirs=()) -> Design:
    path = Path(path)
    for folder in parts_dirs or ():
        folder = Path(folder)
        if not folder.exists():
            raise InputError(folder, None, "--parts folder does not exist")
        if not folder.is_dir():
            raise InputError(folder, None, "--parts expects a folder of part sheets, but "
                             "this is a file")
    doc = read_toml(path, "design file")
    check_keys(doc, ("schema", "converter", "operating", "components", "bom", "waivers",
                     "review", "measured", "heatsinks"), path)
    version = require_str(doc, "schema", path)
    if version != schema.DESIGN_SCHEMA:
        raise InputError(path, "schema", f"unknown schema version {shorten(version)}; "
                         f"expected '{schema.DESIGN_SCHEMA}'")
    conv = require_table(doc, "converter", path)
    check_keys(conv, CONVERTER_KEYS, path, "converter.")
    op = require_table(doc, "operating", path)
    check_keys(op, OPERATING_KEYS, path, "operating.")

    topology = require_str(conv, "topology", path, "converter.", choices=schema.TOPOLOGIES)
    rectifier = require_str(conv, "rectifier", path, "converter.", optional=True,
                            choices=schema.RECTIFIERS)
    modulation = require_str(conv, "modulation", path, "converter.", optional=True,
                             choices=schema.MODULATIONS) or "pwm"

    def spread(table, key, dim, prefix, *, required=True, positive=True):
        if key not in table:
            if required:
                raise InputError(path, f"{prefix}{key}", "missing key")
            return None
        value = parse_spread(table[key], dim, path, f"{prefix}{key}")
        if positive and value.min <= 0:
            raise InputError(path, f"{prefix}{key}", "must be greater than zero")
        check_bound(path, f"{prefix}{key}", value.min, value.max)
        return value

    def scalar(table, key, dim, prefix, *, positive=True):
        if key not in table:
            return None
        value = parse_quantity(table[key], dim, path, f"{prefix}{key}")
        if positive and value <= 0:
            raise InputError(path, f"{prefix}{key}", "must be greater than zero")
        check_bound(path, f"{prefix}{key}", value, value)
        return value

    fsw = spread(conv, "switching_frequency", "frequency", "converter.")
    dead_time = scalar(conv, "dead_time", "time", "converter.", positive=False) or 0.0
    if dead_time < 0:
        raise InputError(path, "converter.dead_time", "must not be negative")
    max_duty = scalar(conv, "max_duty", "fraction", "converter.")
    if max_duty is not None and max_duty >= 1:
        raise InputError(path, "converter.max_duty", "must be below 100 %")

    vin = spread(op, "input_voltage", "voltage", "operating.")
    vo = spread(op, "output_voltage", "voltage", "operating.")
    io = spread(op, "output_current", "current", "operating.", positive=False)
    if io.min < 0:
        raise InputError(path, "operating.output_current", "must be 0 A (no load) or greater "
                         "than zero")
    if io.max <= 0:
        raise InputError(path, "operating.output_current", "the maximum must be greater "
                         "than zero")
    minimum_load = _minimum_load(op, path)
    ta = spread(op, "ambient_temperature", "temperature", "operating.", positive=False)
    surge = scalar(op, "input_surge", "voltage", "operating.")
    if surge is not None and surge < vin.max:
        raise InputError(path, "operating.input_surge", f"surge ({surge:g} V) is below the "
                         f"maximum input voltage ({vin.max:g} V)")
    ilim = scalar(op, "current_limit", "current", "operating.")
    if ilim is not None and ilim < io.max:
        raise InputError(path, "operating.current_limit", f"current limit ({ilim:g} A) is "
                         f"below the maximum output current ({io.max:g} A)")
    if dead_time * fsw.max >= 0.5:
        raise InputError(path, "converter.dead_time", f"a dead time of {dead_time:g} s "
                         f"leaves no on-time at the highest switching frequency "
                         f"({fsw.max:g} Hz, converter.switching_frequency: half a period "
                         f"is {0.5 / fsw.max:g} s)")

    name = optional_text(conv, "name", path, "converter.", max_length=MAX_NAME,
                         single_line=True)
    if name is None:
        name = path.stem
    elif not name.strip():
        raise InputError(path, "converter.name", "must not be empty (leave the key out to "
                         "use the file name)")

    design = Design(path, name, topology, rectifier, modulation, fsw, dead_time, max_duty,
                    vin, surge, vo, io, ilim, ta, minimum_load=minimum_load)
    _load_line(design, op, spread, scalar)
    design.clamp = load_clamp(conv, path)
    design.overshoot = load_overshoot(conv, path)
    design.gate_voltage = scalar(conv, "gate_voltage", "voltage", "converter.")
    _load_gate_drive(design, conv, scalar)
    design.required_life = scalar(op, "required_life", "time", "operating.")
    design.gate_off_voltage = scalar(conv, "gate_off_voltage", "voltage", "converter.",
                                     positive=False)
    if design.gate_off_voltage is not None and design.gate_off_voltage > 0:
        raise InputError(path, "converter.gate_off_voltage", "the off-state gate bias is "
                         "zero or negative (e.g. \"-4 V\")")
    design.gate_overshoot = scalar(conv, "gate_overshoot", "fraction", "converter.",
                                   positive=False) or 0.0
    if not 0.0 <= design.gate_overshoot <= 1.0:
        raise InputError(path, "converter.gate_overshoot", "must be between 0 and 100 % of "
                         "the gate drive")
    library = PartLibrary(part_folders(path, parts_dirs))
    design.heatsinks = _load_heatsinks(doc, path)
    design.components = _load_components(doc, path, library)
    design.waivers = read_waivers(doc, path, design.components)
    design.review = load_review(doc, path)
    design.measured = load_measured(doc, path, design.components)
    _check_mounting(design, doc)
    check_envelope(design)  # what the topology cannot produce, before its options
    layout = layout_for(design)  # raises on unsupported combinations
    layout.validate(design)
    check_spike_options(design)
    return design


def _load_gate_drive(design, conv, scalar) -> None:
    """``overlap_method`` (one of ``schema.OVERLAP_METHODS``, default "times") and
    ``gate_resistance``, which the gate-charge method needs."""
    design.overlap_method = require_str(conv, "overlap_method", design.path, "converter.",
                                        optional=True,
                                        choices=schema.OVERLAP_METHODS) or "times"
    design.gate_resistance = scalar(conv, "gate_resistance", "resistance", "converter.")
    if design.overlap_method == "gate-charge" and design.gate_resistance is None:
        raise InputError(design.path, "converter.gate_resistance", "overlap_method = "
                         "\"gate-charge\" needs the gate-drive resistance outside the part "
                         "(driver output plus external gate resistor)")


def check_bound(path, key: str, low: float, high: float) -> None:
    """Refuse a value of ``key`` outside its plausible range (``schema.DESIGN_BOUNDS``),
    naming the key and the bound; ``low``/``high`` are the value's extremes [SI]."""
    bound = schema.DESIGN_BOUNDS.get(key)
    if bound is None:
        return
    if bound.high is not None and high > bound.high:
        raise InputError(path, key, f"{high:g} {bound.unit} is above the plausible "
                         f"bound of {bound.high:g} {bound.unit} for this key ({bound.why})")
    if bound.low is not None and low < bound.low:
        raise InputError(path, key, f"{low:g} {bound.unit} is below the plausible bound "
                         f"of {bound.low:g} {bound.unit} for this key ({bound.why})")


def _load_line(design, op, spread, scalar) -> None:
    """``input``, ``line_frequency`` and the hold-up keys of [operating] (CONTRACT.md,
    "Extensions in this version")."""
    path = design.path
    design.input = require_str(op, "input", path, "operating.", optional=True,
                               choices=schema.INPUTS) or "dc"
    ac = design.input == "ac"
    if "line_frequency" in op and not ac:
        raise InputError(path, "operating.line_frequency", "a line frequency applies to "
                         "input = \"ac\" only")
    design.line_frequency = spread(op, "line_frequency", "frequency", "operating.",
                                   required=ac)
    design.hold_up_time = scalar(op, "hold_up_time", "time", "operating.")
    design.hold_up_voltage = scalar(op, "hold_up_voltage", "voltage", "operating.")
    if (design.hold_up_time is None) != (design.hold_up_voltage is None):
        missing = "hold_up_voltage" if design.hold_up_voltage is None else "hold_up_time"
        raise InputError(path, f"operating.{missing}", "hold_up_time and hold_up_voltage "
                         "go together: give both or neither")
    if design.hold_up_voltage is not None \
            and design.hold_up_voltage >= design.output_voltage.min:
        raise InputError(path, "operating.hold_up_voltage", f"must lie below the lowest "
                         f"output voltage ({design.output_voltage.min:g} V)")


def _minimum_load(op, path):
    """``[operating] minimum_load``: a resistance (bleeder across the output) or a
    current (a load always drawn), > 0; None when absent."""
    if "minimum_load" not in op:
        return None
    key = "operating.minimum_load"
    value = op["minimum_load"]
    for kind in ("resistance", "current"):
        try:
            number = parse_quantity(value, kind, path, key)
        except InputError:
            continue
        if number <= 0:
            raise InputError(path, key, "must be greater than zero")
        return (kind, number)
    raise InputError(path, key, f"expected a resistance such as \"2.2 kohm\" (a bleeder "
                     f"across the output) or a current such as \"50 mA\", got {shorten(value)}")


def _load_components(doc, path, library) -> list[Component]:
    entries = doc.get("components")
    if entries is None:
        raise InputError(path, "components", "no [[components]] given")
    if not isinstance(entries, list) or not all(isinstance(e, dict) for e in entries):
        raise InputError(path, "components", "must be an array of tables [[components]]")
    if not entries:
        raise InputError(path, "components", "no [[components]] given")
    components: list[Component] = []
    seen_refs: dict[str, str] = {}
    for i, entry in enumerate(entries):
        key = f"components[{i}]"
        check_keys(entry, COMPONENT_KEYS, path, f"{key}.")
        if ("ref" in entry) == ("refs" in entry):
            raise InputError(path, f"{key}.refs", "give either ref = \"Q1\" or refs = [...]")
        rkey = f"{key}.ref" if "ref" in entry else f"{key}.refs"
        refs = [entry["ref"]] if "ref" in entry else entry["refs"]
        if "ref" in entry and not isinstance(entry["ref"], str):
            raise InputError(path, rkey, f"expected a designator string such as \"Q1\", "
                             f"got {type_name(entry['ref'])}")
        if not isinstance(refs, list) or not refs or not all(isinstance(r, str) for r in refs):
            raise InputError(path, rkey, "expected a non-empty list of designators such as "
                             "[\"Q1\", \"Q2\"]")
        for ref in refs:
            if not DESIGNATOR.fullmatch(ref) or not ref.isprintable():
                raise InputError(path, rkey, f"invalid designator {shorten(ref)}: 1 to 40 "
                                 "characters, no blanks or control characters")
            if ref in seen_refs:
                where = ("listed twice in this entry" if seen_refs[ref] == key
                         else f"also in {seen_refs[ref]}")
                raise InputError(path, rkey, f"duplicate designator '{ref}' ({where})")
            seen_refs[ref] = key
        role = require_str(entry, "role", path, f"{key}.", choices=schema.ROLES)
        part_id = entry.get("part")
        if part_id is None:
            raise InputError(path, f"{key}.part", "missing key")
        part = library.get(part_id, path, f"{key}.part")
        if part.kind not in schema.ROLE_KINDS[role]:
            raise InputError(path, f"{key}.part", f"part '{part.id}' is a {part.kind}; role "
                             f"'{role}' takes " + " or ".join(schema.ROLE_KINDS[role]))
        optional_text(entry, "note", path, f"{key}.")
        parallel = entry.get("parallel", 1)
        if (isinstance(parallel, bool) or not isinstance(parallel, int)
                or not 1 <= parallel <= MAX_PARALLEL):
            raise InputError(path, f"{key}.parallel", f"expected a whole number from 1 to "
                             f"{MAX_PARALLEL}, got {shorten(parallel)}")
        comp = Component(refs=list(refs), role=role, part=part, parallel=parallel, key=key)
        for tkey in ("r_th_ca", "r_th_ja"):
            if tkey in entry:
                value = parse_quantity(entry[tkey], "thermal_resistance", path, f"{key}.{tkey}")
                if value <= 0:
                    raise InputError(path, f"{key}.{tkey}", "must be greater than zero")
                setattr(comp, tkey, value)
        if comp.r_th_ca is not None and comp.r_th_ja is not None:
            raise InputError(path, f"{key}.r_th_ja", "give r_th_ca or r_th_ja, not both")
        components.append(comp)
    return components


def _load_heatsinks(doc, path) -> dict[str, float]:
    """``[[heatsinks]]``: id -> sink-to-ambient thermal resistance [K/W]."""
    entries = doc.get("heatsinks", [])
    if not isinstance(entries, list) or not all(isinstance(e, dict) for e in entries):
        raise InputError(path, "heatsinks", "must be an array of tables [[heatsinks]]")
    sinks: dict[str, float] = {}
    for i, entry in enumerate(entries):
        key = f"heatsinks[{i}]"
        check_keys(entry, HEATSINK_KEYS, path, f"{key}.")
        sid = require_str(entry, "id", path, f"{key}.")
        if not DESIGNATOR.fullmatch(sid):
            raise InputError(path, f"{key}.id", f"invalid heatsink id {shorten(sid)}: 1 to "
                             "40 characters, no blanks or control characters")
        if sid in sinks:
            raise InputError(path, f"{key}.id", f"duplicate heatsink id '{sid}'")
        if "r_th" not in entry:
            raise InputError(path, f"{key}.r_th", "missing key (sink to ambient, e.g. "
                             "\"1.5 K/W\")")
        r_th = parse_quantity(entry["r_th"], "thermal_resistance", path, f"{key}.r_th")
        if r_th <= 0:
            raise InputError(path, f"{key}.r_th", "must be greater than zero")
        optional_text(entry, "note", path, f"{key}.")
        sinks[sid] = r_th
    return sinks


def _check_mounting(design: Design, doc) -> None:
    """``heatsink`` + ``r_th_cs`` on a component: a semiconductor on a declared sink,
    instead of r_th_ca / r_th_ja."""
    path = design.path
    for comp, entry in zip(design.components, doc["components"]):
        key = comp.key
        sid = entry.get("heatsink")
        if sid is None:
            if "r_th_cs" in entry:
                raise InputError(path, f"{key}.r_th_cs", "r_th_cs (case to sink) needs "
                                 "heatsink = \"<id>\" on the same component")
            continue
        if not isinstance(sid, str) or sid not in design.heatsinks:
            known = ", ".join(design.heatsinks) or "none declared"
            raise InputError(path, f"{key}.heatsink", f"unknown heatsink {shorten(sid)}; "
                             f"[[heatsinks]] ids: {known}")
        if comp.part.kind not in ("mosfet", "diode"):
            raise InputError(path, f"{key}.heatsink", "only MOSFETs and diodes (junction, "
                             "case, sink) are mounted on a heatsink in this version")
        for other in ("r_th_ca", "r_th_ja"):
            if other in entry:
                raise InputError(path, f"{key}.{other}", f"give heatsink with r_th_cs, or "
                                 f"{other}, not both")
        if "r_th_cs" not in entry:
            raise InputError(path, f"{key}.r_th_cs", "missing key: case to sink thermal "
                             "resistance per device (e.g. \"0.5 K/W\") for a component "
                             "on a heatsink")
        value = parse_quantity(entry["r_th_cs"], "thermal_resistance", path, f"{key}.r_th_cs")
        if value < 0:
            raise InputError(path, f"{key}.r_th_cs", "must not be negative")
        comp.heatsink, comp.r_th_cs = sid, value
