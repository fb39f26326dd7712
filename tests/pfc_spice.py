"""ngspice transient of a PFC boost over whole line cycles, for the reference tests.

The circuit (one netlist per case, written under ``tests/reference/spice/pfc/``):
* the line after an ideal bridge, a behavioural source |V_pk·sin(2π·f·t)| (the bridge
  diodes' currents are this source's current, split by half cycle);
* the boost cell: inductor with DCR, the ``S`` switch with R_DS(on) (R_off 10 MΩ) and
  100 pF across it (the switch node must not float once the diode stops in DCM), the
  boost diode as a DC source, a near-ideal diode and r_d in series, exact at twice
  I_o (``spice.elements.diode_offset``; a few mV off elsewhere), the bulk capacitor with its
  ESR and a DC load current I_o;
* a behavioural average-current controller: reference I_pk·|sin(2π·f·t)| (I_pk from
  the model under test, so the simulated charge delivered to the bus checks the model's
  charge balance), a PI current-error amplifier on top of a duty feed-forward, and a
  comparison with a 0-to-1 sawtooth at f_s. The feed-forward is the lossless duty for
  the reference, the lower of the CCM duty 1 − v/V_o and the DCM duty
  sqrt(2·L·f_s·i_ref·(V_o − v)/(V_o·v)) (the boost's DCM average, Erickson &
  Maksimović, 2nd ed., §5.3 — from memory; the usual feed-forward of digital PFC
  controllers); the PI removes what the drops add. Without the DCM term a PI alone lags
  the reference by some 20° in DCM at high line.
The run starts at a zero crossing with the bus at its mean voltage (the line-frequency
ripple crosses its mean there at unity power factor) and the inductor empty; the second
line cycle is measured.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from stresscheck.spice.circuit import DiodeModel
from stresscheck.spice.elements import DIODE_IS, DIODE_N, diode_offset
from stresscheck.spice.run import run_netlist


@dataclass
class PfcCase:
    name: str
    v_rms: float  # [V]
    f_line: float  # [Hz]
    fs: float  # [Hz]
    v_o: float  # [V]
    i_o: float  # [A]
    l: float  # [H]
    dcr: float  # [ohm]
    r_on: float  # [ohm]
    v_f0: float  # [V]
    r_d: float  # [ohm]
    c: float  # [F]
    esr: float  # [ohm]


def netlist(case: PfcCase, i_pk: float, cycles: int = 2) -> str:
    """The transient deck of ``case`` with reference amplitude ``i_pk`` [A]."""
    ts = 1.0 / case.fs
    kp = 2 * np.pi * case.fs / 10 * case.l / case.v_o  # current-loop crossover ~ f_s/10
    ki = kp * 2 * np.pi * case.fs / 40  # PI zero a quarter of the crossover
    t_stop = cycles / case.f_line
    v_pk = np.sqrt(2) * case.v_rms
    return f"""* PFC boost {case.name}: {case.v_rms:g} V rms {case.f_line:g} Hz to {case.v_o:g} V {case.i_o:g} A
.param vpk={v_pk:.10g} fl={case.f_line:.10g} ipk={i_pk:.10g} vo={case.v_o:.10g}
.param kp={kp:.10g} ki={ki:.10g} lb={case.l:.10g} fs={case.fs:.10g}
Bline rect 0 V = abs(vpk*sin(2*pi*fl*time))
Vline rect n1 0
L1 n1 n2 {case.l:.10g} ic=0
RL n2 sw {case.dcr:.10g}
Vsw sw sws 0
S1 sws 0 gate 0 SWMOD
.model SWMOD SW(Ron={case.r_on:.10g} Roff=1e7 Vt=0.5 Vh=0.2)
Vd sw da 0
Vf da db {diode_offset(DiodeModel(case.v_f0, case.r_d), case.i_o / 0.5):.10g}
D1 db dc DIDEAL
.model DIDEAL D(IS={DIODE_IS:g} N={DIODE_N:g})
Rd dc bus {case.r_d:.10g}
Vc bus cb 0
Cbus cb ce {case.c:.10g} ic={case.v_o:.10g}
Resr ce 0 {case.esr:.10g}
Iload bus 0 {case.i_o:.10g}
* average-current controller
Bref ref 0 V = ipk*abs(sin(2*pi*fl*time))
Berr err 0 V = V(ref) - I(Vline)
Gint 0 int err 0 {{ki}}
Cint int 0 1 ic=0
Bff ff 0 V = min(1 - V(rect)/vo, sqrt(2*lb*fs*V(ref)*max(vo - V(rect), 0)/(vo*max(V(rect), 1e-3))))
Bvc vc 0 V = max(min(kp*V(err) + V(int) + V(ff), 0.98), 0)
Vramp ramp 0 PULSE(0 1 0 {ts - 2e-9:.10g} 1n 1n {ts:.10g})
Bgate gate 0 V = 0.5 + 0.5*tanh(200*(V(vc) - V(ramp)))
.options reltol=1e-5 abstol=1e-9 rshunt=1e9
.tran {ts / 200:.10g} {t_stop:.10g} 0 {ts / 200:.10g} uic
.end
"""


def _window(t, x, t0, t1):
    keep = (t >= t0) & (t <= t1)
    return t[keep], x[keep]


def measure(case: PfcCase, i_pk: float, workdir) -> dict:
    """Run the deck and measure the last line cycle: mean, rms (trapezoidal rule over
    every stored point) and peak of each current [A], bus voltage extremes [V]."""
    text = netlist(case, i_pk)
    vec = run_netlist(text, workdir)
    t = vec["time"]
    t1 = t[-1]
    t0 = t1 - 1.0 / case.f_line

    def stats(x):
        tw, xw = _window(t, x, t0, t1)
        span = tw[-1] - tw[0]
        return {"avg": float(np.trapezoid(xw, tw) / span),
                "rms": float(np.sqrt(np.trapezoid(xw ** 2, tw) / span)),
                "peak": float(np.max(np.abs(xw)))}

    i_line = vec["i(vline)"]
    theta = 2 * np.pi * case.f_line * t
    positive = np.sin(theta) > 0
    _, v_bus = _window(t, vec["v(bus)"], t0, t1)
    return {"netlist": text,
            "inductor": stats(i_line), "switch": stats(vec["i(vsw)"]),
            "diode": stats(vec["i(vd)"]), "capacitor": stats(vec["i(vc)"]),
            "bridge": stats(np.where(positive, i_line, 0.0)),
            "v_bus_max": float(v_bus.max()), "v_bus_min": float(v_bus.min())}
