"""PWM bridge-family models (``bridge_pwm``): current-doubler rectifier and synchronous
rectifiers in the lossless limit against published relations. The ideal center-tap and
full-bridge relations: test_textbook_bridges.py.

Sources (from memory):
- [B] L. Balogh, "The current-doubler rectifier: an alternative rectification technique
  for push-pull and bridge converters", Unitrode application note U-165: V_o = n·D·V_src
  (D per switch, V_src the primary voltage of an on-interval: V_in, or V_in/2 for the
  half bridge), each inductor carries I_o/2 with ripple V_o·(1 − D)·Ts/L at fs; their
  sum ripples at 2·fs by V_o·(1 − 2·D)·Ts/L (cancellation); a rectifier blocks the
  secondary voltage n·V_src.
- [EM] R. W. Erickson and D. Maksimović, Fundamentals of Power Electronics, 2nd ed.,
  §6.3 (bridge conversion ratios, here with D per switch), §2.3 (triangular ripple, rms
  ΔI/(2·√3)), ch. 5 (with a two-quadrant switch the inductor current may reverse: the
  converter stays in CCM at any load).

The lossless limit: resistances ~1e-9 ohm, v_f0 = 0, body diodes without drop, input
capacitor 1 F, magnetizing inductance 1 H. The phase-shift relations also assume an
output inductor current without ripple over the reversal (L ≫ n²·L_lk): those tests use
L = 1 H. Tolerance 1e-4 relative: the relations are exact there, the margin covers the
residual resistances (measured ~1e-6) and the solver's convergence (1e-9).
"""


import math

import numpy as np
import pytest

from builders_bridge_ext import REL, case, ext_parts, values
from stresscheck.errors import RegulationError



# --- current doubler ---------------------------------------------------------------------

CD_TOPOLOGIES = ["full-bridge", "half-bridge", "push-pull"]


def lossless_cd(tmp_path, topology, sync=False):
    n_s = 8 if topology == "half-bridge" else 4  # n = 1 (half-bridge: 2)
    parts = ext_parts(lossless=True, n_p=4, n_s=n_s, l_m="1 H", c_in="1 F",
                      l_out="47 uH")
    return case(tmp_path, topology, "current-doubler", parts=parts, sync=sync)


@pytest.mark.parametrize("topology", CD_TOPOLOGIES)
def test_current_doubler_conversion_and_currents(tmp_path, topology):
    """[B]: V_o = n·D·V_src; each inductor I_o/2 with ripple V_o·(1 − D)·Ts/L; each
    rectifier I_o/2 on average; the blocking rectifier sees n·V_src."""
    ev = lossless_cd(tmp_path, topology)
    c = ev.corners
    n = ev.stage.transformer.n_s / ev.stage.transformer.n_p
    v_src = c["input_voltage"] / (2 if topology == "half-bridge" else 1)
    vo, io, ts = c["output_voltage"], c["output_current"], 1 / c["switching_frequency"]
    d = ev.result.duty
    np.testing.assert_allclose(n * d * v_src, vo, rtol=REL)
    ripple = vo * (1 - d) * ts / 47e-6
    for ref in ("L1", "L2"):
        np.testing.assert_allclose(values(ev, ref, "i_peak"), io / 2 + ripple / 2, rtol=REL)
        np.testing.assert_allclose(values(ev, ref, "i_rms"),
                                   np.sqrt((io / 2) ** 2 + ripple ** 2 / 12), rtol=REL)
    for ref in ("D1", "D2"):
        np.testing.assert_allclose(values(ev, ref, "i_avg"), io / 2, rtol=REL)
        np.testing.assert_allclose(values(ev, ref, "v_reverse_peak"), n * v_src, rtol=REL)
        # it carries both inductors in its on-interval: at its end their sum peaks,
        # I_o + V_o·(1/2 − D)·Ts/L (L1 at its peak, L2 half a period past its own)
        np.testing.assert_allclose(values(ev, ref, "i_peak"),
                                   io + vo * (0.5 - d) * ts / 47e-6, rtol=REL)
    # switch peak: the reflected peak of one inductor
    np.testing.assert_allclose(values(ev, "Q1", "i_peak"), n * (io / 2 + ripple / 2),
                               rtol=REL)


@pytest.mark.parametrize("topology", CD_TOPOLOGIES)
def test_current_doubler_ripple_cancellation(tmp_path, topology):
    """[B]: the output capacitor carries the sum of the two inductor ripples, a
    triangle at 2·fs of V_o·(1 − 2·D)·Ts/L peak to peak (rms /(2·√3), [EM] §2.3)."""
    ev = lossless_cd(tmp_path, topology)
    c = ev.corners
    vo, ts, d = c["output_voltage"], 1 / c["switching_frequency"], ev.result.duty
    pp = vo * (1 - 2 * d) * ts / 47e-6
    np.testing.assert_allclose(values(ev, "C1", "i_ripple_rms"), pp / (2 * math.sqrt(3)),
                               rtol=REL)
    single = vo * (1 - d) * ts / 47e-6  # one inductor's ripple: the sum cancels part
    assert (pp < single).all()


def test_push_pull_current_doubler_switch_voltage(tmp_path):
    """[EM] §6.3.4: the push-pull's off switch sees 2·V_in, also with a doubler."""
    ev = lossless_cd(tmp_path, "push-pull")
    np.testing.assert_allclose(values(ev, "Q1", "v_peak"), 2 * ev.corners["input_voltage"],
                               rtol=REL)


# --- synchronous rectifiers --------------------------------------------------------------

@pytest.mark.parametrize("rectifier", ["center-tap", "full-bridge", "current-doubler"])
def test_synchronous_conversion_ratio(tmp_path, rectifier):
    """[EM] §6.3 / [B]: lossless synchronous rectifiers keep the diode relations."""
    n_s = 4 if rectifier == "current-doubler" else 2
    l_out = "47 uH" if rectifier == "current-doubler" else "10 uH"
    parts = ext_parts(lossless=True, n_s=n_s, l_m="1 H", c_in="1 F", l_out=l_out)
    ev = case(tmp_path, "full-bridge", rectifier, parts=parts, sync=True)
    c = ev.corners
    gain = (1 if rectifier == "current-doubler" else 2) * n_s / 4
    np.testing.assert_allclose(gain * ev.result.duty * c["input_voltage"],
                               c["output_voltage"], rtol=REL)


def test_synchronous_forced_ccm_at_light_load(tmp_path):
    """[EM] ch. 5: with synchronous rectifiers the inductor current reverses at light
    load and the CCM relations still hold: ripple (n·V_in − V_o)·D·Ts/L, rms
    √(I_o² + ΔI²/12), mean I_o, although I_o < ΔI/2 (regime forced-CCM there). The same
    design with diodes is discontinuous at those corners."""
    parts = ext_parts(lossless=True, l_m="1 H", c_in="1 F")
    io = {"min": "1 A", "max": "10 A"}
    ev = case(tmp_path / "sync", parts=parts, sync=True, io=io)
    c = ev.corners
    d, vo, ts = ev.result.duty, c["output_voltage"], 1 / c["switching_frequency"]
    ripple = (0.5 * c["input_voltage"] - vo) * d * ts / 10e-6
    light = c["output_current"] == 1.0
    assert (ripple[light] / 2 > 1.0).all()  # the current reverses
    np.testing.assert_allclose(values(ev, "L1", "i_rms"),
                               np.sqrt(c["output_current"] ** 2 + ripple ** 2 / 12), rtol=REL)
    # the regime says so per corner: forced CCM where the current reverses
    np.testing.assert_array_equal(ev.result.regime,
                                  np.where(values(ev, "L1", "i_peak") - ripple < 0,
                                           "forced-CCM", "CCM"))
    assert set(ev.result.regime[light]) == {"forced-CCM"}
    # with diodes the same corners are discontinuous (bridge_light; tests in
    # test_bridge_light.py)
    ev_d = case(tmp_path / "diode", parts=parts, io=io)
    assert set(ev_d.result.regime[light]) == {"DCM"}


def test_synchronous_body_diodes_in_dead_time(tmp_path):
    """Each synchronous rectifier's body diode conducts for t_d after it turns on and
    t_d before it turns off, at its freewheel share I_o/2 (lossless, no ripple: the
    two halves of a center tap share the inductor current equally, [EM] §6.3.2):
    mean per period I_o·t_d·fs."""
    parts = ext_parts(lossless=True, l_m="1 H", c_in="1 F", l_out="1 H")
    ev = case(tmp_path, parts=parts, sync=True, dead_time="100 ns")
    c = ev.corners
    expected = c["output_current"] * 100e-9 * c["switching_frequency"]
    for k in (0, 1):
        np.testing.assert_allclose(ev.result.body[("rectifier", k)].mean(), expected,
                                   rtol=REL)


def test_synchronous_reverse_current_in_dead_time_is_refused(tmp_path):
    """A body diode cannot carry reverse current: light load with a dead time is
    refused with the reason, never computed with CCM relations."""
    with pytest.raises(RegulationError, match="reverse current"):
        case(tmp_path, sync=True, dead_time="100 ns", io={"min": "1 A", "max": "10 A"})
