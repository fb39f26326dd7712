"""Rule forms, refusal of factors above 1, inheritance (extends), stress kinds and
rating_needed (CONTRACT.md, "Derating policy" and "Extensions in this version")."""

from pathlib import Path

import numpy as np
import pytest

from stresscheck.checks import check_stress, run_checks
from stresscheck.corners import CornerSet
from stresscheck.design import load_design
from stresscheck.engine import Stress, run
from stresscheck.errors import InputError
from stresscheck.parts import Part
from stresscheck.policy import Policy, Rule, load_policy
from test_input_errors import run_cli

ROOT = Path(__file__).resolve().parent.parent
FLYBACK = ROOT / "examples" / "flyback-48v-12v" / "design.toml"
HEAD = 'schema = "stresscheck.policy/1"\nname = "mine"\n'


class _Comp:
    def __init__(self, part, role="switch"):
        self.part, self.role = part, role


def part(kind="mosfet", tech="si", **ratings):
    return Part("p", kind, tech, "", None, ratings=ratings, electrical={})


def corners(kinds, ambient=None):
    n = len(kinds)
    cols = {"input_voltage": np.arange(n, dtype=float)}
    if ambient is not None:
        cols["ambient_temperature"] = np.asarray(ambient, dtype=float)
    return CornerSet([f"c{i}" for i in range(n)], np.array(kinds, dtype=object), cols,
                     {k: "V" for k in cols})


def check(values, rules, kinds=None, quantity="v_peak", p=None, temps=None):
    v = np.asarray(values, dtype=float)
    kinds = kinds or ["steady"] * v.size
    s = Stress("X1", _Comp(p or part(v_ds=100.0)), quantity, v, np.ones(v.size, bool))
    return check_stress(s, Policy("t", 0.9, list(rules), None, ""), corners(kinds), temps)


def write_policy(tmp_path, text, name="policy.toml"):
    path = tmp_path / name
    path.write_text(HEAD + text, encoding="utf-8")
    return path


# ------------------------------------------------------------------ factor above 1


@pytest.mark.parametrize("body,key", [
    ('[[rules]]\nid = "loose"\nkind = "mosfet"\nquantity = "v_peak"\nrating = "v_ds"\n'
     'factor = 1.5\nsource = "x"\n', "rules[0].factor"),
    ('[[rules]]\nid = "loose"\nkind = "capacitor"\nquantity = "v_peak"\nrating = "v_rated"\n'
     'factor_vs_temperature = [{ temperature = "25 degC", factor = 1.0 }, '
     '{ temperature = "85 degC", factor = 1.2 }]\nsource = "x"\n',
     "rules[0].factor_vs_temperature[1].factor"),
])
def test_factor_above_one_is_refused_naming_the_rule(tmp_path, body, key):
    """No rule may allow a stress beyond the absolute maximum rating (issue 10 item 3)."""
    path = write_policy(tmp_path, body)
    with pytest.raises(InputError) as exc:
        load_policy(str(path))
    assert exc.value.key == key and "rule 'loose'" in str(exc.value)
    status, out, err = run_cli(["check", FLYBACK, "--policy", path, "--out",
                                tmp_path / "out"])
    assert status == 2 and "rule 'loose'" in err and "above the absolute maximum" in err
    assert not (tmp_path / "out").exists()


def test_factor_of_one_is_accepted(tmp_path):
    path = write_policy(tmp_path, '[[rules]]\nkind = "mosfet"\nquantity = "v_peak"\n'
                        'rating = "v_ds"\nfactor = 1\nsource = "x"\n')
    assert load_policy(str(path)).rules[0].factor == 1.0


# ------------------------------------------------------------------ forms


def test_fixed_limit_never_above_the_rating():
    """A fixed limit (RAC: diode junction at most 95 degC) is capped at the part's own
    rating: a 85 degC part is allowed 85 degC, not 95."""
    rule = Rule("tj", "diode", "t_j", "t", limit=95.0)
    assert rule.allowed(part("diode", "general", t_j_max=150.0)) == 95.0
    assert rule.allowed(part("diode", "general", t_j_max=85.0)) == 85.0
    assert rule.allowed(part("diode", "general")) == 95.0


def test_temperature_curve_per_corner():
    """Tantalum voltage from 50 % at 85 degC to 33 % at 125 degC (a maker-style curve):
    allowed follows the ambient of each corner; the governing corner is the highest
    ratio, here the hot one although its stress is lower."""
    rule = Rule("ta", "capacitor", "v_peak", "t", rating="v_rated",
                curve=((85.0, 0.5), (125.0, 0.33)))
    cap = part("capacitor", "tantalum", v_rated=25.0)
    ambient = np.array([25.0, 105.0])
    c = check([12.0, 10.5], [rule], p=cap, temps={"ambient": ambient})
    # allowed: 12.5 V at 25 degC; 25 × (0.5 - 0.17 × 20/40) = 10.375 V at 105 degC
    assert c.corner == "c1" and c.allowed == pytest.approx(10.375)
    assert c.status == "fail" and c.ratio == pytest.approx(10.5 / 10.375)
    # rating needed: the larger of 12 / 0.5 and 10.5 / 0.415
    assert c.rating_needed == pytest.approx(max(12 / 0.5, 10.5 / 0.415))


def test_temperature_curve_above_last_point_fails():
    rule = Rule("ta", "capacitor", "v_peak", "t", rating="v_rated",
                curve=((85.0, 0.5), (125.0, 0.33)))
    cap = part("capacitor", "tantalum", v_rated=25.0)
    c = check([1.0], [rule], p=cap, temps={"ambient": np.array([130.0])})
    assert c.status == "fail" and c.rating_needed is None
    assert "above the last point" in c.note


def test_device_temperature_curve_not_computed_is_never_a_pass():
    rule = Rule("ta", "capacitor", "v_peak", "t", rating="v_rated",
                curve=((85.0, 0.5), (125.0, 0.33)), temperature="device")
    cap = part("capacitor", "tantalum", v_rated=25.0)
    c = check([1.0], [rule], p=cap, temps={"ambient": np.array([25.0]), "device": None})
    assert c.status == "not-computed"


@pytest.mark.parametrize("rule,stress,needed", [
    (Rule("f", "mosfet", "v_peak", "t", rating="v_ds", factor=0.8), 60.0, 75.0),
    (Rule("m", "mosfet", "t_j", "t", rating="t_j_max", margin=25.0, limit=125.0), 100.0,
     125.0),
    (Rule("m", "mosfet", "t_j", "t", rating="t_j_max", margin=25.0, limit=125.0), 130.0,
     None),
    (Rule("l", "mosfet", "t_j", "t", limit=125.0), 110.0, 110.0),
])
def test_rating_needed_inverts_each_form(rule, stress, needed):
    """stress / factor; stress + margin (none if above a fixed limit); the stress itself
    for a limit capped at the rating."""
    q = rule.quantity
    c = check([stress], [rule], quantity=q, p=part(v_ds=100.0, t_j_max=150.0))
    assert c.rating_needed == (pytest.approx(needed) if needed is not None else None)
    if needed is not None:  # a part of exactly that rating is at ratio 1
        exact = part(v_ds=needed, t_j_max=needed)
        assert check([stress], [rule], quantity=q, p=exact).ratio == pytest.approx(1.0)


def test_rating_needed_reported_for_unrated_rows():
    c = check([60.0], [Rule("f", "mosfet", "v_peak", "t", rating="v_ds", factor=0.8)],
              p=part())
    assert c.status == "unrated" and c.rating_needed == pytest.approx(75.0)


# ------------------------------------------------------------------ stress kinds


def test_transient_stress_meets_its_own_limit():
    """MIL-DTL-917 Table XIX (FET): repetitive peak 70 %, non-repetitive 80 % of the
    rating. A surge of 71 V on a 100 V part passes its own 80 V limit although it is
    above the steady 70 V; 81 V fails."""
    mil = load_policy("mil-dtl-917")
    rules = mil.rules_for(part(v_ds=100.0), "v_peak")
    ok = check([60.0, 71.0], rules, kinds=["steady", "transient"])
    assert ok.status == "pass" and ok.corner == "c1" and ok.stress_kind == "transient"
    assert ok.ratio == pytest.approx(71 / 80) and ok.rule == "mosfet-v_peak-surge"
    bad = check([60.0, 81.0], rules, kinds=["steady", "transient"])
    assert bad.status == "fail" and bad.stress_kind == "transient"
    assert bad.rule == "mosfet-v_peak-surge" and bad.allowed == pytest.approx(80.0)


def test_stress_kinds_end_to_end_on_the_flyback_example():
    """The flyback example has an input surge and a current limit: each corner's stress
    is held to its own kind's factor (MIL-DTL-917 Table XIX: 0.7 / 0.8 on V_DS; 0.6 /
    0.8 on drain current)."""
    ev = run(load_design(FLYBACK))
    checks = {(c.ref, c.quantity): c for c in run_checks(ev, load_policy("mil-dtl-917"))}
    kinds = ev.corners.kind
    stress = {s.quantity: s for s in ev.stresses if s.ref == "Q1"}
    v_ds = stress["v_peak"].component.part.ratings["v_ds"]
    i_d = stress["v_peak"].component.part.ratings["i_d"]
    factor_v = np.where(kinds == "transient", 0.8, 0.7)
    expected = np.max(stress["v_peak"].values / (factor_v * v_ds))
    assert checks[("Q1", "v_peak")].ratio == pytest.approx(expected, rel=1e-12)
    s = stress["i_rms"]
    factor_i = np.where(kinds == "overload", 0.8, 0.6)
    # i_d derated with the solved case temperature at each corner (devices/diode.py
    # derated_rating: linear to zero at T_j,max, common practice)
    i_d = s.ratings.get("i_d", i_d)
    expected_i = np.max(np.where(s.applicable, s.values / (factor_i * i_d), -np.inf))
    assert checks[("Q1", "i_rms")].ratio == pytest.approx(expected_i, rel=1e-12)
    assert set(kinds) >= {"steady", "overload", "transient"}


# ------------------------------------------------------------------ extends


def test_extends_replaces_same_kind_technology_quantity_and_adds_the_rest(tmp_path):
    path = write_policy(tmp_path, 'extends = "rac-severe"\n'
                        '[[rules]]\nid = "mine-cer"\nkind = "capacitor"\n'
                        'technology = ["ceramic-class2", "ceramic-class1"]\n'
                        'quantity = "v_peak"\nrating = "v_rated"\nfactor = 0.5\n'
                        'source = "house rule"\n'
                        '[[rules]]\nkind = "mosfet"\nquantity = "v_peak"\nrating = "v_ds"\n'
                        'factor = 0.75\nsource = "house rule"\n')
    p = load_policy(str(path))
    base = load_policy("rac-severe")
    ids = [r.id for r in p.rules]
    assert "capacitor-v_peak-ceramic" not in ids and "mine-cer" in ids
    assert "mosfet-v_peak" in ids
    assert len(p.rules) == len(base.rules) + 1
    assert p.marginal_above == base.marginal_above and p.extends == "rac-severe"
    assert p.details()["extends"] == "rac-severe"
    assert not any(u.startswith("mosfet.v_peak") for u in p.uncovered_kinds())


def test_extends_replaces_every_stress_kind_rule_of_that_quantity(tmp_path):
    path = write_policy(tmp_path, 'extends = "mil-dtl-917"\n'
                        '[[rules]]\nkind = "mosfet"\nquantity = "v_peak"\nrating = "v_ds"\n'
                        'factor = 0.75\nsource = "house rule"\n')
    rules = load_policy(str(path)).rules
    assert [r.id for r in rules if r.quantity == "v_peak"] == ["mosfet-v_peak"]


@pytest.mark.parametrize("extends,fragment", [
    ('"no-such-pack"', "no built-in policy"),
    ('"policy.toml"', "extends itself"),
    ("3", "expected the name"),
])
def test_bad_extends_is_refused(tmp_path, extends, fragment):
    path = write_policy(tmp_path, f"extends = {extends}\n")
    status, _, err = run_cli(["check", FLYBACK, "--policy", path, "--out", tmp_path / "o"])
    assert status == 2 and "extends" in err and fragment in err


# ------------------------------------------------------------------ CLI


def test_policies_lists_every_pack():
    status, out, _ = run_cli(["policies"])
    assert status == 0
    names = [line.split("\t")[0] for line in out.splitlines()]
    assert "commercial" in names and "eee-inst-002-level1" in names
    assert "rac-severe" in names and "sd-18-ql1-normal" in names
    assert all(len(line.split("\t")) == 3 for line in out.splitlines())


def test_policy_show_prints_rule_by_rule():
    status, out, _ = run_cli(["policy", "show", "eee-inst-002-level1"])
    assert status == 0
    rules = [line for line in out.splitlines() if line.startswith("rule ")]
    assert len(rules) == len(load_policy("eee-inst-002-level1").rules)
    ta = next(line for line in rules if line.startswith("rule capacitor-v_peak-tantalum"))
    assert "read in a published copy" in ta and "Table 4" in ta
    assert "from_memory: yes" in out and "uncovered: " in out
    status, _, err = run_cli(["policy", "show", "nope"])
    assert status == 2 and "nope" in err


def test_uncovered_and_from_memory_in_summary_and_report_header(tmp_path):
    status, out, _ = run_cli(["check", FLYBACK, "--policy", "eee-inst-002-level1",
                              "--out", tmp_path])
    assert "leaves uncovered" in out and "mosfet.i_peak" in out
    assert "from memory" in out
    html = (tmp_path / "report.html").read_text(encoding="utf-8")
    assert "some rules from memory" in html and "leaves uncovered: " in html
