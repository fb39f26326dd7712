"""Monte Carlo sampling (check --samples), RSS estimate and sensitivities.

Closed-form references:
- a stress linear in one uniform input U on [a, b] has quantile a + q·(b − a) and
  exceedance share (b − x)/(b − a) (definition of the uniform distribution);
- the sampling error of a share p from n samples is √(p(1 − p)/n) (binomial), of a
  q-quantile √(q(1 − q)/n)/f (f the density) — any statistics text, e.g. Rice,
  Mathematical Statistics and Data Analysis, 3rd ed., §5.3 and §10.4.2 (from memory);
  tolerances below are 4 such standard errors;
- the buck inductor ripple Δi = (V_g − V)·D·T_s/L with D = V/V_g (Erickson &
  Maksimović, Fundamentals of Power Electronics, 2nd ed., §2.3, eq. 2.18 with the
  ripple 2Δi_L there), largest at V = V_g/2: a stress that is not monotonic in V.
"""

from __future__ import annotations

import io
import json
import math

import numpy as np
import pytest

from stresscheck.checks import run_checks
from stresscheck.cli import main
from stresscheck.design import load_design
from stresscheck.engine import run
from stresscheck.errors import InputError
from stresscheck.policy import load_policy
from stresscheck.progress import ProgressBar, progress_for
from stresscheck.sampling import (FINE_BINS, Tally, chunk_rng, draw, run_monte_carlo,
                                  sample_chunk)
from stresscheck.sensitivity import annotate, linear_estimate, perturbation_corners
from stresscheck.units import Spread, parse_spread

HEADER = '# Invented part for tests.\nschema = "stresscheck.part/1"\n'
PARTS = {
    "ind-test-22u": """id = "ind-test-22u"\nkind = "inductor"\ntechnology = "powder"
[ratings]\ni_sat = "14 A"\ni_rms = "10 A"\nt_max = "100 degC"
[electrical]\ninductance = {L}\ndcr = "11 mohm"\n[thermal]\nr_th = "36 K/W"\n""",
    "cap-test-cer": """id = "cap-test-cer"\nkind = "capacitor"\ntechnology = "ceramic-class2"
[ratings]\nv_rated = "100 V"\ni_ripple = "3.5 A"\nt_max = "125 degC"
[electrical]\ncapacitance = "4.7 uF"\nesr = "5 mohm"\n[thermal]\nr_th = "300 K/W"\n""",
    "cap-test-poly": """id = "cap-test-poly"\nkind = "capacitor"\ntechnology = "al-polymer"
[ratings]\nv_rated = "25 V"\ni_ripple = "4.8 A"\nt_max = "105 degC"\nlife = "5000 h"
[electrical]\ncapacitance = "330 uF"\nesr = "14 mohm"\n[thermal]\nr_th = "30 K/W"\n""",
}
DESIGN = """schema = "stresscheck.design/1"
[converter]
name = "test buck"
topology = "buck"
switching_frequency = "300 kHz"
dead_time = "30 ns"
[operating]
input_voltage = {vin}
output_voltage = {vo}
output_current = {io}
ambient_temperature = {ta}
[[components]]
ref = "Q1"
role = "switch"
part = "nfet-60v-4m5-si"
r_th_ca = "25 K/W"
[[components]]
ref = "Q2"
role = "freewheel"
part = "nfet-60v-4m5-si"
r_th_ca = "25 K/W"
[[components]]
ref = "L1"
role = "inductor"
part = "ind-test-22u"
[[components]]
refs = ["C1", "C2", "C3"]
role = "input-capacitor"
part = "cap-test-cer"
[[components]]
refs = ["C10", "C11"]
role = "output-capacitor"
part = "cap-test-poly"
"""


def write_buck(tmp_path, *, vin='"24 V"', vo='"12 V"', io_='"5 A"',
               ta='{ min = "-40 degC", max = "90 degC" }', inductance='"22 uH"'):
    """A synchronous buck (invented parts) with the given envelope; returns its path."""
    parts = tmp_path / "parts"
    parts.mkdir(exist_ok=True)
    for pid, text in PARTS.items():
        (parts / f"{pid}.toml").write_text(HEADER + text.replace("{L}", inductance))
    path = tmp_path / "design.toml"
    path.write_text(DESIGN.format(vin=vin, vo=vo, io=io_, ta=ta))
    return path


def checked(path, policy="commercial"):
    design = load_design(path)
    pol = load_policy(policy)
    with np.errstate(all="ignore"):
        checks = run_checks(run(design), pol)
    return design, pol, checks


def by_key(checks, ref, quantity):
    return next(c for c in checks if c.ref == ref and c.quantity == quantity)


# --- drawing ------------------------------------------------------------------------

def test_uniform_draw_stays_inside_and_spreads_evenly():
    """Uniform on [1, 3]: mean 2, variance (b − a)²/12 = 1/3 (definition)."""
    x = draw(Spread(1.0, 2.0, 3.0), 200_000, chunk_rng(1, 0))
    assert x.min() >= 1.0 and x.max() <= 3.0
    n = x.size
    assert abs(x.mean() - 2.0) < 4 * math.sqrt(1 / 3 / n)
    assert abs(x.var() - 1 / 3) < 0.01  # 4 σ of a variance estimate (≈ 0.0024 here)


def test_normal_draw_is_truncated_at_the_tolerance():
    """Normal with σ = tolerance/3, truncated at ±3σ: the standard deviation of the
    truncated normal is σ·√(1 − 2·3·φ(3)/(2Φ(3) − 1)) = 0.98658·σ (Johnson, Kotz &
    Balakrishnan, Continuous Univariate Distributions, vol. 1, 2nd ed., §13.10.1,
    from memory; φ(3) = 0.0044318, Φ(3) = 0.99865)."""
    spread = Spread(90.0, 100.0, 110.0, "normal")
    x = draw(spread, 200_000, chunk_rng(2, 0))
    assert x.min() >= 90.0 and x.max() <= 110.0
    sigma = 10.0 / 3
    expected = sigma * math.sqrt(1 - 6 * 0.0044318 / (2 * 0.99865 - 1))
    assert expected == pytest.approx(0.98658 * sigma, rel=1e-4)
    assert x.std() == pytest.approx(expected, rel=0.01)  # 4 σ of the estimate ≈ 0.6 %
    assert abs(x.mean() - 100.0) < 4 * sigma / math.sqrt(x.size)


def test_distribution_keys_are_read_and_checked():
    s = parse_spread({"nom": "10 uH", "tolerance": "20 %", "distribution": "normal",
                      "sigma": "1 uH"}, "inductance", "p.toml", "electrical.inductance")
    assert (s.min, s.nom, s.max) == pytest.approx((8e-6, 10e-6, 12e-6))
    assert s.distribution == "normal" and s.std == pytest.approx(1e-6)
    t = parse_spread({"min": "-40 degC", "max": "70 degC", "distribution": "normal",
                      "sigma": "10 K"}, "temperature", "d.toml", "operating.ambient")
    assert t.std == pytest.approx(10.0)
    assert parse_spread({"nom": "1 V", "tolerance": "30 %", "distribution": "normal"},
                        "voltage", "d", "k").std == pytest.approx(0.6 / 6)
    with pytest.raises(InputError, match="distribution"):
        parse_spread({"nom": "1 V", "tolerance": "1 %", "distribution": "gauss"},
                     "voltage", "d.toml", "k")
    with pytest.raises(InputError, match="sigma needs"):
        parse_spread({"nom": "1 V", "tolerance": "1 %", "sigma": "0.1 V"},
                     "voltage", "d.toml", "k")


def test_same_seed_same_samples_other_seed_others():
    spreads = {"a": Spread(0.0, 0.5, 1.0), "b": Spread(1.0, 2.0, 3.0, "normal")}
    units = {"a": "V", "b": "A"}
    one = sample_chunk(spreads, units, 0, 100, chunk_rng(7, 3))
    two = sample_chunk(spreads, units, 0, 100, chunk_rng(7, 3))
    other = sample_chunk(spreads, units, 0, 100, chunk_rng(8, 3))
    assert np.array_equal(one["a"], two["a"]) and np.array_equal(one["b"], two["b"])
    assert not np.array_equal(one["a"], other["a"])
    assert one.ids[0] == "s0000001"


# --- statistics ---------------------------------------------------------------------

def test_tally_of_a_linear_stress_gives_the_closed_form_quantiles_and_exceedance():
    """y = 10 + 5·U, U uniform on [0, 1], allowed 14: p_q = 10 + 5q,
    p_exceed = (15 − 14)/5 = 0.2."""
    n_chunks, size = 20, 5000
    tally = Tally(14.0)
    ys = []
    for c in range(n_chunks):
        u = chunk_rng(11, c).uniform(0, 1, size)
        y = 10 + 5 * u
        ys.append(y)
        corners = sample_chunk({"u": Spread(0, 0.5, 1)}, {"u": "1"}, c * size, size,
                               chunk_rng(11, c))
        tally.add(y, corners)
    y = np.concatenate(ys)
    n = y.size
    s = tally.summary()
    assert s["samples"] == n
    assert s["p_exceed"] == np.count_nonzero(y > 14.0) / n  # exact count
    assert abs(s["p_exceed"] - 0.2) < 4 * math.sqrt(0.2 * 0.8 / n)
    assert s["max"] == y.max()
    bin_width = (tally.hi - tally.lo) / FINE_BINS
    for q, key in ((0.5, "p50"), (0.95, "p95"), (0.99, "p99")):
        # against the sample's own quantile: within one histogram bin
        assert abs(s[key] - np.quantile(y, q)) <= bin_width
        # against the closed form: within 4 standard errors (density 1/5)
        assert abs(s[key] - (10 + 5 * q)) < 4 * 5 * math.sqrt(q * (1 - q) / n) + bin_width
    hist = s["histogram"]
    assert sum(hist["counts"]) == n
    assert hist["edges"][0] == y.min() and hist["edges"][-1] == y.max()
    assert len(hist["edges"]) == len(hist["counts"]) + 1


# --- end to end through the engine --------------------------------------------------

def test_hot_spot_linear_in_ambient_gives_closed_form_statistics(tmp_path):
    """Only the ambient varies (uniform −40..90 °C); the inductor's hot spot solves
    T = T_a + DCR·(1 + α·(T − 25 °C))·I_rms²·R_th with copper's α = 0.393 %/K (the
    winding resistance at its hot spot; common practice), which is still linear in T_a:
    T − 25 = rise + s·(T_a − 25) with rise = k/(1 − k·α), k = DCR·I_rms²·R_th, and slope
    s = 1/(1 − k·α) = 1 + α·rise. So its quantiles are those of the ambient mapped through
    that line, and its share above the allowed 80 °C (t_max 100 °C − 20 K, commercial
    pack) follows."""
    alpha = 0.00393
    path = write_buck(tmp_path)
    design, policy, checks = checked(path)
    n = 3000
    with np.errstate(all="ignore"):
        info = run_monte_carlo(design, checks, policy, n, seed=5)
        annotate(design, checks, policy)
    hot = by_key(checks, "L1", "t_hotspot")
    # rise at the RSS nominal point (25 degC): k = DCR·I_rms²·R_th ≈ 0.011·25·36 = 9.9 K
    k = 0.011 * 25 * 36
    rise = hot.rss["nominal"] - 25.0
    assert rise == pytest.approx(k / (1 - k * alpha), rel=0.01)  # ripple adds ΔI²/12 < 1 %
    slope = 1 + alpha * rise
    mc = hot.monte_carlo
    for q, key in ((0.5, "p50"), (0.95, "p95"), (0.99, "p99")):
        exact = 25 + rise + slope * (-40 + 130 * q - 25)
        assert abs(mc[key] - exact) < 4 * slope * 130 * math.sqrt(q * (1 - q) / n) + 0.05
    t_a_limit = 25 + (80 - 25 - rise) / slope
    p = (90 - t_a_limit) / 130
    assert abs(mc["p_exceed"] - p) < 4 * math.sqrt(p * (1 - p) / n)
    assert hot.method == "corners"  # linear: no sample beyond the corners
    assert [i["name"] for i in info.inputs] == ["ambient_temperature"]
    # sensitivity: dT/dT_a = slope, normalised on the kelvin scale
    (only,) = hot.sensitivity
    assert only["input"] == "ambient_temperature"
    assert only["contribution"] == pytest.approx(slope * (90 - 25), rel=1e-3)
    assert only["coefficient"] == pytest.approx(slope * (25 + 273.15) / (25 + rise + 273.15),
                                                rel=1e-3)
    # 1e-3: the closed-form slope holds for constant k; the engine's I_rms also carries the
    # ripple and its loop settles to 1 mK, which moves the linearised value by ~5e-4
    assert hot.rss["value"] == pytest.approx(25 + rise + slope * 65, rel=1e-3)
    assert hot.rss["ratio"] == pytest.approx(hot.rss["value"] / 80.0)


def test_life_rule_counts_samples_below_the_required_life(tmp_path):
    """Life is "more is better": only the ambient varies (uniform −40..90 °C) and the
    polymer output capacitor's hot spot is T_a + a constant rise (ESR·I_rms²·R_th, no
    temperature coefficient), so life = L0·10^((105 − T_a − rise)/20 K) (polymer ×10
    per 20 K: makers' notes, FROM MEMORY, docs/derating-sources.md §8) falls
    monotonically with T_a. With required_life R the share of samples below R is the
    share of ambients above T* = 105 − rise − 20·log10(R/L0) (uniform distribution;
    R = 100,000 h is below the 15-year cap, so capped samples count as meeting it);
    4 binomial standard errors. The worst sample (``min``) is at the hottest ambient and
    the Monte Carlo run does not move the corner result (monotonic)."""
    path = write_buck(tmp_path)
    text = path.read_text().replace("ambient_temperature =",
                                    'required_life = "100000 h"\nambient_temperature =')
    path.write_text(text)
    design, policy, checks = checked(path)
    life = by_key(checks, "C10", "life")
    hot = by_key(checks, "C10", "t_hotspot")
    rise = hot.stress - 90.0  # constant rise at the hottest corner
    corner = (life.stress, life.ratio, life.status)
    assert life.rule == "capacitor-life-required" and life.capped is False
    assert life.ratio == pytest.approx(100000 * 3600.0 / life.stress)
    n = 3000
    with np.errstate(all="ignore"):
        run_monte_carlo(design, checks, policy, n, seed=7)
    mc = life.monte_carlo
    # below T* - 2.4 K the life reaches the 15-year cap (131,490 h), still above R
    t_star = 105.0 - rise - 20.0 * math.log10(100000 / 5000)
    p = (90.0 - t_star) / 130.0
    assert abs(mc["p_exceed"] - p) < 4 * math.sqrt(p * (1 - p) / n)
    assert mc["min"] >= life.stress * (1 - 1e-6)  # no sample shorter than the corner
    assert mc["min"] <= mc["p50"] <= mc["max"]
    # the sample closest to 90 degC: within 130/n·4 K of it, i.e. life within 10^(0.17/20)
    assert mc["min"] == pytest.approx(life.stress, rel=0.02)
    assert (life.stress, life.ratio, life.status) == corner and life.method == "corners"


def test_rss_of_life_lies_below_the_nominal(tmp_path):
    """RSS for a more-is-better quantity: y(x0) − √(Σ c_j²), ratio minimum / value. Ambient
    80..90 °C keeps the nominal life (≈ 5000·10^(20/20) h at 85 °C, polymer ×10 per
    20 K: from memory) below the 15-year cap, and life falls with the ambient, so the
    estimate is below the nominal. Over 70..90 °C the linear estimate overshoots below
    zero: no value and no ratio then."""
    path = write_buck(tmp_path, ta='{ min = "80 degC", max = "90 degC" }')
    path.write_text(path.read_text().replace(
        "ambient_temperature =", 'required_life = "50000 h"\nambient_temperature ='))
    design, policy, checks = checked(path)
    with np.errstate(all="ignore"):
        annotate(design, checks, policy)
    life = by_key(checks, "C10", "life")
    assert life.rss["nominal"] == pytest.approx(5000 * 3600.0 * 10 ** (20 / 20), rel=0.01)
    assert 0 < life.rss["value"] < life.rss["nominal"]
    assert life.rss["ratio"] == pytest.approx(50000 * 3600.0 / life.rss["value"])
    (tmp_path / "wide").mkdir()
    wide = write_buck(tmp_path / "wide", ta='{ min = "70 degC", max = "90 degC" }')
    wide.write_text(wide.read_text().replace(
        "ambient_temperature =", 'required_life = "50000 h"\nambient_temperature ='))
    design, policy, checks = checked(wide)
    with np.errstate(all="ignore"):
        annotate(design, checks, policy)
    life = by_key(checks, "C10", "life")
    assert life.rss["value"] is None and life.rss["ratio"] is None


def test_tally_of_a_more_is_better_quantity():
    """Tally with lower_worse: exceedance counts values below the minimum, ``min`` is
    the worst; values 1..100 with minimum 10.5 -> 10 of 100 below (by hand)."""
    tally = Tally(10.5, lower_worse=True)
    cs = sample_chunk({}, {}, 0, 100, chunk_rng(0, 0))
    tally.add(np.arange(1.0, 101.0), cs)
    out = tally.summary()
    assert out["p_exceed"] == pytest.approx(0.10) and out["min"] == 1.0
    assert out["max"] == 100.0 and tally.worst_row["id"] == "s0000001"


def test_same_seed_same_results_through_the_engine(tmp_path):
    path = write_buck(tmp_path, vin='{ min = "20 V", max = "36 V" }',
                      inductance='{ nom = "22 uH", tolerance = "20 %" }')
    out = []
    for seed in (3, 3, 4):
        design, policy, checks = checked(path)
        with np.errstate(all="ignore"):
            run_monte_carlo(design, checks, policy, 300, seed=seed)
        out.append([c.as_dict() for c in checks])
    assert json.dumps(out[0]) == json.dumps(out[1])
    assert json.dumps(out[0]) != json.dumps(out[2])


def test_a_non_monotonic_stress_found_by_sampling_raises_the_worst_case(tmp_path):
    """V_g = 24 V fixed, V = 8..16 V: the ripple (V_g − V)·V/(V_g·L·f_s) is 5.33/(L·f_s)
    at both corners and 6/(L·f_s) at V = 12 V. The inductor's i_peak = I_o + Δi/2 is
    largest inside the range, so samples must raise it above the corners."""
    path = write_buck(tmp_path, vo='{ min = "8 V", max = "16 V" }')
    design, policy, checks = checked(path)
    peak = by_key(checks, "L1", "i_peak")
    l, fs, io_ = 22e-6, 300e3, 5.0
    corner_form = io_ + (24 - 8) * (8 / 24) / (l * fs) / 2  # Erickson eq. 2.18
    interior_form = io_ + 24 / (4 * l * fs) / 2
    assert peak.stress == pytest.approx(corner_form, rel=0.01)  # drops: < 1 %
    corner_stress = peak.stress
    with np.errstate(all="ignore"):
        info = run_monte_carlo(design, checks, policy, 400, seed=1)
    assert peak.method == "monte-carlo"
    assert peak.stress > corner_stress * 1.005  # the interior maximum is 0.9 % above
    assert peak.stress == pytest.approx(interior_form, rel=0.01)
    assert peak.corner.startswith("s") and "not monotonic" in peak.note
    row = next(r for r in info.worst_samples if r["id"] == peak.corner)
    assert abs(row["output_voltage"] - 12.0) < 1.0  # near V_g/2
    assert peak.ratio == pytest.approx(peak.stress / peak.allowed)
    # the input capacitor's ripple, ∝ D(1 − D), is not monotonic either; the output
    # capacitor's v_peak (V plus a small ripple) rises with V: left at its corner
    assert by_key(checks, "C1", "v_peak").method == "monte-carlo"
    assert by_key(checks, "C10", "v_peak").method == "corners"


# --- RSS ----------------------------------------------------------------------------

def test_rss_of_a_linear_stress_by_hand():
    """y = 10 + 3·x1 − 0.5·x2, x1 in 0.9..1.1 (nom 1), x2 in 8..11 (nom 10):
    y0 = 8; rises at the limits c1 = 3·0.1 = 0.3, c2 = 0.5·(10 − 8) = 1.0;
    RSS = 8 + √(0.09 + 1.0) = 9.04403; S1 = 3·1/8, S2 = −0.5·10/8."""
    spreads = {"x1": Spread(0.9, 1.0, 1.1), "x2": Spread(8.0, 10.0, 11.0),
               "fixed": Spread(2.0, 2.0, 2.0)}
    corners, names, steps = perturbation_corners(spreads, {k: "1" for k in spreads})
    y = 10 + 3 * corners["x1"] - 0.5 * corners["x2"]
    y0, value, rows = linear_estimate(y, spreads, names, steps, False)
    assert y0 == pytest.approx(8.0)
    assert value == pytest.approx(8 + math.sqrt(0.09 + 1.0), rel=1e-9)
    assert [r["input"] for r in rows] == ["x2", "x1"]  # the larger share first
    assert rows[0]["coefficient"] == pytest.approx(-0.625, rel=1e-9)
    assert rows[1]["coefficient"] == pytest.approx(0.375, rel=1e-9)
    assert rows[0]["contribution"] == pytest.approx(1.0, rel=1e-9)
    assert rows[0]["share"] == pytest.approx(1.0 / 1.09, rel=1e-9)


def test_rss_and_sensitivity_reach_results_json(tmp_path):
    path = write_buck(tmp_path, vin='{ min = "20 V", max = "36 V" }',
                      ta='{ min = "-40 degC", max = "60 degC" }')
    out = tmp_path / "out"
    assert main(["check", str(path), "--out", str(out), "--samples", "50",
                 "--seed", "2"]) == 0
    results = json.loads((out / "results.json").read_text())
    assert results["sampling"]["samples"] == 50 and results["sampling"]["seed"] == 2
    for check in results["checks"]:
        assert check["method"] in ("corners", "monte-carlo")
        assert check["monte_carlo"]["samples"] == 50
        assert {"nominal", "value", "ratio"} <= set(check["rss"])
        assert {r["input"] for r in check["sensitivity"]} == {"input_voltage",
                                                              "ambient_temperature"}


def test_bad_sample_count_is_an_input_error(tmp_path, capsys):
    path = write_buck(tmp_path)
    assert main(["check", str(path), "--out", str(tmp_path / "o"), "--samples", "0"]) == 2
    assert "--samples" in capsys.readouterr().err


# --- progress -----------------------------------------------------------------------

class _Tty(io.StringIO):
    def isatty(self):
        return True


def test_progress_only_on_a_terminal():
    assert progress_for("samples", io.StringIO()) is None
    stream = _Tty()
    bar = progress_for("samples", stream)
    assert isinstance(bar, ProgressBar)
    bar(50, 200)
    bar(200, 200)
    bar.close()
    text = stream.getvalue()
    assert "\r" in text and " 25.0 %" in text and "100.0 %" in text
    assert text.endswith("\n")


# --- every topology -----------------------------------------------------------------

EXAMPLES = sorted(p.parent.name for p in
                  (__import__("pathlib").Path(__file__).parent.parent / "examples")
                  .glob("*/design.toml"))


@pytest.mark.parametrize("example", EXAMPLES)
def test_all_three_methods_run_on_every_example(example):
    """Corners, Monte Carlo and RSS on each shipped example, with the invariants that
    hold whatever the design: ordered percentiles no larger than the maximum, counts
    that add up, shares of the RSS spread adding up to one."""
    from pathlib import Path
    path = Path(__file__).parent.parent / "examples" / example / "design.toml"
    design, policy, checks = checked(path)
    with np.errstate(all="ignore"):
        annotate(design, checks, policy)
        run_monte_carlo(design, checks, policy, 64, seed=0)
    computed = [c for c in checks if c.status != "not-computed"]
    assert computed
    for c in computed:
        mc = c.monte_carlo
        assert mc["samples"] == 64 and c.method in ("corners", "monte-carlo")
        if mc["max"] is None:
            continue
        assert mc["p50"] <= mc["p95"] <= mc["p99"] <= mc["max"]
        assert sum(mc["histogram"]["counts"]) == 64 - mc.get("not_computed", 0)
        assert mc["p_exceed"] is None or 0.0 <= mc["p_exceed"] <= 1.0
        if c.method == "monte-carlo":
            assert c.stress == mc["max"] and c.corner.startswith("s")
        if c.rss is not None:
            assert c.rss["value"] >= c.rss["nominal"]
            shares = sum(r["share"] for r in c.sensitivity)
            assert shares == pytest.approx(1.0) or shares == 0.0
