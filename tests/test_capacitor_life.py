"""Capacitor life against a required life, the life cap, and ceramic self-heating
(issue 9 item 2: ``required_life``, the ``minimum`` rule form, ``capped``, ``t_rise``).

Sources, beside each check:
- Cosel Q&A "How to calculate electrolytic capacitor lifetime in case ambient
  temperature changing" (en.cosel.co.jp/technical/qanda/a0057.html), worked example: a
  capacitor rated 105 °C with a basic life of 1,000 h has an estimated life of
  64,000 h at 45 °C, 32,000 h at 55 °C and 16,000 h at 65 °C; eight hours a day at each
  is equivalent to a constant 57.2 °C.
- the ×2-per-10 K rule and ripple self-heating adding to the core temperature: Illinois
  Capacitor life calculators, TDK electronics primer vol. 7, Chemi-Con FAQ
  (docs/derating-sources.md §7, S20).
- polymer ×10 per 20 K: polymer makers' notes, FROM MEMORY (docs/derating-sources.md §8
  marks it MEMORY, medium confidence).
- the 15-year cap of life estimates (seal and electrolyte loss end the life whatever the
  temperature): common practice, from memory.
- ceramic self-heating at most 20 K: TDK capacitor FAQ on allowable ripple
  (docs/derating-sources.md §11, S18); common practice.
- ΔT = I_rms²·ESR·R_th: Joule loss through a thermal resistance (any heat-transfer
  text; the steady state of a single thermal resistance).
"""

from __future__ import annotations

import numpy as np
import pytest

from builders import write_case
from builders_buck_boost import cell_design, cell_parts
from stresscheck.checks import check_stress, run_checks
from stresscheck.corners import CornerSet
from stresscheck.design import load_design
from stresscheck.devices.capacitor import capacitor_life
from stresscheck.engine import Stress, run
from stresscheck.errors import InputError
from stresscheck.parts import Part
from stresscheck.policy import Policy, Rule, load_policy

HOUR = 3600.0  # [s]
YEAR = 365.25 * 24 * HOUR  # [s] Julian year
HEAD = 'schema = "stresscheck.policy/1"\nname = "mine"\n'
LIFE_RULE = Rule("life", "capacitor", "life", "t", minimum_from="required_life")


# ------------------------------------------------------------------ the life relation

def test_wet_electrolytic_life_matches_the_cosel_worked_example():
    """Cosel Q&A a0057: 105 °C / 1,000 h part -> 64,000 h at 45 °C, 32,000 h at 55 °C,
    16,000 h at 65 °C (exact powers of two: compared to 1e-12)."""
    life = capacitor_life("al-electrolytic", 1000 * HOUR, 105.0,
                          np.array([45.0, 55.0, 65.0]))
    np.testing.assert_allclose(life / HOUR, [64000.0, 32000.0, 16000.0], rtol=1e-12)


def test_equivalent_ambient_of_the_cosel_compound_example():
    """Cosel Q&A a0057: 8 h a day at each of 45, 55 and 65 °C wears the part like a
    constant 57.2 °C. Compound life L = 24 / Σ(8/L_i); the life model at 57.2 °C must
    give it within the rounding of the example's 0.1 °C (2^(0.05/10) − 1 = 0.35 %)."""
    compound = 24 / (8 / 64000 + 8 / 32000 + 8 / 16000)  # [h]
    life = capacitor_life("al-electrolytic", 1000 * HOUR, 105.0, np.array([57.2]))
    assert life[0] / HOUR == pytest.approx(compound, rel=0.0035)


def test_polymer_tenfold_per_20_k_from_memory():
    """Polymer: ×10 per 20 K below T_max (FROM MEMORY, docs/derating-sources.md §8):
    2,000 h at 105 °C -> 2000·10^1.5 = 63,246 h at 75 °C."""
    life = capacitor_life("al-polymer", 2000 * HOUR, 105.0, np.array([75.0]))
    assert life[0] / HOUR == pytest.approx(2000 * 10 ** 1.5, rel=1e-12)


def test_life_beyond_fifteen_years_is_the_cap():
    """The 15-year cap (common practice, from memory): 1,000 h at 105 °C would be
    1000·2^8 h = 29.2 years at 25 °C; the model gives the cap, never more."""
    life = capacitor_life("al-electrolytic", 1000 * HOUR, 105.0, np.array([25.0, 95.0]))
    assert life[0] == pytest.approx(15 * YEAR, rel=1e-12)
    assert life[1] == pytest.approx(2000 * HOUR, rel=1e-12)


# ------------------------------------------------------------------ through the engine

def buck(tmp_path, *, required=None, cout_tech="al-electrolytic", life="2000 h",
         esr_in="3 mohm", cin_r_th="50 K/W", ambient=None, drop=()):
    """The test buck with a wet electrolytic output capacitor (ESR 5 mΩ, 20 K/W, 105 °C)
    and a class-2 ceramic input capacitor; ``drop`` removes (sheet section, key) pairs."""
    parts = cell_parts(esr_in=esr_in)
    parts["t-cout"]["technology"] = cout_tech
    parts["t-cout"]["ratings"]["life"] = life
    parts["t-cin"]["thermal"]["r_th"] = cin_r_th
    for section, key in drop:
        parts["t-cin"][section].pop(key)
    doc = cell_design("buck", ambient=ambient or {"min": "0 degC", "max": "85 degC"})
    if required is not None:
        doc["operating"]["required_life"] = required
    return load_design(write_case(tmp_path, doc, parts))


def rows(ev, ref, quantity):
    (s,) = [s for s in ev.stresses if s.ref == ref and s.quantity == quantity]
    return s


def test_life_uses_the_hot_spot_with_ripple_self_heating(tmp_path):
    """Life at each corner = L0·2^((T_max − T_hs)/10 K) with the hot spot
    T_hs = T_a + I_rms²·ESR·R_th (S20: the ripple current's internal heating raises the
    core temperature that the ×2-per-10 K rule reads). Compared to 1e-9: the same
    relations on the engine's own rms current."""
    ev = run(buck(tmp_path))
    t_a = ev.corners["ambient_temperature"]
    steady = rows(ev, "C2", "life").applicable
    i_rms = rows(ev, "C2", "i_ripple_rms").values
    t_hs = t_a + i_rms ** 2 * 0.005 * 20.0
    want = 2000 * HOUR * 2.0 ** ((105.0 - t_hs) / 10.0)
    want = np.minimum(want, 15 * YEAR)
    got = rows(ev, "C2", "life").values
    np.testing.assert_allclose(got[steady], want[steady], rtol=1e-9)
    assert (t_hs[steady] > t_a[steady]).all()  # the ripple heats the part


def test_required_life_rule_ratio_is_minimum_over_life(tmp_path):
    """commercial's life rule: ratio = required_life / life at the corner with the
    shortest life (the hottest), > 1 fails; rating_needed = rated life × ratio, and a
    part with that rated life sits at ratio 1 (life is proportional to its rating
    below the cap)."""
    policy = load_policy("commercial")
    ev = run(buck(tmp_path / "a", required="20000 h"))
    (c,) = [c for c in run_checks(ev, policy) if c.ref == "C2" and c.quantity == "life"]
    life = rows(ev, "C2", "life")
    shortest = np.nanmin(np.where(life.applicable, life.values, np.nan))
    assert c.stress == pytest.approx(shortest) and c.capped is False
    assert c.allowed == pytest.approx(20000 * HOUR)
    assert c.ratio == pytest.approx(20000 * HOUR / shortest)
    assert c.rule == "capacitor-life-required" and c.rating_key == "life"
    assert c.rating == pytest.approx(2000 * HOUR)
    want = "fail" if c.ratio > 1 else "marginal" if c.ratio > 0.9 else "pass"
    assert c.status == want
    assert c.rating_needed == pytest.approx(2000 * HOUR * c.ratio)
    needed_h = f"{c.rating_needed / HOUR:.6f} h"
    ev2 = run(buck(tmp_path / "b", required="20000 h", life=needed_h))
    (c2,) = [c for c in run_checks(ev2, policy) if c.ref == "C2" and c.quantity == "life"]
    assert c2.ratio == pytest.approx(1.0, rel=1e-6)


def test_short_life_fails_and_long_requirement_cannot_be_met(tmp_path):
    """A requirement above the life fails; one above the 15-year cap can be met by no
    rated life (rating_needed None, with the reason)."""
    policy = load_policy("commercial")
    ev = run(buck(tmp_path / "a", required="200000 h"))  # 22.8 years
    (c,) = [c for c in run_checks(ev, policy) if c.ref == "C2" and c.quantity == "life"]
    assert c.status == "fail" and c.ratio > 1
    assert c.rating_needed is None and "15-year cap" in c.note


def test_without_required_life_life_stays_info_and_says_why(tmp_path):
    policy = load_policy("commercial")
    ev = run(buck(tmp_path))
    (c,) = [c for c in run_checks(ev, policy) if c.ref == "C2" and c.quantity == "life"]
    assert c.status == "info" and c.allowed is None and c.ratio is None
    assert "required_life" in c.note
    life = rows(ev, "C2", "life")
    assert c.stress == pytest.approx(np.nanmin(np.where(life.applicable, life.values,
                                                        np.nan)))  # the worst corner


def test_capped_life_is_flagged_and_its_ratio_conservative(tmp_path):
    """Cool enough that every corner reaches the 15-year cap: stress = the cap (an
    underestimate of the life, so the ratio required/cap overstates the stress: the
    conservative side), ``capped`` true, a note saying so."""
    policy = load_policy("commercial")
    ev = run(buck(tmp_path, required="50000 h", life="20000 h",
                  ambient={"min": "0 degC", "max": "25 degC"}))
    (c,) = [c for c in run_checks(ev, policy) if c.ref == "C2" and c.quantity == "life"]
    assert c.capped is True and c.stress == pytest.approx(15 * YEAR)
    assert c.ratio == pytest.approx(50000 * HOUR / (15 * YEAR))
    assert c.status == "pass" and "15-year cap" in c.note
    assert c.as_dict()["capped"] is True
    other = [c for c in run_checks(ev, policy) if c.quantity == "v_peak"]
    assert all("capped" not in c.as_dict() for c in other)


@pytest.mark.parametrize("factor,shorter", [(0.5, True), (2.0, False)])
def test_measured_life_bound_takes_the_shorter_life(tmp_path, factor, shorter):
    """[[measured]] mode "bound" makes a stress at least as bad as measured: for life
    (more is better) the shorter of the computed and the measured life."""
    policy = load_policy("commercial")
    design = buck(tmp_path / "a", required="20000 h")
    (plain,) = [c for c in run_checks(run(design), policy)
                if c.ref == "C2" and c.quantity == "life"]
    path = design.path
    text = path.read_text(encoding="utf-8")
    value = plain.stress * factor / HOUR
    path.write_text(text + f'\n[[measured]]\nref = "C2"\nquantity = "life"\n'
                    f'value = "{value!r} h"\nmode = "bound"\n', encoding="utf-8")
    (c,) = [c for c in run_checks(run(load_design(path)), policy)
            if c.ref == "C2" and c.quantity == "life"]
    want = plain.stress * factor if shorter else plain.stress
    assert c.stress == pytest.approx(want, rel=1e-9) and c.basis == "measured"


# ------------------------------------------------------------------ the rule form

def _corners(n):
    return CornerSet([f"c{i}" for i in range(n)], np.array(["steady"] * n, dtype=object),
                     {"input_voltage": np.arange(n, dtype=float)}, {"input_voltage": "V"})


class _Comp:
    def __init__(self, part):
        self.part, self.role = part, "output-capacitor"


def test_minimum_form_by_hand():
    """A fixed minimum of 10,000 h against lives of 40,000 h and 8,000 h: the shorter
    governs, ratio 10000/8000 = 1.25, fail; against 12,000 h, ratio 0.833, pass."""
    cap = Part("p", "capacitor", "al-electrolytic", "", None,
               ratings={"life": 2000 * HOUR}, electrical={})
    rule = Rule("m", "capacitor", "life", "t", minimum=10000 * HOUR)
    policy = Policy("t", 0.9, [rule], None, "")
    s = Stress("C1", _Comp(cap), "life", np.array([40000.0, 8000.0]) * HOUR,
               np.ones(2, bool))
    c = check_stress(s, policy, _corners(2))
    assert c.corner == "c1" and c.ratio == pytest.approx(1.25) and c.status == "fail"
    assert c.rating_needed == pytest.approx(2500 * HOUR)
    s = Stress("C1", _Comp(cap), "life", np.array([40000.0, 12000.0]) * HOUR,
               np.ones(2, bool))
    c = check_stress(s, policy, _corners(2))
    assert c.ratio == pytest.approx(10 / 12) and c.status == "pass"
    assert rule.form() == "at least 10000 h"
    assert LIFE_RULE.form() == "at least the design's [operating] required_life"


def write_policy(tmp_path, text):
    path = tmp_path / "policy.toml"
    path.write_text(HEAD + text, encoding="utf-8")
    return path


def test_policy_reads_both_minimum_forms(tmp_path):
    path = write_policy(tmp_path, '[[rules]]\nkind = "capacitor"\nquantity = "life"\n'
                        'minimum = "50000 h"\nsource = "x"\n[[rules]]\nid = "d"\n'
                        'kind = "capacitor"\nquantity = "life"\n'
                        'minimum = "required_life"\nsource = "x"\n')
    fixed, design = load_policy(str(path)).rules
    assert fixed.minimum == pytest.approx(50000 * HOUR) and fixed.minimum_from is None
    assert design.minimum is None and design.minimum_from == "required_life"

    class D:
        required_life = 7.0
    assert load_policy(str(path)).bind(D()).rules[1].minimum == 7.0


@pytest.mark.parametrize("body,key,words", [
    ('quantity = "life"\nrating = "life"\nfactor = 0.5\n', "rules[0].minimum",
     "more is better"),
    ('quantity = "life"\nminimum = "required_life"\nfactor = 0.5\n', "rules[0].factor",
     "only minimum"),
    ('quantity = "v_peak"\nrating = "v_rated"\nfactor = 0.5\nminimum = "5 V"\n',
     "rules[0].minimum", "more is better"),
    ('quantity = "life"\nminimum = "5 V"\n', "rules[0].minimum", ""),
    ('quantity = "life"\nminimum = "0 h"\n', "rules[0].minimum", "greater than zero"),
])
def test_bad_life_rules_are_refused_naming_the_key(tmp_path, body, key, words):
    path = write_policy(tmp_path, f'[[rules]]\nkind = "capacitor"\n{body}source = "x"\n')
    with pytest.raises(InputError) as exc:
        load_policy(str(path))
    assert exc.value.key == key and words in str(exc.value)


@pytest.mark.parametrize("value,words", [("50000 V", "time"), ("10 s", "plausible")])
def test_bad_required_life_is_refused(tmp_path, value, words):
    with pytest.raises(InputError) as exc:
        buck(tmp_path, required=value)
    assert exc.value.key == "operating.required_life" and words in str(exc.value)


def test_uncovered_kinds_count_only_the_technologies_a_quantity_exists_for():
    """life exists for wet and polymer aluminium, t_rise for ceramics: a pack with no
    rule on them lists exactly those; commercial covers both."""
    assert load_policy("commercial").uncovered_kinds().count("capacitor.life") == 0
    rac = load_policy("rac-benign").uncovered_kinds()
    assert "capacitor.life" in rac and "capacitor.t_rise" in rac
    assert not any(k.startswith("capacitor.t_rise[") for k in rac)


# ------------------------------------------------------------------ ceramic self-heating

def test_ceramic_self_heating_is_joule_loss_times_r_th(tmp_path):
    """t_rise = I_rms²·ESR·R_th (3 mΩ, 50 K/W) at each corner, the hot spot's rise above
    the ambient; commercial limits it to 20 K (TDK FAQ, S18): ratio = t_rise / 20 K."""
    ev = run(buck(tmp_path))
    rise = rows(ev, "C1", "t_rise")
    i_rms = rows(ev, "C1", "i_ripple_rms").values
    ok = rise.applicable
    np.testing.assert_allclose(rise.values[ok], (i_rms ** 2 * 0.003 * 50.0)[ok],
                               rtol=1e-12)
    hot = rows(ev, "C1", "t_hotspot").values - ev.corners["ambient_temperature"]
    np.testing.assert_allclose(rise.values[ok], hot[ok], rtol=1e-9, atol=1e-9)
    (c,) = [c for c in run_checks(ev, load_policy("commercial"))
            if c.ref == "C1" and c.quantity == "t_rise"]
    assert c.unit == "K" and c.allowed == 20.0 and c.rule == "capacitor-t_rise-ceramic"
    assert c.ratio == pytest.approx(np.max(rise.values[ok]) / 20.0)
    assert not [s for s in ev.stresses if s.ref == "C2" and s.quantity == "t_rise"]


def test_ceramic_self_heating_above_20_k_fails(tmp_path):
    """A lossy ceramic (0.3 Ω, 500 K/W) heats by more than 20 K: fail, not a pass."""
    ev = run(buck(tmp_path, esr_in="300 mohm", cin_r_th="500 K/W"))
    (c,) = [c for c in run_checks(ev, load_policy("commercial"))
            if c.ref == "C1" and c.quantity == "t_rise"]
    assert c.stress > 20.0 and c.status == "fail"


def test_measured_self_heating_replaces_the_computed_one(tmp_path):
    """A [[measured]] t_rise (thermocouple on the part) in kelvin stands for the
    computed value and is checked against the same 20 K."""
    design = buck(tmp_path)
    path = design.path
    path.write_text(path.read_text(encoding="utf-8") + '\n[[measured]]\nref = "C1"\n'
                    'quantity = "t_rise"\nvalue = "25 K"\n', encoding="utf-8")
    (c,) = [c for c in run_checks(run(load_design(path)), load_policy("commercial"))
            if c.ref == "C1" and c.quantity == "t_rise"]
    assert c.stress == pytest.approx(25.0) and c.status == "fail"
    assert c.basis == "measured"


@pytest.mark.parametrize("drop,words", [(("electrical", "esr"), "ESR"),
                                        (("thermal", "r_th"), "r_th")])
def test_ceramic_self_heating_without_esr_or_r_th_is_not_computed(tmp_path, drop, words):
    ev = run(buck(tmp_path, drop=(drop,)))
    (c,) = [c for c in run_checks(ev, load_policy("commercial"))
            if c.ref == "C1" and c.quantity == "t_rise"]
    assert c.status == "not-computed" and words in c.note


# ------------------------------------------------------------------ shown as "> 15 years"

def test_capped_life_is_shown_as_more_than_15_years_everywhere(tmp_path):
    """A required life beyond the cap fails; the terminal, the HTML report, checks.csv
    and the spreadsheet show the capped life as "> 15 years", never as a figure, while
    results.json keeps the cap [s] with ``capped`` true."""
    import csv
    import json

    import openpyxl

    from test_input_errors import run_cli
    path = buck(tmp_path, required="150000 h", life="20000 h",
                ambient={"min": "0 degC", "max": "25 degC"}).path
    status, out, err = run_cli(["check", path, "--out", tmp_path / "out"])
    assert status == 1, err
    assert "life" in out and "(life > 15 years)" in out
    results = json.loads((tmp_path / "out" / "results.json").read_text(encoding="utf-8"))
    (c,) = [c for c in results["checks"] if c["ref"] == "C2" and c["quantity"] == "life"]
    assert c["capped"] is True and c["stress"] == pytest.approx(15 * YEAR)
    assert c["status"] == "fail" and c["allowed"] == pytest.approx(150000 * HOUR)
    html = (tmp_path / "out" / "report.html").read_text(encoding="utf-8")
    assert "&gt; 15 years" in html and "131\u202f490 h" not in html
    with open(tmp_path / "out" / "checks.csv", encoding="utf-8", newline="") as fh:
        (row,) = [r for r in csv.DictReader(fh) if r["ref"] == "C2"
                  and r["quantity"] == "life"]
    assert row["stress [unit]"] == "> 15 years" and row["unit"] == "h"
    assert float(row["margin [unit] (allowed − stress)"]) == pytest.approx(
        15 * YEAR / HOUR - 150000)  # life: value − minimum, negative when failing
    ws = openpyxl.load_workbook(tmp_path / "out" / "report.xlsx")["Checks"]
    head = [cell.value for cell in ws[1]]
    cells = [[cell.value for cell in r] for r in ws.iter_rows(min_row=2)]
    (xrow,) = [r for r in cells if r[head.index("ref")] == "C2"
               and r[head.index("quantity")] == "life"]
    assert xrow[head.index("stress [unit]")] == "> 15 years"
