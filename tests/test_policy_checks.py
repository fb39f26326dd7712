"""Policy rules and check status (CONTRACT.md 'Derating policy' and results.json)."""

import numpy as np
import pytest

from stresscheck.checks import check_stress, exit_status
from stresscheck.corners import CornerSet
from stresscheck.evaluation import Stress
from stresscheck.parts import Part
from stresscheck.policy import Policy, Rule, load_policy


class _Comp:
    def __init__(self, part):
        self.part, self.role = part, "switch"


def fet(**ratings):
    return Part("p", "mosfet", "si", "", None, ratings=ratings, electrical={"r_ds_on": 0.01})


def corners(kinds):
    n = len(kinds)
    return CornerSet([f"c{i}" for i in range(n)], np.array(kinds, dtype=object),
                     {"input_voltage": np.arange(n, dtype=float)}, {"input_voltage": "V"})


def policy(*rules, marginal=0.9):
    return Policy("t", marginal, list(rules), None, "")


def stress(values, quantity="v_peak", part=None):
    v = np.asarray(values, dtype=float)
    return Stress("Q1", _Comp(part or fet(v_ds=100.0)), quantity, v, np.ones(v.size, bool))


RULE = Rule("mosfet-v_peak", "mosfet", "v_peak", "test", rating="v_ds", factor=0.8)


@pytest.mark.parametrize("peak,status", [(70.0, "pass"), (75.0, "marginal"), (81.0, "fail")])
def test_status_bands(peak, status):
    """allowed = factor × rating; marginal above marginal_above × allowed; fail above it."""
    c = check_stress(stress([10.0, peak, 20.0]), policy(RULE), corners(["steady"] * 3))
    assert c.allowed == 80.0 and c.ratio == pytest.approx(peak / 80.0)
    assert c.status == status and c.corner == "c1" and c.stress == peak


def test_missing_rating_is_unrated_never_pass():
    c = check_stress(stress([10.0], part=fet()), policy(RULE), corners(["steady"]))
    assert c.status == "unrated" and c.allowed is None
    assert exit_status([c]) == 1


def test_uncovered_quantity_is_info():
    c = check_stress(stress([1.0], quantity="p_loss"), policy(RULE), corners(["steady"]))
    assert c.status == "info" and exit_status([c]) == 0


def test_strictest_rule_governs():
    loose = Rule("loose", "mosfet", "v_peak", "test", rating="v_ds", factor=0.9)
    c = check_stress(stress([50.0]), policy(loose, RULE), corners(["steady"]))
    assert c.rule == "mosfet-v_peak" and c.allowed == 80.0


def test_stress_kind_rules_pick_the_worst_ratio_corner():
    """A transient rule looser than the steady one: the governing corner is the highest
    ratio, not necessarily the highest stress (MIL-DTL-917 style 0.6/0.8 pattern)."""
    steady = Rule("steady", "mosfet", "v_peak", "t", rating="v_ds", factor=0.6,
                  stress_kinds=("steady",))
    transient = Rule("transient", "mosfet", "v_peak", "t", rating="v_ds", factor=0.8,
                     stress_kinds=("transient",))
    c = check_stress(stress([58.0, 70.0]), policy(steady, transient),
                     corners(["steady", "transient"]))
    assert c.corner == "c0" and c.rule == "steady" and c.ratio == pytest.approx(58 / 60)


def test_temperature_rule_margin_and_limit():
    rule = Rule("t", "mosfet", "t_j", "t", rating="t_j_max", margin=25.0, limit=125.0)
    assert rule.allowed(fet(t_j_max=175.0)) == 125.0
    assert rule.allowed(fet(t_j_max=140.0)) == 115.0


def test_not_computed_is_never_a_pass():
    c = check_stress(stress([np.nan, 1.0]), policy(RULE), corners(["steady"] * 2))
    assert c.status == "not-computed" and exit_status([c]) == 1


def test_builtin_policy_every_rule_has_a_source():
    p = load_policy("commercial")
    assert p.rules and all(r.source.strip() for r in p.rules)
