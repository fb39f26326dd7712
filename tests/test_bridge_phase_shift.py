"""Phase-shifted full bridge (``bridge_phase_shift``), diode and synchronous rectifiers,
in the lossless limit against the published duty-loss relation.

Sources (from memory):
- [S] J. A. Sabaté, V. Vlatković, R. B. Ridley, F. C. Lee, B. H. Cho, "Design
  considerations for high-voltage high-power full-bridge zero-voltage-switched PWM
  converter", IEEE APEC 1990, §II (duty-cycle loss): the secondary is shorted while
  the primary current reverses through the leakage inductance L_lk, which takes
  Δt = L_lk·(I_p1 + I_p2)/V_in = 2·n·I_o·L_lk/V_in with negligible ripple, so
  D_eff = D − Δt·fs and V_o = 2·n·D_eff·V_in (their duty is per half period, = 2·D
  here). In the freewheel the two switches of one rail carry the reflected load
  current, so every switch conducts n·I_o for half a period whatever the phase shift.
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


import numpy as np
import pytest

from builders_bridge_ext import L_LK, REL, case, ext_parts, lossless_ps, sabate_duty, values
from stresscheck.errors import RegulationError



# --- phase shift ---------------------------------------------------------------------

@pytest.mark.parametrize("rectifier", ["center-tap", "full-bridge"])
def test_phase_shift_duty_loss(tmp_path, rectifier):
    """[S]: V_o = 2·n·(D − Δt·fs)·V_in with Δt = L_lk·(I_p1 + I_p2)/V_in."""
    ev = lossless_ps(tmp_path, rectifier)
    expected, dt = sabate_duty(ev)
    np.testing.assert_allclose(ev.result.duty, expected, rtol=REL)
    assert (dt * ev.corners["switching_frequency"] > 0.01).all()  # a visible duty loss


def test_phase_shift_dead_time_inside_reversal_keeps_duty(tmp_path):
    """[S] (zero-voltage transition of the lagging leg): the body diode of the incoming
    switch takes the current at the turn-off instant, so a dead time shorter than the
    current's zero crossing (here 50 ns < n·I_o·L_lk/V_in ≥ 67 ns) leaves D_eff and
    the duty loss unchanged."""
    ev = lossless_ps(tmp_path, "center-tap", dead_time="50 ns")
    c = ev.corners
    n = 0.5
    t_zero = n * c["output_current"] * L_LK / c["input_voltage"]
    assert (t_zero > 50e-9).all()
    np.testing.assert_allclose(ev.result.duty, sabate_duty(ev)[0], rtol=REL)


def test_phase_shift_switch_rms_and_freewheel(tmp_path):
    """[S]: each switch carries n·I_o for half a period less the reversal, during which
    the current ramps linearly between ∓n·I_o (rms of a ramp: I/√3, [EM] §A):
    I_rms = n·I_o·√(1/2 − (2/3)·Δt·fs); PWM would give n·I_o·√D."""
    ev = lossless_ps(tmp_path, "center-tap")
    c = ev.corners
    n, io, fs = 0.5, c["output_current"], c["switching_frequency"]
    _, dt = sabate_duty(ev)
    expected = n * io * np.sqrt(0.5 - 2 / 3 * dt * fs)
    for ref in ("Q1", "Q2", "Q3", "Q4"):
        np.testing.assert_allclose(values(ev, ref, "i_rms"), expected, rtol=REL)
        np.testing.assert_allclose(values(ev, ref, "i_peak"), n * io, rtol=REL)
    assert (values(ev, "Q1", "i_rms") > 1.1 * n * io * np.sqrt(ev.result.duty)).all()


def test_phase_shift_body_diodes_in_dead_time(tmp_path):
    """[S]: leading leg — the incoming switch's body diode carries the freewheeling
    current n·I_o for t_d; lagging leg — it carries the reversing current
    n·I_o − V_in·t/L_lk for t_d (mean per period: (n·I_o·t_d − V_in·t_d²/(2·L_lk))·fs)."""
    ev = lossless_ps(tmp_path, "center-tap", dead_time="50 ns")
    c = ev.corners
    n, io, vin, fs, td = 0.5, c["output_current"], c["input_voltage"], \
        c["switching_frequency"], 50e-9
    body = ev.result.body
    lead = n * io * td * fs
    lag = (n * io * td - vin * td ** 2 / (2 * L_LK)) * fs
    for k in (0, 1):  # leg A, leading
        np.testing.assert_allclose(body[("switch", k)].mean(), lead, rtol=REL)
    for k in (2, 3):  # leg B, lagging
        np.testing.assert_allclose(body[("switch", k)].mean(), lag, rtol=REL)


@pytest.mark.parametrize("rectifier", ["center-tap", "full-bridge"])
def test_phase_shift_voltage_stresses(tmp_path, rectifier):
    """[EM] §6.3 (the secondary sees ±n·V_in in the power interval): center-tap
    rectifier 2·n·V_in, bridge rectifier n·V_in (before any ringing); switches V_in."""
    ev = lossless_ps(tmp_path, rectifier)
    vin = ev.corners["input_voltage"]
    v_rect = (2 if rectifier == "center-tap" else 1) * 0.5 * vin
    np.testing.assert_allclose(values(ev, "D1", "v_reverse_peak"), v_rect, rtol=REL)
    np.testing.assert_allclose(values(ev, "Q1", "v_peak"), vin, rtol=REL)


# --- phase shift with synchronous rectifiers ----------------------------------------------

PS_RECTS = {"center-tap": ("SR1", "SR2"), "full-bridge": ("SR1", "SR2", "SR3", "SR4")}


@pytest.mark.parametrize("rectifier", list(PS_RECTS))
def test_phase_shift_sync_duty_loss(tmp_path, rectifier):
    """[S]: lossless synchronous rectifiers keep the duty loss and the conversion ratio
    V_o = 2·n·(D − Δt·fs)·V_in, also with body diodes in the dead times."""
    ev = lossless_ps(tmp_path, rectifier, dead_time="50 ns", sync=True)
    np.testing.assert_allclose(ev.result.duty, sabate_duty(ev)[0], rtol=REL)


@pytest.mark.parametrize("rectifier", list(PS_RECTS))
def test_phase_shift_sync_stresses_as_diodes(tmp_path, rectifier):
    """[S], [EM] §6.3: lossless, a synchronous rectifier (channel and body diode
    together) carries the diode's current, rms and peak, and blocks its voltage
    (center-tap 2·n·V_in, bridge n·V_in, before any ringing)."""
    diode = lossless_ps(tmp_path / "d", rectifier, dead_time="50 ns")
    sync = lossless_ps(tmp_path / "s", rectifier, dead_time="50 ns", sync=True)
    vin = sync.corners["input_voltage"]
    v_rect = (2 if rectifier == "center-tap" else 1) * 0.5 * vin
    for k, ref in enumerate(PS_RECTS[rectifier]):
        d_ref = f"D{k + 1}"
        for q in ("i_rms", "i_peak"):
            np.testing.assert_allclose(values(sync, ref, q), values(diode, d_ref, q),
                                       rtol=REL)
        np.testing.assert_allclose(values(sync, ref, "v_peak"), v_rect, rtol=REL)
    # the channel carries the current drain -> source (the diode's forward reversed)
    assert (sync.result.currents[("rectifier", 0)].min() < 0).all()


@pytest.mark.parametrize("rectifier", list(PS_RECTS))
def test_phase_shift_sync_body_diodes(tmp_path, rectifier):
    """[S] (linear reversal through L_lk, negligible ripple and magnetizing current)
    with the ampere-turn balance i_A − i_B = i_p/n, i_A + i_B = I_o: the incoming
    rectifier's current rises as V_in·t/(2·n·L_lk) and takes I_o after Δt =
    2·n·I_o·L_lk/V_in. A rectifier's body diode carries it for the lagging leg's dead
    time as the incoming one (charge V_in·t_d²/(4·n·L_lk)) and for the whole
    commutation as the outgoing one (its channel is off from the transition: I_o·Δt/2);
    mean per period the sum times fs."""
    ev = lossless_ps(tmp_path, rectifier, dead_time="50 ns", sync=True)
    c = ev.corners
    n, io, vin, fs, td = 0.5, c["output_current"], c["input_voltage"], \
        c["switching_frequency"], 50e-9
    dt = 2 * n * io * L_LK / vin
    assert (dt > 2 * td).all()  # the dead time ends inside the reversal
    expected = (vin * td ** 2 / (4 * n * L_LK) + io * dt / 2) * fs
    for k in range(len(PS_RECTS[rectifier])):
        body = ev.result.body[("rectifier", k)]
        np.testing.assert_allclose(body.mean(), expected, rtol=REL)
        assert (body.min() >= 0).all()


@pytest.mark.parametrize("dead_time", ["100 ns", None])
def test_phase_shift_sync_forced_ccm_refused(tmp_path, dead_time):
    """At 1 A the inductor current reverses in the freewheel ([EM] ch. 5: a channel
    would carry it) and is lowest at the lagging leg's transition, where the outgoing
    channel turns off: its body diode cannot take reverse current, with or without a
    dead time. Refused with the reason, never computed with the CCM relations."""
    with pytest.raises(RegulationError, match="reverse current"):
        case(tmp_path, parts=ext_parts(l_leak="1 uH"), modulation="phase-shift",
             sync=True, dead_time=dead_time, io={"min": "1 A", "max": "10 A"})
