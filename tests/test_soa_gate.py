"""MOSFET safe operating area (the sheet's [[soa]] lines, the transition point, case
temperature derating) and the peak gate-source voltage against v_gs."""

from __future__ import annotations

import numpy as np
import pytest

from builders import write_case
from builders_flyback import flyback_design, flyback_parts
from stresscheck.checks import run_checks
from stresscheck.design import load_design
from stresscheck.devices.mosfet import gate_peak
from stresscheck.engine import run
from stresscheck.errors import InputError
from stresscheck.parts import load_part
from stresscheck.policy import load_policy
from stresscheck.soa import SoaLine, SoaTable, soa_current, soa_line_current

# two lines of constant power 1 kW (I·V = 1000 W: a straight line of slope −1 on
# log-log axes), 10 us and 100 us, and a 1 ms line at 100 W
LINES = SoaTable((SoaLine(10e-6, (10.0, 100.0), (100.0, 10.0)),
                  SoaLine(100e-6, (10.0, 100.0), (50.0, 5.0)),
                  SoaLine(1e-3, (10.0, 100.0), (10.0, 1.0))))


def test_log_log_interpolation_hand_worked():
    """On log-log axes the straight line through (10 V, 100 A) and (100 V, 10 A) is
    I = 1000 W / V: at sqrt(10·100) = 31.62 V it gives 31.62 A (hand-worked; exact to
    rounding, 1e-12). Below the first point the first current holds; above the last
    point (the line ends at the breakdown voltage) nothing is allowed."""
    line = LINES.lines[0]
    v = np.array([np.sqrt(1000.0), 50.0, 5.0, 100.0, 150.0])
    got = soa_line_current(line, v)
    assert got == pytest.approx([np.sqrt(1000.0), 20.0, 100.0, 10.0, 0.0], rel=1e-12)


def test_nearest_longer_pulse_width():
    """A 20 us transition reads the 100 us line (the nearest not shorter); a 10 us one
    the 10 us line; one longer than every line has none (not computed)."""
    assert LINES.line_for(20e-6).pulse_width == 100e-6
    assert LINES.line_for(10e-6).pulse_width == 10e-6
    assert LINES.line_for(5e-9).pulse_width == 10e-6
    assert LINES.line_for(2e-3) is None
    assert np.isnan(soa_current(LINES, np.array([50.0]), 2e-3, np.array([25.0]), 175.0))


def test_case_temperature_derating_hand_worked():
    """The 25 °C lines derated for the case temperature (docs/derating-sources.md §2,
    S24: SOA lines hold at 25 °C case), straight line to zero at T_j,max (common
    practice). Hand-worked: a 20 us pulse reads the 100 us line, I = 500 W / V, so 10 A
    at 50 V and 25 °C case; T_c = 100 °C, T_j,max = 175 °C → (175 − 100)/(175 − 25) = 0.5
    → 5 A; below 25 °C the 25 °C value (no credit for cold); 0 A at T_j,max."""
    got = soa_current(LINES, np.array([50.0, 50.0, 50.0, 50.0]), 20e-6,
                      np.array([100.0, 25.0, -20.0, 175.0]), 175.0)
    assert got == pytest.approx([5.0, 10.0, 10.0, 0.0], rel=1e-12)


SOA_SHEET = [{"pulse_width": "1 us", "v_ds": ["1 V", "200 V"], "i_d": ["100 A", "20 A"]},
             {"pulse_width": "dc", "v_ds": ["1 V", "200 V"], "i_d": ["30 A", "0.5 A"]}]


def flyback_eval(tmp_path, soa=SOA_SHEET, t_fall="20 ns", **converter):
    parts = flyback_parts()
    fet = parts["t-fet"]
    fet["electrical"].update({"t_rise": "20 ns", "t_fall": t_fall})
    if soa is not None:
        fet["soa"] = soa
    ev = run(load_design(write_case(tmp_path, flyback_design(**converter), parts)))
    checks = {(c.ref, c.quantity): c for c in run_checks(ev, load_policy("commercial"))}
    return ev, checks


def test_transition_point_against_the_derated_line(tmp_path):
    """The flyback switch turns off its peak current at the off-state voltage; the
    allowed current is the 1 us line (nearest longer than t_fall = 20 ns) at that voltage,
    derated for the case temperature T_c = T_j − P·R_th,jc — recomputed here by hand from
    the line's two points: I = 100 A·(V/1 V)^(ln(0.2)/ln(200))."""
    ev, checks = flyback_eval(tmp_path)
    c = checks[("Q1", "i_transition")]
    assert c.status == "pass" and c.rating_key == "soa"
    k = ev.corners.ids.index(c.corner)
    v = ev.result.v_block[("switch", 0)][k]
    (tj,) = [s.values[k] for s in ev.stresses if s.ref == "Q1" and s.quantity == "t_j"]
    (p,) = [s.values[k] for s in ev.stresses if s.ref == "Q1" and s.quantity == "p_loss"]
    t_case = tj - p * 1.0  # r_th_jc = 1 K/W
    i25 = 100.0 * v ** (np.log(0.2) / np.log(200.0))
    assert c.allowed == pytest.approx(i25 * (175.0 - t_case) / 150.0, rel=1e-9)
    # the stress is the switch current at turn-off: the primary peak in this DCM/CCM model
    assert c.stress == pytest.approx(ev.result.currents[("switch", 0)].peak()[k], rel=1e-9)


def test_no_soa_on_the_sheet_gives_no_row(tmp_path):
    ev, checks = flyback_eval(tmp_path, soa=None)
    assert ("Q1", "i_transition") not in checks


def test_transition_longer_than_every_line_is_not_computed(tmp_path):
    short = [{"pulse_width": "10 ns", "v_ds": ["1 V", "200 V"], "i_d": ["100 A", "20 A"]}]
    _, checks = flyback_eval(tmp_path, soa=short)
    c = checks[("Q1", "i_transition")]
    assert c.status == "not-computed" and "shorter than the transition" in c.note


def test_transition_time_follows_the_overlap_method(tmp_path):
    """The SOA pulse width of a transition is the time the overlap loss used: with the
    gate-charge method t_fall = (Q_gd + Q_gs/2)·R/V_plateau = 25 nC·11 Ω/5 V = 55 ns
    (hand-worked), longer than the only 10 ns line, so the row is not computed; the
    sheet's 5 ns reads that line."""
    line = [{"pulse_width": "10 ns", "v_ds": ["1 V", "200 V"], "i_d": ["100 A", "20 A"]}]
    charge = {"q_gd": "20 nC", "q_gs": "10 nC", "v_plateau": "5 V", "r_g": "1 ohm"}

    def check(folder, **converter):
        parts = flyback_parts()
        parts["t-fet"]["electrical"].update({"t_rise": "5 ns", "t_fall": "5 ns", **charge})
        parts["t-fet"]["soa"] = line
        ev = run(load_design(write_case(folder, flyback_design(**converter), parts)))
        return {(c.ref, c.quantity): c for c in run_checks(ev, load_policy("commercial"))}

    (tmp_path / "a").mkdir()
    (tmp_path / "b").mkdir()
    by_times = check(tmp_path / "a")[("Q1", "i_transition")]
    assert by_times.status != "not-computed"
    by_charge = check(tmp_path / "b", overlap_method="gate-charge",
                      gate_resistance="10 ohm")[("Q1", "i_transition")]
    assert by_charge.status == "not-computed" and "shorter than the transition" in by_charge.note


@pytest.mark.parametrize("table, key", [
    ([{"pulse_width": "1 us", "v_ds": ["100 V", "10 V"], "i_d": ["1 A", "2 A"]}], "v_ds"),
    ([{"pulse_width": "1 us", "v_ds": ["10 V"], "i_d": ["1 A"]}], "soa[1]"),
    ([{"pulse_width": "1 us", "v_ds": ["1 V", "9 V"], "i_d": ["1 A", "0 A"]}], "soa[1]"),
    ([{"pulse_width": "1 us", "v_ds": ["1 V", "9 V"], "i_d": ["1 A", "1 A"], "x": 1}], "x"),
])
def test_bad_soa_table_names_the_key(tmp_path, table, key):
    parts = flyback_parts()
    parts["t-fet"]["soa"] = table
    path = write_case(tmp_path, flyback_design(), parts)
    with pytest.raises(InputError, match=key.replace("[", r"\[").replace("]", r"\]")):
        load_part(path.parent / "parts" / "t-fet.toml")


def test_soa_on_a_diode_or_in_ratings_is_refused(tmp_path):
    parts = flyback_parts()
    parts["t-diode"]["soa"] = SOA_SHEET
    parts["t-fet"]["ratings"]["soa"] = "5 A"
    path = write_case(tmp_path, flyback_design(), parts)
    with pytest.raises(InputError, match="MOSFETs only"):
        load_part(path.parent / "parts" / "t-diode.toml")
    with pytest.raises(InputError, match=r"\[\[soa\]\]"):
        load_part(path.parent / "parts" / "t-fet.toml")


def test_gate_peak_hand_worked():
    """max(V_on, |V_off|)·(1 + overshoot): 15 V drive, −5 V bias, 10 % ringing → 16.5 V;
    an off-bias larger than the drive governs."""
    assert gate_peak(15.0) == 15.0
    assert gate_peak(15.0, -5.0, 0.1) == pytest.approx(16.5, rel=1e-12)
    assert gate_peak(5.0, -8.0) == 8.0


@pytest.mark.parametrize("drive, status", [("12 V", "pass"), ("15 V", "fail")])
def test_mil_dtl_917_gate_source_factor(tmp_path, drive, status):
    """MIL-DTL-917 Table XIX (continued), FET: gate-source voltage at most 0.7 × the V_GS
    rating (docs/derating-sources.md §2, S5): 14 V allowed on a 20 V gate; a 12 V drive
    passes (ratio 0.857), 15 V fails (1.071)."""
    path = write_case(tmp_path, flyback_design(gate_voltage=drive), flyback_parts())
    ev = run(load_design(path))
    (c,) = [c for c in run_checks(ev, load_policy("mil-dtl-917"))
            if c.ref == "Q1" and c.quantity == "v_gs_peak"]
    assert c.allowed == pytest.approx(14.0, rel=1e-12)
    assert c.status == status
    assert c.ratio == pytest.approx(float(drive.split()[0]) / 14.0, rel=1e-12)


def test_gate_keys_in_the_design(tmp_path):
    path = write_case(tmp_path, flyback_design(gate_voltage="12 V", gate_off_voltage="-4 V",
                                               gate_overshoot="25 %"), flyback_parts())
    ev = run(load_design(path))
    (s,) = [s for s in ev.stresses if s.ref == "Q1" and s.quantity == "v_gs_peak"]
    assert s.values == pytest.approx(15.0, rel=1e-12)
    assert "off-state bias -4 V" in s.note
    bad = write_case(tmp_path / "b", flyback_design(gate_off_voltage="4 V"), flyback_parts())
    with pytest.raises(InputError, match="converter.gate_off_voltage"):
        load_design(bad)
    bad = write_case(tmp_path / "c", flyback_design(gate_overshoot="150 %"), flyback_parts())
    with pytest.raises(InputError, match="converter.gate_overshoot"):
        load_design(bad)


def test_default_drive_per_technology(tmp_path):
    """No gate_voltage: the technology's default (silicon 10 V) and the note says so."""
    ev = run(load_design(write_case(tmp_path, flyback_design(), flyback_parts())))
    (s,) = [s for s in ev.stresses if s.ref == "Q1" and s.quantity == "v_gs_peak"]
    assert np.all(s.values == 10.0) and "default for si" in s.note
