"""Every malformed input ends in exit status 2 with a one-line message that names the file,
the key (and line) and what was expected; never a traceback.

Table-driven: one case per kind of bad input of the robustness issue (items 1 and 2).
Each case writes a valid test design, its parts library and the commercial policy into a
temporary folder, breaks one thing, runs ``stresscheck check`` in-process and checks the
message. The helpers here are shared with test_property_inputs, test_safety and
test_determinism.
"""

from __future__ import annotations

import contextlib
import copy
import io
import re
import tomllib
from dataclasses import dataclass, field
from pathlib import Path

import pytest
import tomli_w

from builders import bridge_design, bridge_parts, write_case
from stresscheck import cli
from stresscheck.tomlio import KeyLines

POLICY_FILE = Path(cli.__file__).resolve().parent / "policies" / "commercial.toml"


# --------------------------------------------------------------------------- helpers

def commercial_policy() -> dict:
    """The shipped commercial policy as a dict (to be broken and written as a file)."""
    return tomllib.loads(POLICY_FILE.read_text(encoding="utf-8"))


def rich_design() -> dict:
    """A valid full-bridge test design that uses every optional design key."""
    doc = bridge_design(surge="80 V", ilim="12 A")
    doc["converter"].update(dead_time="50 ns", max_duty="45 %", modulation="pwm",
                            switching_frequency={"min": "90 kHz", "nom": "100 kHz",
                                                 "max": "110 kHz"})
    doc["components"][0]["parallel"] = 1
    doc["components"][0]["note"] = "primary switches"
    return doc


def rich_parts() -> dict:
    """Valid parts for `rich_design`, with a range, tolerances and every section."""
    return bridge_parts(c_in={"min": "80 uF", "max": "120 uF"},
                        c_out={"nom": "1000 uF", "tolerance": "20 %"},
                        l_m={"nom": "200 uH", "tolerance": "25 %"})


@dataclass
class Inputs:
    folder: Path
    design: Path
    parts: dict[str, Path]
    policy: Path
    out: Path

    def args(self, *extra) -> list[str]:
        return ["check", str(self.design), "--policy", str(self.policy),
                "--out", str(self.out), *extra]

    def all_files(self) -> list[Path]:
        return [self.design, self.policy, *self.parts.values()]


def write_inputs(folder: Path, design=None, parts=None, policy=None) -> Inputs:
    """Write design.toml, parts/<id>.toml and policy.toml under ``folder``."""
    folder = Path(folder)
    parts = rich_parts() if parts is None else parts
    path = write_case(folder, rich_design() if design is None else design, parts)
    policy_path = folder / "policy.toml"
    policy_path.write_text(tomli_w.dumps(commercial_policy() if policy is None else policy),
                           encoding="utf-8")
    return Inputs(folder, path, {pid: folder / "parts" / f"{pid}.toml" for pid in parts},
                  policy_path, folder / "out")


def run_cli(args) -> tuple[int, str, str]:
    """Run ``stresscheck.cli.main(args)`` in-process: (exit status, stdout, stderr)."""
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        try:
            status = cli.main([str(a) for a in args])
        except SystemExit as exc:  # argparse
            status = exc.code
    return status, out.getvalue(), err.getvalue()


def assert_input_error(status, err, path, key=None, *fragments):
    """Exit 2, one line "stresscheck: error: <path>[, line N][, key 'k...']: ..."."""
    assert status == 2, f"exit status {status}, stderr: {err!r}"
    assert "Traceback" not in err and "internal error" not in err, err
    assert err.startswith("stresscheck: error: "), err
    assert err.count("\n") == 1 and err.endswith("\n"), f"not one line: {err!r}"
    assert str(path) in err, f"message does not name {path}: {err!r}"
    if key is not None:
        assert f"key '{key}" in err, f"message does not name key {key!r}: {err!r}"
    for fragment in fragments:
        assert fragment.lower() in err.lower(), f"{fragment!r} not in {err!r}"


# --------------------------------------------------------------------------- the table

@dataclass
class Case:
    """One bad input: ``edit(docs)`` breaks the docs (or ``raw`` replaces a file's bytes);
    ``target`` names the file the message must name: "design", "policy" or a part id."""

    id: str
    target: str
    key: str | None
    fragments: tuple[str, ...]
    edit: object = None
    raw: bytes | None = None
    extra_args: tuple = ()
    parts_kw: dict = field(default_factory=dict)
    line: bool = False  # the message must give a line number


def _set(path: str, value):
    """An edit that sets a dotted path ("design:converter.topology") to ``value``."""
    def edit(docs):
        doc_name, _, dotted = path.partition(":")
        node = docs[doc_name]
        keys = re.findall(r"[^.\[\]]+|\[\d+\]", dotted)
        for k in keys[:-1]:
            node = node[int(k[1:-1])] if k.startswith("[") else node[k]
        last = keys[-1]
        if value is DELETE:
            del node[last]
        else:
            node[last] = value
    return edit


DELETE = object()


def _swap_parts(role_index: int, part_id: str):
    return _set(f"design:components[{role_index}].part", part_id)


def _design_text() -> bytes:
    return tomli_w.dumps(rich_design()).encode("utf-8")


CASES = [
    # --- TOML syntax and file-level problems -----------------------------------------
    Case("toml-syntax", "design", None, ("TOML syntax error",), line=True,
         raw=_design_text().replace(b'topology = "full-bridge"', b'topology = full-bridge')),
    Case("toml-unterminated-string", "policy", None, ("TOML syntax error", "not closed"),
         line=True, raw=b'schema = "stresscheck.policy/1\nname = "x"\n'),
    Case("toml-duplicate-key", "design", "converter.name", ("defined twice",), line=True,
         raw=_design_text().replace(b"topology =", b'name = "again"\ntopology =', 1)),
    Case("empty-design", "design", None, ("empty",), raw=b""),
    Case("blank-part-sheet", "t-fet", None, ("empty",), raw=b"  \n\n\t\n"),
    Case("comments-only-policy", "policy", None, ("no keys",), raw=b"# just a comment\n"),
    Case("design-not-utf8", "design", None, ("not UTF-8",), line=True,
         raw=_design_text().replace(b"12 V", b"12 \xb0V")),
    Case("part-sheet-utf16", "t-diode", None, ("not UTF-8",),
         raw="schema = 'stresscheck.part/1'\n".encode("utf-16")),
    # --- unknown keys, with the nearest valid one ------------------------------------
    Case("unknown-key-design", "design", "converter.switching_frequncy",
         ("unknown key", "did you mean 'switching_frequency'"), line=True,
         edit=_set("design:converter.switching_frequncy", "100 kHz")),
    Case("unknown-key-part", "t-fet", "ratings.v_dss", ("did you mean 'v_ds'",), line=True,
         edit=_set("t-fet:ratings.v_dss", "100 V")),
    Case("unknown-key-policy", "policy", "rules[0].factr", ("did you mean 'factor'",),
         line=True, edit=_set("policy:rules[0].factr", 0.8)),
    Case("unknown-range-field", "design", "operating.input_voltage.mx",
         ("did you mean 'max'",), edit=_set("design:operating.input_voltage.mx", "60 V")),
    Case("unknown-topology-value", "design", "converter.topology",
         ("did you mean 'full-bridge'",), edit=_set("design:converter.topology",
                                                    "full-brige")),
    # --- wrong types -----------------------------------------------------------------
    Case("type-refs-int", "design", "components[0].refs", ("list of designators",),
         edit=_set("design:components[0].refs", 5)),
    Case("type-quantity-bool", "design", "converter.switching_frequency",
         ("frequency", "boolean"), edit=_set("design:converter.switching_frequency", True)),
    Case("type-section-string", "t-ind", "ratings", ("must be a table",),
         edit=_set("t-ind:ratings", "60 A")),
    Case("type-policy-factor-string", "policy", "rules[0].factor", ("number",),
         edit=_set("policy:rules[0].factor", "0.8")),
    Case("type-converter-array", "design", "converter", ("must be a table",),
         edit=_set("design:converter", [1, 2])),
    Case("type-name-int", "design", "converter.name", ("string",),
         edit=_set("design:converter.name", 12)),
    # --- wrong dimensions and unknown units ------------------------------------------
    Case("dimension-rdson-farad", "t-fet", "electrical.r_ds_on",
         ("not a resistance", "12 mohm"), edit=_set("t-fet:electrical.r_ds_on", "10 uF")),
    Case("dimension-vin-ampere", "design", "operating.input_voltage.min",
         ("not a voltage",), edit=_set("design:operating.input_voltage.min", "40 A")),
    Case("dimension-policy-margin", "policy", "rules[3].margin",
         ("not a temperature difference",), edit=_set("policy:rules[3].margin", "25 V")),
    Case("unknown-unit", "design", "converter.switching_frequency", ("unknown unit",),
         edit=_set("design:converter.switching_frequency", "100 kHzz")),
    Case("unknown-unit-part", "t-cout", "ratings.v_rated", ("unknown unit",),
         edit=_set("t-cout:ratings.v_rated", "63 Volts-ish")),
    # --- NaN and infinity ------------------------------------------------------------
    Case("nan-float", "design", "operating.output_voltage", ("finite",),
         edit=_set("design:operating.output_voltage", float("nan"))),
    Case("inf-float-part", "t-xfmr", "electrical.core_area", ("finite",),
         edit=_set("t-xfmr:electrical.core_area", float("inf"))),
    Case("nan-string", "t-diode", "ratings.v_rrm", ("finite",),
         edit=_set("t-diode:ratings.v_rrm", "NaN V")),
    Case("inf-string", "design", "operating.output_current.max", ("finite",),
         edit=_set("design:operating.output_current.max", "inf A")),
    Case("nan-policy-factor", "policy", "rules[0].factor", ("(0, 1]",),
         edit=_set("policy:rules[0].factor", float("nan"))),
    Case("nan-marginal", "policy", "marginal_above", ("(0, 1]",),
         edit=_set("policy:marginal_above", float("nan"))),
    # --- negative or zero where it makes no sense ------------------------------------
    Case("zero-frequency", "design", "converter.switching_frequency", ("greater than zero",),
         edit=_set("design:converter.switching_frequency", "0 Hz")),
    Case("negative-current", "design", "operating.output_current", ("greater than zero",),
         edit=_set("design:operating.output_current.min", "-1 A")),
    Case("negative-dead-time", "design", "converter.dead_time", ("negative",),
         edit=_set("design:converter.dead_time", "-10 ns")),
    Case("zero-r-th-ca", "design", "components[1].r_th_ca", ("greater than zero",),
         edit=_set("design:components[1].r_th_ca", "0 K/W")),
    Case("zero-parallel", "design", "components[0].parallel", ("whole number",),
         edit=_set("design:components[0].parallel", 0)),
    Case("zero-r-th-part", "t-cout", "thermal.r_th", ("greater than zero",),
         edit=_set("t-cout:thermal.r_th", "0 K/W")),
    Case("negative-esr", "t-cout", "electrical.esr", ("negative",),
         edit=_set("t-cout:electrical.esr", "-5 mohm")),
    Case("negative-v-f0", "t-diode", "electrical.v_f0", ("negative",),
         edit=_set("t-diode:electrical.v_f0", "-0.4 V")),
    Case("negative-margin", "policy", "rules[3].margin", ("negative",),
         edit=_set("policy:rules[3].margin", "-5 K")),
    Case("zero-factor", "policy", "rules[0].factor", ("(0, 1]",),
         edit=_set("policy:rules[0].factor", 0)),
    # a factor above 1 would allow a stress beyond the absolute maximum rating (issue 10)
    Case("factor-above-one", "policy", "rules[0].factor",
         ("rule 'mosfet-v_peak'", "absolute maximum"),
         edit=_set("policy:rules[0].factor", 1.2)),
    # --- min above max, nom outside --------------------------------------------------
    Case("min-above-max-design", "design", "operating.input_voltage",
         ("min (60 V) is above max (40 V)",),
         edit=lambda d: d["design"]["operating"].update(
             input_voltage={"min": "60 V", "max": "40 V"})),
    Case("min-above-max-part", "t-cin", "electrical.capacitance", ("above max",),
         edit=_set("t-cin:electrical.capacitance", {"min": "120 uF", "max": "80 uF"})),
    Case("nom-outside-range", "design", "converter.switching_frequency.nom",
         ("between min and max",),
         edit=_set("design:converter.switching_frequency.nom", "200 kHz")),
    Case("tolerance-100-percent", "t-ind", "electrical.inductance.tolerance",
         ("between 0 % and 100 %",),
         edit=_set("t-ind:electrical.inductance", {"nom": "10 uH", "tolerance": "120 %"})),
    # --- missing keys and parts ------------------------------------------------------
    Case("missing-required-key", "design", "operating.output_voltage", ("missing key",),
         edit=_set("design:operating.output_voltage", DELETE)),
    Case("missing-required-part-key", "t-fet", "electrical.r_ds_on", ("needs r_ds_on",),
         edit=_set("t-fet:electrical.r_ds_on", DELETE)),
    Case("part-not-in-library", "design", "components[2].part",
         ("not in any parts library",), edit=_swap_parts(2, "t-xfmr-missing")),
    Case("part-id-path-traversal", "design", "components[2].part", ("invalid part id",),
         edit=_swap_parts(2, "../parts/t-xfmr")),
    Case("part-id-not-file-stem", "t-ind", "id", ("file name stem",),
         edit=_set("t-ind:id", "t-ind-2")),
    # --- the BOM against the topology ------------------------------------------------
    Case("duplicate-designator", "design", "components[1].refs",
         ("duplicate designator 'Q1'", "components[0]"),
         edit=_set("design:components[1].refs", ["Q1", "D2"])),
    Case("duplicate-designator-same-entry", "design", "components[0].refs",
         ("listed twice",), edit=_set("design:components[0].refs", ["Q1", "Q2", "Q3", "Q1"])),
    Case("role-not-in-topology", "design", "components[5].role",
         ("is not part of a full-bridge",),
         edit=_set("design:components[5].role", "split-capacitor")),
    Case("unknown-role", "design", "components[0].role", ("did you mean 'switch'",),
         edit=_set("design:components[0].role", "swtich")),
    Case("part-wrong-kind-for-role", "design", "components[0].part",
         ("is a diode", "takes mosfet"), edit=_swap_parts(0, "t-diode")),
    Case("wrong-count-for-role", "design", "components[0].refs", ("4 'switch' position",),
         edit=_set("design:components[0].refs", ["Q1", "Q2", "Q3"])),
    # --- schema versions -------------------------------------------------------------
    Case("schema-design", "design", "schema", ("unknown schema version",),
         edit=_set("design:schema", "stresscheck.design/2")),
    Case("schema-part", "t-cin", "schema", ("unknown schema version",),
         edit=_set("t-cin:schema", "stresscheck.design/1")),
    Case("schema-policy", "policy", "schema", ("unknown schema version",),
         edit=_set("policy:schema", "stresscheck.policy/0")),
    # --- cannot regulate (RegulationError from the engine) ---------------------------
    Case("cannot-regulate-turns-ratio", "design", "operating",
         ("cannot regulate", "duty ratio"), parts_kw={"n_p": 20, "n_s": 2}),
    # --- policy content --------------------------------------------------------------
    Case("policy-no-rules", "policy", "rules", ("at least one",),
         edit=_set("policy:rules", DELETE)),
    Case("policy-factor-without-rating", "policy", "rules[0].factor",
         ("applies to a rating",),
         edit=lambda d: (d["policy"]["rules"][0].pop("rating"),
                         d["policy"]["rules"][0].update(limit="50 V"))),
    Case("policy-duplicate-rule-id", "policy", "rules[1].id", ("used twice",),
         edit=_set("policy:rules[1].id", "mosfet-v_peak")),
    Case("policy-empty-source", "policy", "rules[2].source", ("where it comes from",),
         edit=_set("policy:rules[2].source", "  ")),
    # --- command-line inputs ---------------------------------------------------------
    Case("unknown-builtin-policy", "comercial", None, ("did you mean 'commercial'",),
         extra_args=("--policy", "comercial")),
    Case("parts-folder-missing", "nowhere", None, ("does not exist",),
         extra_args=("--parts", "nowhere")),
]

PLAUSIBILITY_CASES = [
    Case("buck-output-above-input", "design", "operating.output_voltage",
         ("buck", "steps down"),
         edit=lambda d: (d["design"]["converter"].update(topology="buck"),
                         d["design"]["operating"].update(output_voltage="48 V"))),
    Case("buck-output-equal-input", "design", "operating.output_voltage", ("buck",),
         edit=lambda d: (d["design"]["converter"].update(topology="buck"),
                         d["design"]["operating"].update(output_voltage="40 V"))),
    Case("boost-output-below-input", "design", "operating.output_voltage",
         ("boost", "steps up"),
         edit=lambda d: d["design"]["converter"].update(topology="boost")),
    Case("zero-turns", "t-xfmr", "electrical.secondary_turns", ("greater than zero",),
         edit=_set("t-xfmr:electrical.secondary_turns", 0)),
    Case("negative-turns", "t-xfmr", "electrical.primary_turns", ("greater than zero",),
         edit=_set("t-xfmr:electrical.primary_turns", -4)),
    Case("negative-inductance", "t-ind", "electrical.inductance", ("greater than zero",),
         edit=_set("t-ind:electrical.inductance", "-10 uH")),
    Case("zero-magnetizing-inductance", "t-xfmr", "electrical.magnetizing_inductance",
         ("greater than zero",),
         edit=_set("t-xfmr:electrical.magnetizing_inductance", "0 H")),
    Case("negative-capacitance", "t-cout", "electrical.capacitance", ("greater than zero",),
         edit=_set("t-cout:electrical.capacitance", "-1000 uF")),
    Case("duty-out-of-reach", "design", "operating", ("cannot regulate",),
         parts_kw={"n_p": 12, "n_s": 2}),
    Case("bridge-max-duty-above-half", "design", "converter.max_duty", ("50 %",),
         edit=_set("design:converter.max_duty", "60 %")),
    Case("max-duty-100-percent", "design", "converter.max_duty", ("below 100 %",),
         edit=_set("design:converter.max_duty", "100 %")),
    Case("below-absolute-zero", "design", "operating.ambient_temperature.min",
         ("absolute zero",), edit=_set("design:operating.ambient_temperature.min",
                                       "-300 degC")),
    Case("implausible-magnitude", "t-fet", "ratings.v_ds", ("plausible", "unit prefix"),
         edit=_set("t-fet:ratings.v_ds", "1e30 V")),
    Case("surge-below-input", "design", "operating.input_surge", ("below the maximum",),
         edit=_set("design:operating.input_surge", "50 V")),
    Case("current-limit-below-load", "design", "operating.current_limit", ("below",),
         edit=_set("design:operating.current_limit", "9 A")),
    Case("dead-time-eats-period", "design", "converter.dead_time", ("no on-time",),
         edit=_set("design:converter.dead_time", "5 us")),
]


def _run_case(tmp_path: Path, case: Case):
    kw = dict(case.parts_kw)
    parts = bridge_parts(**kw) if kw else rich_parts()
    docs = {"design": rich_design(), "policy": commercial_policy(),
            **{pid: copy.deepcopy(sheet) for pid, sheet in parts.items()}}
    for pid in parts:
        docs[pid]["id"] = pid
    if case.edit is not None:
        case.edit(docs)
    inputs = write_inputs(tmp_path, docs["design"], {p: docs[p] for p in parts},
                          docs["policy"])
    for pid in parts:  # write_case sets id = file stem; keep an edited id
        inputs.parts[pid].write_text(tomli_w.dumps(docs[pid]), encoding="utf-8")
    targets = {"design": inputs.design, "policy": inputs.policy, **inputs.parts}
    if case.raw is not None:
        targets[case.target].write_bytes(case.raw)
    status, _, err = run_cli(inputs.args(*case.extra_args))
    path = targets.get(case.target, case.target)
    return status, err, path


@pytest.mark.parametrize("case", CASES, ids=[c.id for c in CASES])
def test_bad_input_is_reported(tmp_path, case):
    """Each malformed input of issue item 1 exits 2 with one line that names the file,
    the key (with the line where it can be found) and what was expected.

    Source: the project contract (CONTRACT.md: "a value of the wrong dimension is an
    error that names the file, the key and what was expected"; exit status 2 "the input
    is unusable") and the robustness issue's list of cases; "did you mean" suggestions
    and one-line messages are common practice for command-line tools.
    """
    status, err, path = _run_case(tmp_path, case)
    assert_input_error(status, err, path, case.key, *case.fragments)
    if case.line:
        assert re.search(r", line \d+", err), err


@pytest.mark.parametrize("case", PLAUSIBILITY_CASES, ids=[c.id for c in PLAUSIBILITY_CASES])
def test_implausible_input_is_reported(tmp_path, case):
    """Physically impossible inputs (issue item 2) exit 2 naming the key: a buck whose
    output is not below its input, a boost whose output is not above it, zero or negative
    turns and inductance, a duty ratio the topology cannot reach, temperatures below
    absolute zero, magnitudes no component has.

    Source: converter basics (buck D = Vo/Vin < 1, boost D = 1 - Vin/Vo > 0, each bridge
    switch conducts at most half a period), physics (absolute zero); the magnitude bound
    (1e-15 .. 1e15 SI) is this project's choice against unit-prefix mistakes.
    """
    status, err, path = _run_case(tmp_path, case)
    assert_input_error(status, err, path, case.key, *case.fragments)


def test_missing_design_and_folder_as_design(tmp_path):
    """A design path that does not exist, or is a folder, exits 2 naming it.

    Source: common practice for command-line tools.
    """
    status, _, err = run_cli(["check", tmp_path / "nope.toml", "--out", tmp_path / "o"])
    assert_input_error(status, err, tmp_path / "nope.toml", None, "not found")
    status, _, err = run_cli(["check", tmp_path, "--out", tmp_path / "o"])
    assert_input_error(status, err, tmp_path, None, "folder")


def test_messages_escape_control_characters(tmp_path):
    """A value echoed in a message has its control characters escaped, so a hostile
    file cannot send terminal escape sequences to the user's console.

    Source: common practice (terminal escape injection); the issue's "reports cannot be
    used to attack their readers" applied to the console.
    """
    docs = rich_design()
    docs["converter"]["topology"] = "\x1b[2Jfull-bridge"
    inputs = write_inputs(tmp_path, docs)
    status, _, err = run_cli(inputs.args())
    assert_input_error(status, err, inputs.design, "converter.topology")
    assert "\x1b" not in err and "\\x1b" in err


def test_huge_value_is_cut_in_message(tmp_path):
    """A 100 000-character value is refused with a message of bounded length.

    Source: common practice (error messages must stay readable).
    """
    docs = rich_design()
    docs["converter"]["switching_frequency"] = "9" * 100_000 + " kHz"
    inputs = write_inputs(tmp_path, docs)
    status, _, err = run_cli(inputs.args())
    assert_input_error(status, err, inputs.design, "converter.switching_frequency")
    assert len(err) < 600


def test_key_lines_point_at_the_key():
    """The line added to a message is the line that defines the key (or its table).

    Source: the issue ("the key (and line where the format gives one)").
    """
    text = tomli_w.dumps(rich_design())
    lines = text.splitlines()
    finder = KeyLines(text)
    for key in ("converter.topology", "operating.output_voltage", "components[3].part",
                "operating.input_voltage.min", "converter.switching_frequency.max"):
        n = finder.line(key)
        assert n is not None, key
        assert key.rsplit(".", 1)[-1] in lines[n - 1], (key, lines[n - 1])
    assert lines[finder.line("components[4]") - 1].strip() == "[[components]]"
    assert finder.line("operating.input_voltage.nonexistent") == finder.line(
        "operating.input_voltage")
    assert KeyLines('a = { b = 1, c = { d = 2 } }\n').line("a.c.d") == 1
