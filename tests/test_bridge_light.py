"""Light-load regimes of the PWM bridge family with diode rectifiers (bridge_light):
DCM, the magnetizing-valley regime, no load (pulse skipping), the boundaries between
regimes on both sides, and every example at no load and at 10 % load.

References: Erickson & Maksimović, Fundamentals of Power Electronics, 2nd ed., §5.2–5.3
(buck in DCM: M = 2/(1 + √(1 + 4K/D²)), K = 2L/(R·T_s); CCM boundary K_crit = 1 − D;
applied to each half-period of a bridge with V_g = n·V_src, T = Ts/2, D_half = 2·D) and
§6.3 (bridge CCM: V_o = 2·n·D·V_src on a center-tap rectifier). Lossless test parts, so
the relations hold to the solver's precision; tolerance 1e-3 relative (bisection and the
lossless limit's 1e-9 Ω switch resistance stay far below it).
"""

from __future__ import annotations

import math
import re
import shutil
from pathlib import Path

import numpy as np
import pytest

from builders_bridge_ext import case, ext_parts, values
from stresscheck.design import load_design
from stresscheck.engine import run
from stresscheck.errors import InputError, RegulationError

ROOT = Path(__file__).parent.parent
N = 0.5  # test transformer 4:2
FS, L_OUT, VIN, VO = 100e3, 10e-6, 48.0, 6.0
V_SRC = {"full-bridge": VIN, "push-pull": VIN, "half-bridge": VIN / 2}
TOPS = ("full-bridge", "half-bridge", "push-pull")


def light(tmp_path, top, io, l_m="1 H", vin="48 V"):
    parts = ext_parts(lossless=True, l_m=l_m, c_in="1 F", l_out="10 uH")
    return case(tmp_path, top, "center-tap", parts=parts, vin=vin, vo="6 V",
                io={"min": io, "max": "10 A"} if isinstance(io, str) else io)


def erickson_dcm_duty(v_src, io):
    """Per-switch duty of the half-period buck in DCM [1] (E&M §5.3, solved for D)."""
    m = VO / (N * v_src)
    k = 2 * L_OUT / ((VO / io) * (0.5 / FS))
    d_half = math.sqrt(4 * k / ((2 / m - 1) ** 2 - 1))
    assert k < 1 - d_half  # DCM by E&M's K < K_crit
    return d_half / 2


@pytest.mark.parametrize("top", TOPS)
def test_dcm_duty_and_peak_match_the_textbook_limit(tmp_path, top):
    """L_m = 1 H: the magnetizing current is negligible, the textbook DCM relations hold."""
    ev = run(load_design(_write(tmp_path, top, "0.5 A")))
    i = np.flatnonzero(ev.corners["output_current"] == 0.5)
    assert set(ev.result.regime[i]) == {"DCM"}
    d = ev.result.duty[i]
    v_src = V_SRC[top]
    assert d == pytest.approx(erickson_dcm_duty(v_src, 0.5), rel=1e-3)
    peak = (N * v_src - VO) * d / FS / L_OUT  # inductor rises from zero during D·Ts
    assert values(ev, "L1", "i_peak")[i] == pytest.approx(peak, rel=1e-3)
    # after the current stops, each center-tap rectifier blocks V_o; during a pulse
    # the other one blocks 2·n·V_src: the latter governs
    assert values(ev, "D1", "v_reverse_peak")[i] == pytest.approx(2 * N * v_src, rel=1e-3)


def _write(tmp_path, top, io, l_m="1 H"):
    from builders import write_case
    from builders_bridge_ext import ext_design
    parts = ext_parts(lossless=True, l_m=l_m, c_in="1 F", l_out="10 uH")
    doc = ext_design(top, "center-tap", vin="48 V", vo="6 V",
                     io={"min": io, "max": "10 A"})
    return write_case(tmp_path, doc, parts)


@pytest.mark.parametrize("top", TOPS)
def test_ccm_dcm_boundary_both_sides(tmp_path, top):
    """E&M §5.2: CCM while I_o > ΔI_L/2 (duty V_o/(2·n·V_src)); just below, DCM with the
    duty from §5.3, continuous across the boundary."""
    v_src = V_SRC[top]
    d_ccm = VO / (2 * N * v_src)
    i_bound = (N * v_src - VO) * d_ccm / FS / L_OUT / 2
    above = run(load_design(_write(tmp_path / "a", top, f"{1.02 * i_bound} A")))
    below = run(load_design(_write(tmp_path / "b", top, f"{0.98 * i_bound} A")))
    ia = np.flatnonzero(above.corners["output_current"] < 5)
    ib = np.flatnonzero(below.corners["output_current"] < 5)
    assert set(above.result.regime[ia]) == {"CCM"}
    assert set(below.result.regime[ib]) == {"DCM"}
    assert above.result.duty[ia] == pytest.approx(d_ccm, rel=1e-3)
    assert below.result.duty[ib] == pytest.approx(erickson_dcm_duty(v_src, 0.98 * i_bound),
                                                  rel=1e-3)
    assert np.all(below.result.duty[ib] < d_ccm)


@pytest.mark.parametrize("top", TOPS)
def test_magnetizing_valley_boundary_both_sides(tmp_path, top):
    """Finite L_m: CCM holds while the valley stays above i_m/n (both rectifiers share
    the freewheel); below it one rectifier stops, the duty falls below the CCM value,
    continuously at the boundary, and the primary current starts each pulse from zero."""
    v_src = V_SRC[top]
    d_ccm = VO / (2 * N * v_src)
    l_m = 200e-6
    ripple = (N * v_src - VO) * d_ccm / FS / L_OUT
    i_m = v_src * d_ccm / FS / (2 * l_m)  # magnetizing peak of the symmetric swing
    i_bound = ripple / 2 + i_m / N  # valley I_o − ΔI/2 equal to i_m/n
    above = run(load_design(_write(tmp_path / "a", top, f"{1.02 * i_bound} A", "200 uH")))
    below = run(load_design(_write(tmp_path / "b", top, f"{0.98 * i_bound} A", "200 uH")))
    ia = np.flatnonzero(above.corners["output_current"] < 5)
    ib = np.flatnonzero(below.corners["output_current"] < 5)
    assert set(above.result.regime[ia]) == {"CCM"}
    assert set(below.result.regime[ib]) == {"magnetizing-valley"}
    assert above.result.duty[ia] == pytest.approx(d_ccm, rel=1e-3)
    db = below.result.duty[ib]
    assert np.all(db < d_ccm) and np.all(db > 0.98 * d_ccm)
    # ampere-turn balance at the start of a pulse: n·i_L + i_m = 0 (primary from zero)
    start = N * below.result.i_l_start[ib] + below.result.i_m_start[ib]
    assert np.allclose(start, 0.0, atol=1e-6)


@pytest.mark.parametrize("top", TOPS)
def test_magnetizing_valley_lowers_the_duty_below_dcm(tmp_path, top):
    """Far below the boundary with n²·L_m = 5·L: the series discharge through n²·L_m
    delivers charge after the pulse, so the duty is below the textbook DCM value (which
    ignores L_m), and the current keeps flowing below ΔI_L/2 (no idle interval)."""
    ev = run(load_design(_write(tmp_path, top, "0.5 A", "200 uH")))
    i = np.flatnonzero(ev.corners["output_current"] == 0.5)
    assert set(ev.result.regime[i]) <= {"magnetizing-valley", "DCM"}
    assert np.all(ev.result.duty[i] < erickson_dcm_duty(V_SRC[top], 0.5))


@pytest.mark.parametrize("top", TOPS)
def test_no_load_skips_pulses_and_keeps_voltage_stresses(tmp_path, top):
    ev = run(load_design(_write(tmp_path, top, "0 A", "200 uH")))
    i = np.flatnonzero(ev.corners["output_current"] == 0)
    assert set(ev.result.regime[i]) == {"pulse-skipping"}
    assert np.all(ev.result.duty[i] < 1e-4)
    assert values(ev, "D1", "v_reverse_peak")[i] == pytest.approx(2 * N * V_SRC[top], rel=1e-3)
    _all_finite(ev)


def test_minimum_load_sets_the_no_load_duty(tmp_path):
    """A 12 Ω bleeder at 6 V draws 0.5 A: the no-load corner is the 0.5 A DCM case."""
    path = _write(tmp_path, "full-bridge", "0 A")
    text = path.read_text().replace("[operating]", '[operating]\nminimum_load = "12 ohm"')
    path.write_text(text)
    ev = run(load_design(path))
    i = np.flatnonzero(ev.corners["output_current"] == 0)
    assert set(ev.result.regime[i]) == {"DCM"}
    assert ev.result.duty[i] == pytest.approx(erickson_dcm_duty(VIN, 0.5), rel=1e-3)
    current = path.read_text().replace('"12 ohm"', '"0.5 A"')
    path.write_text(current)
    ev2 = run(load_design(path))
    assert ev2.result.duty[i] == pytest.approx(ev.result.duty[i], rel=1e-9)


@pytest.mark.parametrize("value, message", [('"0 ohm"', "greater than zero"),
                                            ('"3 V"', "resistance"),
                                            ('"-1 A"', "")])
def test_minimum_load_bad_input(tmp_path, value, message):
    path = _write(tmp_path, "full-bridge", "0 A")
    path.write_text(path.read_text().replace("[operating]",
                                             f"[operating]\nminimum_load = {value}"))
    with pytest.raises(InputError) as err:
        load_design(path)
    assert err.value.key == "operating.minimum_load"
    assert message in str(err.value)


def test_negative_output_current_refused(tmp_path):
    with pytest.raises(InputError) as err:
        load_design(_write(tmp_path, "full-bridge", "-1 A"))
    assert err.value.key == "operating.output_current"


def _all_finite(ev):
    """Every stress finite at every corner it applies to, except those the engine
    reports as not computed with a reason (the same at every load, e.g. no thermal path)."""
    for s in ev.stresses:
        if s.reason:
            continue
        assert np.all(np.isfinite(s.values[s.applicable])), (s.ref, s.quantity)


EXAMPLES = sorted(p.parent.name for p in ROOT.glob("examples/*/design.toml")) + ["demo"]


@pytest.mark.parametrize("fraction", [0.0, 0.1])
@pytest.mark.parametrize("example", EXAMPLES)
def test_examples_at_no_load_and_ten_percent(tmp_path, example, fraction):
    """Every example and the demo with output_current min replaced by 0 A and by 10 %
    of its maximum: every stress finite at every corner it applies to."""
    src = (ROOT / "stresscheck" / "demo" if example == "demo" else ROOT / "examples" / example)
    for f in src.iterdir():
        if f.name != "__pycache__" and not f.name.endswith(".py"):
            (shutil.copytree if f.is_dir() else shutil.copy)(f, tmp_path / f.name)
    path = tmp_path / "design.toml"
    text = path.read_text()
    m = re.search(r'output_current = \{ min = "[^"]+", max = "([\d.]+) A" \}', text)
    i_max = float(m.group(1))
    path.write_text(text.replace(m.group(0), f'output_current = {{ min = '
                                 f'"{fraction * i_max:g} A", max = "{i_max:g} A" }}'))
    design = load_design(path)
    ev = run(design)
    _all_finite(ev)
    low = ev.corners["output_current"] == fraction * i_max
    assert np.all(np.isfinite(ev.result.duty[low]))
