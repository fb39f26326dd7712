"""Property-based tests: generated broken designs, part sheets and policies always end in
exit status 2 with a one-line message that names the broken file (and the broken key),
never in a traceback or the CLI's last-resort "internal error" (exit 3).

Each example starts from a valid input set (a full-bridge test design that uses every
optional key, its six test parts and the shipped commercial policy), breaks exactly one
thing, writes the files into a fresh temporary folder and runs ``stresscheck check``
in-process. Every mutation is chosen so that the result is really invalid (a value of the
wrong type, dimension or sign, an unknown unit or key, NaN, min above max, corrupt bytes,
a wrong schema version ...), so no example is filtered away.

Example counts: profile "stresscheck-inputs-ci" (the default) runs 2,700 examples in all;
set STRESSCHECK_HYPOTHESIS_PROFILE=dev for a quick local run (a tenth of that).
"""

from __future__ import annotations

import copy
import datetime as _dt
import math
import os
import shutil
import tempfile
from dataclasses import dataclass
from pathlib import Path

import tomli_w
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from stresscheck import schema
from stresscheck.errors import InputError
from stresscheck.parts import shipped_library, valid_part_id
from stresscheck.policy import RULE_KEYS
from stresscheck.design import COMPONENT_KEYS, CONVERTER_KEYS, OPERATING_KEYS
from stresscheck.tomlio import read_toml
from stresscheck.units import DIMENSIONS, parse_quantity, registry
from test_input_errors import (assert_input_error, commercial_policy, rich_design,
                               rich_parts, run_cli)

# --------------------------------------------------------------------------- profiles

settings.register_profile("stresscheck-inputs-ci", deadline=None, print_blob=True,
                          suppress_health_check=[HealthCheck.too_slow,
                                                 HealthCheck.data_too_large])
settings.register_profile("stresscheck-inputs-dev", deadline=None, print_blob=True,
                          suppress_health_check=[HealthCheck.too_slow,
                                                 HealthCheck.data_too_large])
_PROFILE = os.environ.get("STRESSCHECK_HYPOTHESIS_PROFILE", "ci")
_SCALE = 0.1 if _PROFILE == "dev" else 1.0


def examples(n: int):
    """The module's profile with ``n`` examples (a tenth in the dev profile). The
    profile is applied per test, not loaded globally, so other modules keep theirs."""
    parent = settings.get_profile(f"stresscheck-inputs-{'dev' if _PROFILE == 'dev' else 'ci'}")
    return settings(parent, max_examples=max(int(n * _SCALE), 10))


# --------------------------------------------------------------------------- the base

BASE = {"design": rich_design(), "policy": commercial_policy()}
for _pid, _sheet in rich_parts().items():
    BASE[_pid] = dict(_sheet, id=_pid)
PART_IDS = tuple(rich_parts())
BASE_TEXT = {name: tomli_w.dumps(doc) for name, doc in BASE.items()}
KNOWN_PART_IDS = set(PART_IDS) | {p.stem for p in shipped_library().glob("*.toml")}


def key_name(path) -> str:
    out = ""
    for p in path:
        out += f"[{p}]" if isinstance(p, int) else (f".{p}" if out else p)
    return out


def get(doc, path):
    for p in path:
        doc = doc[p]
    return doc


DELETE = object()


@dataclass
class Mutation:
    """Break one file: set ``path`` to ``value`` (or delete it, or run ``op``)."""

    target: str  # "design", "policy" or a part id
    label: str
    key: str | None  # the message must name a key starting with this
    path: tuple = ()
    value: object = None
    op: object = None  # callable(doc) for structural changes

    def apply(self, doc):
        if self.op is not None:
            self.op(doc)
            return
        parent = get(doc, self.path[:-1])
        if self.value is DELETE:
            del parent[self.path[-1]]
        else:
            parent[self.path[-1]] = self.value

    def __repr__(self):
        value = "" if self.op is not None else f" = {self.value!r}"[:120]
        return f"<{self.target}: {self.label} {key_name(self.path)}{value}>"


def run_mutation(m: Mutation) -> None:
    doc = copy.deepcopy(BASE[m.target])
    m.apply(doc)
    texts = dict(BASE_TEXT)
    texts[m.target] = tomli_w.dumps(doc)
    run_texts(texts, m.target, m.key)


def run_texts(texts: dict, target: str, key, raw: bytes | None = None) -> None:
    folder = Path(tempfile.mkdtemp(prefix="sc-prop-"))
    try:
        (folder / "parts").mkdir()
        files = {"design": folder / "design.toml", "policy": folder / "policy.toml"}
        files.update({pid: folder / "parts" / f"{pid}.toml" for pid in PART_IDS})
        for name, path in files.items():
            path.write_text(texts[name], encoding="utf-8")
        if raw is not None:
            files[target].write_bytes(raw)
        status, _, err = run_cli(["check", files["design"], "--policy", files["policy"],
                                  "--out", folder / "out"])
        assert_input_error(status, err, files[target], key)
        assert not (folder / "out").exists(), "a rejected input must not produce reports"
    finally:
        shutil.rmtree(folder, ignore_errors=True)


# --------------------------------------------------------------------------- values

UNIT = {d: sym for d, (_, sym) in DIMENSIONS.items()}
UNIT.update({"fraction": "%", "count": "", "area": "mm^2", "per_kelvin": "%/K"})
SAMPLE = {"voltage": "48 V", "current": "10 A", "frequency": "100 kHz",
          "inductance": "10 uH", "capacitance": "4.7 uF", "resistance": "12 mohm",
          "power": "2 W", "time": "50 ns", "charge": "30 nC", "energy": "10 uJ",
          "temperature": "75 degC", "thermal_resistance": "3 K/W",
          "flux_density": "300 mT", "area": "80 mm^2", "per_kelvin": "0.5 %/K",
          "fraction": "20 %"}
FAMILY = {"temperature_difference": "temperature", "count": "fraction"}


def family(dimension):
    return FAMILY.get(dimension, dimension)


def wrong_dimension_values(dimension):
    return [v for d, v in SAMPLE.items() if family(d) != family(dimension)]


def _with_unit(number: str, dimension: str) -> str:
    unit = UNIT[dimension]
    return f"{number} {unit}".strip()


WRONG_TYPES_FOR_QUANTITY = [True, False, [1, 2], ["10 V"], _dt.date(2024, 5, 1),
                            _dt.time(12, 30)]
WRONG_TYPES_FOR_TEXT = [5, 2.5, True, ["a"], {"a": 1}, _dt.date(2024, 5, 1)]
NON_FINITE = [math.nan, math.inf, -math.inf, "nan", "NaN V", "inf", "-inf A", "Infinity"]

typo_chars = st.sampled_from("abcdefghijklmnopqrstuvwxyz_-0123456789 ")


@st.composite
def typo_of(draw, word: str):
    """One-character edit of ``word`` (delete, insert, replace)."""
    if not word:
        return draw(typo_chars)
    i = draw(st.integers(0, len(word) - 1))
    how = draw(st.sampled_from(("delete", "insert", "replace", "upper")))
    if how == "delete":
        return word[:i] + word[i + 1:]
    if how == "insert":
        return word[:i] + draw(typo_chars) + word[i:]
    if how == "upper":
        return word.upper() if word.upper() != word else word + "X"
    return word[:i] + draw(typo_chars) + word[i + 1:]


def not_in(choices, strategy):
    choices = set(choices)
    return strategy.filter(lambda s: s not in choices)


def invalid_choice(choices):
    base = st.sampled_from(sorted(choices)).flatmap(typo_of)
    return not_in(choices, st.one_of(base, st.text(max_size=30),
                                     st.integers(1000, 200_000).map(lambda n: "x" * n)))


def unknown_unit_text(dimension):
    """A number with a unit no registry knows (or one of another dimension)."""
    def is_valid(text):
        try:
            parse_quantity(text, dimension, "f", "k")
        except InputError:
            return False
        return True
    return st.tuples(st.sampled_from(("1", "4.7", "100", "0.5")),
                     st.from_regex(r"[A-Za-z][A-Za-z$#!]{0,7}", fullmatch=True)) \
        .map(lambda t: f"{t[0]} {t[1]}").filter(lambda s: not is_valid(s))


def implausible(dimension):
    if dimension == "temperature":
        return st.one_of(st.integers(4, 300).map(lambda k: f"1e{k} degC"),
                         st.floats(274, 1e6).map(lambda x: f"-{x:.6g} degC"))
    unit = UNIT[dimension]
    # 1e30 and beyond stays implausible after any prefix or "%" or "mm^2" scaling
    return st.one_of(st.integers(30, 300).map(lambda k: f"1e{k} {unit}".strip()),
                     st.integers(-300, -30).map(lambda k: f"1e{k} {unit}".strip()))


def huge_string(dimension=None):
    unit = UNIT.get(dimension, "") if dimension else ""
    return st.one_of(st.integers(200, 100_000).map(lambda n: "x" * n),
                     st.integers(200, 5000).map(lambda n: f"{'9' * n} {unit}".strip()))


# --------------------------------------------------------------------------- sites

@dataclass(frozen=True)
class Q:
    """A quantity key: dimension and what is invalid besides type, unit and dimension."""

    dimension: str
    zero_bad: bool = False
    negative_bad: bool = False
    required: bool = False


@dataclass(frozen=True)
class Spec:
    kind: str  # schema, table, tables, enum, text, note, refs, part, parallel, number,
    #            tech, source, rule_id, id
    required: bool = False
    choices: tuple = ()
    valid_keys: tuple = ()
    low: float = 0.0  # number: valid range (low, high]
    high: float = 1.0
    expected: str = ""


POS = dict(zero_bad=True, negative_bad=True)


def quantity_mutations(path, q: Q, key: str, value):
    """Strategies of (value, expected key) for a quantity key (``value`` = its base)."""
    dim = q.dimension
    out = [st.sampled_from(WRONG_TYPES_FOR_QUANTITY),
           st.sampled_from(wrong_dimension_values(dim)),
           unknown_unit_text(dim),
           st.sampled_from(NON_FINITE),
           implausible(dim),
           huge_string(dim)]
    if q.zero_bad:
        out.append(st.sampled_from([0, 0.0, "0", _with_unit("0", dim)]))
    if q.negative_bad:
        out.append(st.floats(1e-3, 1e3).map(lambda x: _with_unit(f"-{x:.4g}", dim)))
        out.append(st.integers(-1000, -1))
    if dim == "temperature":
        out.append(st.floats(273.2, 1e4).map(lambda x: f"-{x:.6g} degC"))
    if q.required:
        out.append(st.just(DELETE))
    return [s.map(lambda v: Mutation("", "set", key, path, v)) for s in out]


def range_mutations(path, q: Q, key: str, value: dict):
    """Extra breakages of a range/tolerance table: unknown field, min above max, empty."""
    out = [st.just(Mutation("", "empty range", key, path, {}))]
    field = not_in(("min", "nom", "max", "tolerance"),
                   st.from_regex(r"[a-z][a-z_]{0,8}", fullmatch=True))
    out.append(field.map(lambda f: Mutation("", "unknown range field", f"{key}.{f}",
                                            path + (f,), SAMPLE.get(family(q.dimension),
                                                                    "1"))))
    if "min" in value and "max" in value:
        def swap(doc, path=path):
            node = get(doc, path)
            node["min"], node["max"] = node["max"], node["min"]
        out.append(st.just(Mutation("", "swap min and max", key, path, op=swap)))
    if "tolerance" in value:
        out.append(st.sampled_from(["100 %", "150 %", "-5 %", 1.0, 2, "20 V"]).map(
            lambda v: Mutation("", "bad tolerance", key, path + ("tolerance",), v)))
    return out


def spec_mutations(path, spec: Spec, key: str, value, doc, target=""):
    m = lambda label: (lambda v: Mutation("", label, key, path, v))  # noqa: E731
    out = []
    if spec.required:
        out.append(st.just(Mutation("", "delete", key, path, DELETE)))
    kind = spec.kind
    if kind == "schema":
        out.append(not_in((spec.expected,), st.one_of(
            st.sampled_from(["stresscheck.design/2", "stresscheck.part/1",
                             "stresscheck.policy/1", "stresscheck.design/1",
                             "stresscheck.results/1", "", " " + spec.expected,
                             spec.expected.upper(), spec.expected + ".0",
                             spec.expected + "\n", "\x1b[2J" + spec.expected]),
            typo_of(spec.expected), st.text(max_size=40))).map(m("wrong schema")))
        out.append(st.sampled_from(WRONG_TYPES_FOR_TEXT).map(m("schema type")))
    elif kind == "table":
        out.append(st.sampled_from([5, "x", [1, 2], True]).map(m("table type")))
    elif kind == "tables":
        out.append(st.sampled_from([5, "x", [], [1, 2], {"a": 1}]).map(m("tables type")))
    elif kind == "enum":
        out.append(invalid_choice(spec.choices).map(m("invalid choice")))
        out.append(st.sampled_from(WRONG_TYPES_FOR_TEXT).map(m("enum type")))
    elif kind == "text":  # one-line names
        out.append(st.sampled_from(WRONG_TYPES_FOR_TEXT).map(m("text type")))
        out.append(st.integers(max(spec.high, 1) + 1, 20_000).map(lambda n: "n" * int(n))
                   .map(m("too long")))
        out.append(st.tuples(st.text(max_size=10), st.sampled_from("\n\t\x1b\x00\x7f"),
                             st.text(max_size=10)).map("".join).map(m("control char")))
        out.append(st.sampled_from(["", " ", "   "]).map(m("empty text")))
    elif kind == "note":  # free text of any length: only the type is checked
        out.append(st.sampled_from(WRONG_TYPES_FOR_TEXT).map(m("note type")))
    elif kind == "refs":
        others = [r for c in doc["components"] for r in c.get("refs", [c.get("ref")])
                  if r not in (value if isinstance(value, list) else [value])]
        bad_designator = st.one_of(
            st.sampled_from(["", " ", "Q 1", "Q1\n", "\x1b[31m", "a\tb"]),
            st.integers(41, 500).map(lambda n: "R" * n))
        if isinstance(value, list):
            out.append(st.sampled_from([5, "Q1", True, [], [1], [True], {"a": "Q1"}])
                       .map(m("refs type")))
            out.append(st.tuples(bad_designator, st.integers(0, len(value) - 1)).map(
                lambda t: value[:t[1]] + [t[0]] + value[t[1] + 1:]).map(m("bad designator")))
            # a duplicate is reported at whichever of the two entries comes later
            out.append(st.sampled_from(others).map(lambda r: Mutation(
                "", "duplicate designator", "components", path, value[:-1] + [r])))
            out.append(st.just(value + [value[0]]).map(m("designator twice")))
        else:
            out.append(st.sampled_from([5, True, ["Q9"], {"a": "Q1"}]).map(m("ref type")))
            out.append(bad_designator.map(m("bad designator")))
            out.append(st.sampled_from(others).map(lambda r: Mutation(
                "", "duplicate designator", "components", path, r)))
        other_key = path[:-1] + ("ref" if path[-1] == "refs" else "refs",)
        out.append(st.just(Mutation("", "both ref and refs", key[:-1] if key.endswith("s")
                                    else key, other_key, "X1")))
    elif kind == "part":
        role = get(doc, path[:-1])["role"]
        wrong_kind = [pid for pid in PART_IDS
                      if BASE[pid]["kind"] not in schema.ROLE_KINDS[role]]
        out.append(st.sampled_from(wrong_kind).map(m("part of the wrong kind")))
        out.append(st.from_regex(r"zz-missing-[a-z0-9]{1,10}", fullmatch=True)
                   .map(m("part not in the libraries")))
        out.append(st.sampled_from(["../parts/t-fet", "/etc/passwd", "parts/t-fet",
                                    "..", ".", "", "t fet", "t-fet.toml/..", "a\\b",
                                    "C:t-fet", ".hidden", "a..b", "x" * 81, "~/t-fet",
                                    "%2e%2e%2ft-fet"]).map(m("unsafe part id")))
        out.append(st.text(max_size=40).filter(lambda s: not valid_part_id(s))
                   .map(m("invalid part id")))
        out.append(st.sampled_from([5, True, ["t-fet"], {"id": "t-fet"}]).map(m("part type")))
    elif kind == "parallel":
        out.append(st.sampled_from([0, -1, -100, 1.5, "2", True, 10**6, [2]])
                   .map(m("bad parallel")))
    elif kind == "number":  # policy factor / marginal_above
        out.append(st.sampled_from(["0.8", True, [0.8], {"a": 1}]).map(m("number type")))
        out.append(st.sampled_from([0, 0.0, -0.5, -1, math.nan, math.inf, -math.inf,
                                    spec.high + 0.01, spec.high * 2, 1e300])
                   .map(m("number out of range")))
    elif kind == "tech":
        out.append(st.sampled_from([5, True, [], [1], {"a": "si"}]).map(m("tech type")))
        out.append(invalid_choice(spec.choices).map(lambda t: value[:-1] + [t])
                   .map(m("unknown technology")))
    elif kind == "source":
        out.append(st.sampled_from(["", " ", "\t", 5, True, ["a"]]).map(m("bad source")))
    elif kind == "rule_id":
        out.append(st.sampled_from(["", 5, True, ["x"], "a\nb", "x" * 101])
                   .map(m("bad rule id")))
    elif kind == "id":  # part sheet id: must be a valid id equal to the file stem
        stem = target
        out.append(st.one_of(st.from_regex(r"[a-z][a-z0-9-]{0,20}", fullmatch=True),
                             st.text(max_size=30)).filter(lambda s: s != stem)
                   .map(m("id not the file stem")))
        out.append(st.sampled_from(WRONG_TYPES_FOR_TEXT).map(m("id type")))
    return out


def unknown_key_mutation(path, valid_keys, prefix):
    names = st.one_of(st.sampled_from(sorted(valid_keys)).flatmap(typo_of),
                      st.from_regex(r"[a-z][a-z0-9_]{0,12}", fullmatch=True))
    names = names.filter(lambda k: k.strip() == k and k and k not in valid_keys
                         and k.isprintable())
    return names.map(lambda k: Mutation("", "unknown key", f"{prefix}{k}" if prefix
                                        else k, path + (k,), "1 V"))


# --- design ------------------------------------------------------------------------

def design_spec(norm: str):
    pos_spread = Q("frequency", **POS, required=True)
    table = {
        "schema": Spec("schema", required=True, expected=schema.DESIGN_SCHEMA),
        "converter": Spec("table", required=True),
        "operating": Spec("table", required=True),
        "components": Spec("tables", required=True),
        "converter.name": Spec("text", high=200),
        "converter.topology": Spec("enum", required=True, choices=schema.TOPOLOGIES),
        "converter.rectifier": Spec("enum", required=True, choices=schema.RECTIFIERS),
        "converter.modulation": Spec("enum", choices=schema.MODULATIONS),
        "converter.switching_frequency": pos_spread,
        "converter.dead_time": Q("time", negative_bad=True),
        "converter.max_duty": Q("fraction", **POS),
        "operating.input_voltage": Q("voltage", **POS, required=True),
        "operating.output_voltage": Q("voltage", **POS, required=True),
        # 0 A is no load (CONTRACT.md, extensions): only negative values are broken
        "operating.output_current": Q("current", negative_bad=True, required=True),
        "operating.ambient_temperature": Q("temperature", required=True),
        "operating.input_surge": Q("voltage", **POS),
        "operating.current_limit": Q("current", **POS),
        "components.*.refs": Spec("refs", required=True),
        "components.*.ref": Spec("refs", required=True),
        "components.*.role": Spec("enum", required=True, choices=schema.ROLES),
        "components.*.part": Spec("part", required=True),
        "components.*.r_th_ca": Q("thermal_resistance", **POS),
        "components.*.parallel": Spec("parallel"),
        "components.*.note": Spec("note"),
    }
    return table.get(norm)


def normalise(path) -> str:
    return ".".join("*" if isinstance(p, int) else p for p in path)


def collect(target, doc, spec_of, tables):
    """All mutation strategies for one document."""
    out = []

    def walk(node, path):
        if isinstance(node, dict):
            items = node.items()
        elif isinstance(node, list) and node and all(isinstance(x, dict) for x in node):
            items = enumerate(node)
        else:
            return
        for k, v in items:
            p = path + (k,)
            spec = spec_of(normalise(p))
            key = key_name(p)
            if isinstance(spec, Q):
                out.extend(quantity_mutations(p, spec, key, v))
                if isinstance(v, dict):
                    out.extend(range_mutations(p, spec, key, v))
                    for sub in v:
                        sub_q = Q(spec.dimension, spec.zero_bad and sub != "tolerance",
                                  spec.negative_bad)
                        if sub == "tolerance":
                            sub_q = Q("fraction", negative_bad=True)
                        # errors in a field may be reported for the whole range
                        out.extend(quantity_mutations(p + (sub,), sub_q, key, v[sub]))
                continue
            if spec is not None:
                out.extend(spec_mutations(p, spec, key, v, doc, target))
            walk(v, p)

    walk(doc, ())
    for path, valid in tables(doc):
        prefix = key_name(path) + "." if path else ""
        out.append(unknown_key_mutation(path, valid, prefix))
    return [s.map(lambda mu, t=target: Mutation(t, mu.label, mu.key, mu.path, mu.value,
                                                mu.op)) for s in out]


def design_tables(doc):
    yield (), ("schema", "converter", "operating", "components")
    yield ("converter",), CONVERTER_KEYS
    yield ("operating",), OPERATING_KEYS
    for i in range(len(doc["components"])):
        yield ("components", i), COMPONENT_KEYS


def _drop_component(doc, i):
    del doc["components"][i]


DESIGN_MUTATIONS = collect("design", BASE["design"], design_spec, design_tables)
DESIGN_MUTATIONS += [st.just(Mutation("design", "drop a component", "components",
                                      op=lambda d, i=i: _drop_component(d, i)))
                     for i in range(len(BASE["design"]["components"]))]


# --- part sheets -------------------------------------------------------------------

def part_spec_for(pid):
    kind = BASE[pid]["kind"]
    required = {"mosfet": {"r_ds_on"}, "diode": {"v_f0"}, "capacitor": {"capacitance"},
                "inductor": {"inductance"},
                "transformer": {"primary_turns", "secondary_turns"}}[kind]

    def spec(norm):
        top = {"schema": Spec("schema", required=True, expected=schema.PART_SCHEMA),
               "id": Spec("id", required=True),
               "kind": Spec("enum", required=True, choices=schema.KINDS),
               "technology": Spec("enum", required=True,
                                  choices=schema.TECHNOLOGIES[kind]),
               "description": Spec("note"),
               "ratings": Spec("table"), "electrical": Spec("table", required=True),
               "thermal": Spec("table")}
        if norm in top:
            return top[norm]
        section, _, key = norm.partition(".")
        k = schema.PART_KEYS[kind].get(section, {}).get(key)
        if k is None:
            return None
        positive = key in schema.POSITIVE_KEYS
        non_negative = positive or k.dimension not in ("temperature", "per_kelvin")
        return Q(k.dimension, zero_bad=positive, negative_bad=non_negative,
                 required=key in required)
    return spec


def part_tables(pid):
    kind = BASE[pid]["kind"]

    def tables(doc):
        yield (), ("schema", "id", "kind", "technology", "description", "ratings",
                   "electrical", "thermal", "notes", "source")
        for section in ("ratings", "electrical", "thermal"):
            yield (section,), tuple(schema.PART_KEYS[kind][section])
    return tables


PART_MUTATIONS = []
for _pid in PART_IDS:
    PART_MUTATIONS += collect(_pid, BASE[_pid], part_spec_for(_pid), part_tables(_pid))


# --- policy ------------------------------------------------------------------------

def policy_spec_for(doc):
    def spec(norm):
        top = {"schema": Spec("schema", required=True, expected=schema.POLICY_SCHEMA),
               "name": Spec("text", required=True, high=100),
               "description": Spec("note"),
               "marginal_above": Spec("number", low=0, high=1.0),
               "rules": Spec("tables", required=True)}
        if norm in top:
            return top[norm]
        return None
    return spec


def policy_rule_mutations(doc):
    out = []
    ids = [r.get("id", f"{r['kind']}-{r['quantity']}") for r in doc["rules"]]
    for i, rule in enumerate(doc["rules"]):
        base = ("rules", i)
        key = f"rules[{i}]"
        kind = rule["kind"]

        def m(field, label, expect=None, base=base, key=key):
            expected = expect or f"{key}.{field}"
            return lambda v: Mutation("policy", label, expected, base + (field,), v)
        sub = []
        sub.append(st.just(DELETE).map(m("kind", "delete")))
        sub.append(invalid_choice(schema.KINDS).map(m("kind", "invalid kind")))
        sub.append(st.just(DELETE).map(m("quantity", "delete")))
        sub.append(invalid_choice(schema.KIND_QUANTITIES[kind]).map(m("quantity",
                                                                      "invalid quantity")))
        sub.append(st.just(DELETE).map(m("source", "delete")))
        sub.append(st.sampled_from(["", " ", 5, True, ["a"]]).map(m("source", "bad source")))
        sub.append(st.sampled_from(["", 5, True, ["x"], "a\nb", "x" * 101])
                   .map(m("id", "bad id")))
        sub.append(st.sampled_from([j for j in range(len(ids)) if ids[j] != ids[i]]).map(
            lambda j, i=i: Mutation("policy", "duplicate id", "rules", ("rules", i, "id"),
                                    ids[j])))
        ratings = schema.PART_KEYS[kind]["ratings"]
        sub.append(invalid_choice(ratings).map(m("rating", "invalid rating")))
        # factor or margin stay behind: reported at the rule's factor or margin
        if "rating" in rule:  # a fixed-limit rule (the hold-up one) has no rating
            sub.append(st.just(DELETE).map(m("rating", "delete rating",
                                             expect=key + ".")))
        if "factor" in rule:
            sub.append(st.sampled_from(["0.8", True, [0.8], 0, -0.5, math.nan, math.inf,
                                        1.6, 10, 1e300]).map(m("factor", "bad factor")))
            if "margin" not in rule and "limit" not in rule:
                sub.append(st.just(DELETE).map(m("factor", "delete factor")))
        qdim = {"V": "voltage", "A": "current", "W": "power", "degC": "temperature",
                "T": "flux_density", "s": "time", "1": "fraction",
                "K": "temperature_difference", "J": "energy"}[
            schema.QUANTITIES[rule["quantity"]].unit]
        if "margin" in rule:
            mdim = "temperature_difference" if qdim == "temperature" else qdim
            for s in quantity_mutations(base + ("margin",), Q(mdim, negative_bad=True),
                                        f"{key}.margin", rule["margin"]):
                sub.append(s.map(lambda mu: Mutation("policy", mu.label, mu.key, mu.path,
                                                     mu.value)))
        if "limit" in rule:
            for s in quantity_mutations(base + ("limit",), Q(qdim), f"{key}.limit",
                                        rule["limit"]):
                sub.append(s.map(lambda mu: Mutation("policy", mu.label, mu.key, mu.path,
                                                     mu.value)))
        if "technology" in rule:
            techs = list(rule["technology"])
            sub.append(st.sampled_from([5, True, [], [1], {"a": "si"}])
                       .map(m("technology", "technology type")))
            sub.append(invalid_choice(schema.TECHNOLOGIES[kind])
                       .map(lambda t, techs=techs: techs + [t])
                       .map(m("technology", "unknown technology")))
        sub.append(unknown_key_mutation(base, RULE_KEYS, f"{key}.").map(
            lambda mu: Mutation("policy", mu.label, mu.key, mu.path, mu.value)))
        out.append(st.one_of(sub))
    return out


def _policy_tables(doc):
    yield (), ("schema", "name", "marginal_above", "rules", "description")


POLICY_MUTATIONS = collect("policy", BASE["policy"], policy_spec_for(BASE["policy"]),
                           _policy_tables)
POLICY_RULE_MUTATIONS = policy_rule_mutations(BASE["policy"])


# --------------------------------------------------------------------------- the tests

def test_base_inputs_are_valid(tmp_path):
    """The unbroken base inputs pass the loaders (exit 0 or 1, reports written), so
    every exit 2 below comes from the one mutation of its example.

    Source: test design (a property test must start from a valid input).
    """
    from test_input_errors import write_inputs
    inputs = write_inputs(tmp_path, BASE["design"], rich_parts(), BASE["policy"])
    status, _, err = run_cli(inputs.args())
    assert status in (0, 1), err
    assert (inputs.out / "results.json").is_file()


@examples(750)
@given(mutation=st.one_of(DESIGN_MUTATIONS))
def test_broken_design_exits_2(mutation):
    """Any one broken key of a design file (deleted, wrong type, wrong dimension, unknown
    unit, NaN or infinity, zero or negative, implausible magnitude, huge text, unknown key,
    min above max, unsafe or missing part, bad designator) exits 2 naming the design file
    and the key.

    Source: the robustness issue (items 1, 2 and 6) and CONTRACT.md (exit status 2).
    """
    run_mutation(mutation)


@examples(750)
@given(mutation=st.one_of(PART_MUTATIONS))
def test_broken_part_sheet_exits_2(mutation):
    """Any one broken key of any part sheet the design uses exits 2 naming that part
    sheet and the key.

    Source: the robustness issue (items 1, 2 and 6) and CONTRACT.md (part sheet keys and
    dimensions; zero turns, negative inductance).
    """
    run_mutation(mutation)


@examples(500)
@given(mutation=st.one_of(POLICY_MUTATIONS + POLICY_RULE_MUTATIONS))
def test_broken_policy_exits_2(mutation):
    """Any one broken key of a policy file (top level or a rule) exits 2 naming the
    policy file and the key.

    Source: the robustness issue (items 1 and 6) and CONTRACT.md (policy format).
    """
    run_mutation(mutation)


@st.composite
def corrupt_file(draw):
    target = draw(st.sampled_from(("design", "policy") + PART_IDS))
    text = BASE_TEXT[target]
    data = text.encode("utf-8")
    how = draw(st.sampled_from(("invalid-utf8", "truncate-in-string", "empty",
                                "control-char", "duplicate-line", "utf16", "garbage")))
    if how == "invalid-utf8":
        pos = draw(st.integers(0, len(data)))
        bad = bytes([draw(st.sampled_from([*range(0x80, 0xC2), *range(0xF5, 0x100)]))])
        raw = data[:pos] + bad + data[pos:]
    elif how == "truncate-in-string":
        starts = [i for i in range(len(data)) if data[i:i + 4] == b' = "']
        start = draw(st.sampled_from(starts)) + 4
        end = data.index(b'"', start)
        raw = data[:draw(st.integers(start, end - 1 if end > start else start))]
    elif how == "empty":
        raw = draw(st.sampled_from([b"", b" ", b"\n\n", b"\t \n", b"# comment only\n",
                                    b"\xef\xbb\xbf", b"# a\n\n# b\n"]))
    elif how == "control-char":
        pos = draw(st.integers(0, len(data)))
        ch = draw(st.sampled_from([*range(0, 9), 0x0B, 0x0C, *range(0x0E, 0x20), 0x7F]))
        raw = data[:pos] + bytes([ch]) + data[pos:]
    elif how == "duplicate-line":
        lines = text.splitlines(keepends=True)
        keyed = [i for i, line in enumerate(lines)
                 if " = " in line and not line.startswith((" ", "[", "#"))]
        i = draw(st.sampled_from(keyed))
        raw = "".join(lines[:i + 1] + [lines[i]] + lines[i + 1:]).encode("utf-8")
    elif how == "utf16":
        raw = text.encode(draw(st.sampled_from(("utf-16", "utf-16-le", "utf-32"))))
    else:
        raw = draw(st.binary(min_size=1, max_size=300))
    return target, how, raw


@examples(450)
@given(case=corrupt_file())
def test_corrupt_file_exits_2(case):
    """A design, part sheet or policy with corrupt bytes (invalid UTF-8, cut inside a
    string, empty, control characters, a key defined twice, UTF-16, random bytes) exits
    2 naming that file.

    Source: the robustness issue (items 1 and 6); TOML 1.0 (UTF-8 only, control
    characters not allowed, keys defined once).
    """
    target, how, raw = case
    run_texts(BASE_TEXT, target, None, raw=raw)


DIMENSION_NAMES = sorted(DIMENSIONS)


@examples(250)
@given(text=st.one_of(st.text(max_size=150),
                      st.from_regex(r"[-+]?\d{0,4}(\.\d{0,3})?([eE][-+]?\d{1,3})? ?"
                                    r"[a-zA-Zµ°Ω%/*^()0-9 ]{0,12}", fullmatch=True)),
       dimension=st.sampled_from(DIMENSION_NAMES))
def test_parse_quantity_never_fails_unexpectedly(text, dimension):
    """Any text given as a quantity either parses to a finite number in the plausible
    range or raises InputError naming the file and key: never another exception.

    Source: the robustness issue (item 1: "never a traceback").
    """
    registry()
    try:
        value = parse_quantity(text, dimension, "sheet.toml", "electrical.x")
    except InputError as exc:
        assert str(exc).startswith("sheet.toml, key 'electrical.x': ")
        return
    assert math.isfinite(value)


@examples(250)
@given(raw=st.binary(max_size=400))
def test_read_toml_never_fails_unexpectedly(raw):
    """Any bytes read as a TOML input give a dict or an InputError naming the file.

    Source: the robustness issue (item 1: every malformed input gets a clear error).
    """
    folder = Path(tempfile.mkdtemp(prefix="sc-raw-"))
    try:
        path = folder / "x.toml"
        path.write_bytes(raw)
        try:
            doc = read_toml(path, "design file")
        except InputError as exc:
            assert str(exc).startswith(str(path))
            return
        assert isinstance(doc, dict) and doc
    finally:
        shutil.rmtree(folder, ignore_errors=True)
