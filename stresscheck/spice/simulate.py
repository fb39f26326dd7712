"""Steady state of one corner in ngspice, regulated to the target output voltage, and
the component stresses measured from it.

The procedure follows the project's ngspice notes: iterate the duty ratio (proportional
steps, then secant) until the mean output voltage over whole periods is within
:data:`V_TOL` of the target, warm-starting every run from the previous run's final state;
search with the short input choke, then continue with the real one (warm-started) and
accept only when a confirmation run at unchanged duty moves the mean output voltage and
the mean inductor current by less than :data:`STEADY_TOL`.

Between the runs of the search, the slow modes (output L-C ringing, input filter, flux
bias) are shifted to their averaged equilibrium (the ``slow_mode_shift`` of the
topology's deck, :mod:`stresscheck.spice.decks`), so that
each run measures nearly the steady state of its duty; the confirmation run continues
the previous run's filter state unchanged. The stresses are measured in the accepted
confirmation run.
"""

from __future__ import annotations

import json
import math
import tempfile
import time
from dataclasses import asdict, dataclass, field
from pathlib import Path

import numpy as np

from ..errors import SimulationError
from ..fsio import write_text_atomic
from .circuit import Circuit, DiodeModel
from .decks import build_deck, deck_for
from .elements import Layout, analytic_ic, diode_sweep_netlist
from .run import run_netlist

N_MEASURE_PERIODS = 20  # switching periods in the measurement window at the end of a run
N_RUN_PERIODS = 100  # switching periods per run (output filters settle in a few tens)
V_TOL = 1e-4  # [1] regulation: |mean v_out / v_out - 1|
STEADY_TOL = 1e-4  # [1] confirmation run: relative change of mean v_out and mean i_L
MAX_RUNS = 40
SLOPE_MAX = 10.0  # largest accepted secant slope of the duty search, in units of v/D


@dataclass
class SimResult:
    """Measured steady state of one corner.

    Attributes
    ----------
    duty : float
        Regulated duty ratio of each switch [1].
    v_out_mean : float
        Mean output voltage over the window [V].
    p_in : float
        Power delivered by the input source [W].
    p_out : float
        Power into the load resistor [W].
    positions : dict
        ``(role, index)`` -> quantity -> value [V, A, T], see :func:`measure`.
    diagnostics : dict
        Further measured values: winding rms currents, switch channel and body-diode
        currents, damping-resistor loss, change of stored energy, run count, timing.
    """

    duty: float
    v_out_mean: float
    p_in: float
    p_out: float
    positions: dict[tuple[str, int], dict[str, float]] = field(default_factory=dict)
    diagnostics: dict[str, float] = field(default_factory=dict)


class Window:
    """Samples in [t_a, t_b] with the first instant interpolated; trapezoidal integrals."""

    def __init__(self, vec: dict[str, np.ndarray], t_a: float):
        t = vec["time"]
        k = int(np.searchsorted(t, t_a, side="right"))
        if k == 0 or k >= t.size:
            raise SimulationError("measurement window not covered by the saved data")
        self._vec, self._k, self._t_a = vec, k, t_a
        self._w = (t_a - t[k - 1]) / (t[k] - t[k - 1]) if t[k] > t[k - 1] else 1.0
        self.t = np.concatenate(([t_a], t[k:]))
        self._dt = np.diff(self.t)
        self.length = self.t[-1] - self.t[0]

    def __getitem__(self, name: str) -> np.ndarray:
        x = self._vec[name]
        k, w = self._k, self._w
        return np.concatenate(([x[k - 1] + w * (x[k] - x[k - 1])], x[k:]))

    def mean(self, x: np.ndarray) -> float:
        """Trapezoidal mean over the window.

        Parameters
        ----------
        x : numpy.ndarray
            Samples of one quantity on the window's time points [V or A].

        Returns
        -------
        float
            Mean [V or A].
        """
        return float(np.dot(self._dt, 0.5 * (x[1:] + x[:-1])) / self.length)  # trapezoidal

    def rms(self, x: np.ndarray) -> float:
        """Trapezoidal rms over the window [V or A] of the samples ``x`` (as
        :meth:`mean`)."""
        return math.sqrt(max(self.mean(x * x), 0.0))

    def mean_between(self, x: np.ndarray, t0: float, t1: float) -> float:
        """Mean over [t0, t1] inside the window (cumulative integral interpolated).

        Parameters
        ----------
        x : numpy.ndarray
            Samples of one quantity on the window's time points [V or A].
        t0, t1 : float
            Interval inside the window [s].

        Returns
        -------
        float
            Mean [V or A].
        """
        cum = np.concatenate(([0.0], np.cumsum(self._dt * 0.5 * (x[1:] + x[:-1]))))
        return float((np.interp(t1, self.t, cum) - np.interp(t0, self.t, cum)) / (t1 - t0))


def measure(c: Circuit, lay: Layout, vec: dict[str, np.ndarray], t_a: float,
            duty: float) -> dict:
    """Stresses and state over the window from ``t_a`` [s] to the end of the data.

    Parameters
    ----------
    c : Circuit
    lay : Layout
        Names of the netlist that produced ``vec``.
    vec : dict of str to numpy.ndarray
        Vectors from :func:`stresscheck.spice.run.run_netlist` [s, V, A].
    t_a : float
        Start of the window [s]; it ends with the data.
    duty : float
        Duty ratio of the run [1], for the half-bridge flux-bias shift.

    Returns
    -------
    dict
        ``positions`` (per role and index: switch ``v_peak``, ``i_peak``, ``i_rms``;
        rectifier ``v_reverse_peak``, ``i_avg``, ``i_rms``, ``i_peak``; inductor ``i_peak``,
        ``i_rms``; capacitors ``i_ripple_rms``, ``v_peak``; transformer ``i_m_peak`` and
        ``b_peak`` where ``core_area`` is set) [V, A, T], ``means``, ``final`` (the
        state at the end, by netlist IC key), ``shift`` and ``flux_shift`` and
        ``v_steady`` (the deck's ``slow_mode_shift``) and ``diagnostics``.
    """
    w = Window(vec, t_a)

    def v(node: str) -> np.ndarray:
        return w[f"v({node})"] if node != "0" else np.zeros_like(w.t)

    pos: dict[tuple[str, int], dict[str, float]] = {}
    diag: dict[str, float] = {}
    mosfets = [(("switch", k), names) for k, names in enumerate(lay.switches)]
    for (role, k), (sense, drain, source, body) in mosfets + list(lay.mosfets.items()):
        i, i_b = w[f"i({sense})"], w[f"i({body})"]
        pos[(role, k)] = {"v_peak": float(np.max(v(drain) - v(source))),
                          "i_peak": float(np.max(np.abs(i))), "i_rms": w.rms(i)}
        diag[f"{role}-{k}.i_channel_rms"] = w.rms(i + i_b)  # body current: source -> drain
        diag[f"{role}-{k}.i_body_avg"] = w.mean(i_b)
        diag[f"{role}-{k}.i_body_rms"] = w.rms(i_b)
    for role, diodes in (("rectifier", lay.rectifiers), ("freewheel", lay.freewheels),
                         ("reset", lay.resets)):
        for k, (src, anode, cathode) in enumerate(diodes):
            i = w[f"i({src})"]
            pos[(role, k)] = {"v_reverse_peak": float(np.max(v(cathode) - v(anode))),
                              "i_avg": w.mean(i), "i_rms": w.rms(i),
                              "i_peak": float(np.max(np.abs(i)))}
    # The output inductor; without one (flyback) the magnetizing current stands in for
    # it in the steady-state test.
    i_l = w["i(lout)"] if "i(lout)" in vec else w["i(lm)"]
    if "i(lout)" in vec:
        pos[("inductor", 0)] = {"i_peak": float(np.max(np.abs(i_l))), "i_rms": w.rms(i_l)}
    if "lout2" in lay.inductors:  # current doubler
        i_l2 = w["i(lout2)"]
        pos[("inductor", 1)] = {"i_peak": float(np.max(np.abs(i_l2))), "i_rms": w.rms(i_l2)}
    for key, (sense, plus, minus, _, _) in lay.caps.items():
        i = w[f"i({sense})"]
        pos[key] = {"i_ripple_rms": w.rms(i), "v_peak": float(np.max(v(plus) - v(minus)))}
        diag[f"{key[0]}-{key[1]}.i_mean"] = w.mean(i)
    i_m = w["i(lm)"] if "i(lm)" in vec else np.zeros_like(w.t)  # no transformer: buck, boost
    if "i(lm)" in vec:
        i_m_peak = float(np.max(np.abs(i_m)))
        xf = {"i_m_peak": i_m_peak}
        if c.core_area:
            xf["b_peak"] = lay.l_m * i_m_peak / (c.n_p * c.core_area)
        pos[("transformer", 0)] = xf
    for label, (sense, _) in lay.windings.items():
        diag[f"{label}.i_rms"] = w.rms(w[f"i({sense})"])

    v_out = v("out")
    means = {"v_out": w.mean(v_out), "i_l": w.mean(i_l), "i_m": w.mean(i_m),
             "i_choke": w.mean(w["i(lch)"])}
    p_in = -c.v_in * w.mean(w["i(vin)"])
    p_out = w.mean(v_out * v_out) / lay.r_load
    v_damp = c.v_in - v("bus")
    diag["p_damp"] = w.mean(v_damp * v_damp) / lay.r_damp
    diag["choke_l"], diag["choke_r"] = lay.l_choke, lay.r_damp
    diag["i_l_mean"] = means["i_l"]
    diag["i_m_mean"] = means["i_m"]
    diag["v_out_ripple_pp"] = float(np.ptp(v_out))

    # State at both ends of the window: warm start and change of stored energy.
    caps = {("output-capacitor", 0): ("cout", c.c_out), ("input-capacitor", 0): ("cin", c.c_in)}
    if c.topology == "half-bridge":
        caps.update({("split-capacitor", 0): ("ctop", c.c_split[0]),
                     ("split-capacitor", 1): ("cbot", c.c_split[1])})
    final, e_change = {}, 0.0
    for key, (_, _, _, cp, cm) in lay.caps.items():
        v_c = v(cp) - v(cm)
        ic_key, cap = caps[key]
        final[ic_key] = float(v_c[-1])
        e_change += 0.5 * cap.capacitance * (v_c[-1] ** 2 - v_c[0] ** 2)
    for name, ind in (("lout", c.l_out), ("lm", lay.l_m), ("lch", lay.l_choke),
                      *lay.inductors.items()):
        if f"i({name})" not in vec:
            continue
        x = w[f"i({name})"]
        final[name] = float(x[-1])
        e_change += 0.5 * ind * (x[-1] ** 2 - x[0] ** 2)
    means["clamp_v"] = 0.0
    for k, cl in enumerate(lay.clamps):  # leakage clamps (deck_clamp)
        i = w[f"i({cl['sense']})"]
        if cl["kind"] == "rcd":
            vc = v(cl["plus"]) - v(cl["minus"])
            final[cl["ic_key"]] = float(vc[-1])
            e_change += 0.5 * cl["capacitance"] * (vc[-1] ** 2 - vc[0] ** 2)
            means["clamp_v"] += w.mean(vc)
            pos[("clamp", k)] = {"v_clamp": float(np.max(vc)), "v_mean": w.mean(vc),
                                 "v_ripple": float(np.ptp(vc)), "i_ripple_rms": w.rms(i),
                                 "p_clamp": w.mean(vc * vc) / cl["resistance"]}
        else:
            pos[("clamp", k)] = {"v_clamp": cl["voltage"],
                                 "p_clamp": cl["voltage"] * w.mean(i)}
    diag["p_stored"] = e_change / w.length
    *shift, v_steady = deck_for(c.topology).slow_mode_shift(c, lay, w, duty)
    if c.topology == "half-bridge":
        diag["v_mid_mean"] = w.mean(v("mid"))
    return {"positions": pos, "means": means, "final": final, "diagnostics": diag,
            "p_in": p_in, "p_out": p_out, "shift": shift[0], "flux_shift": shift[1],
            "v_steady": v_steady}


def _next_duty(points: list[tuple[float, float]], target: float, d_max: float) -> float:
    """Proportional step from the last point, secant through the last two when sane."""
    d2, v2 = points[-1]
    d_new = d2 * target / v2
    if len(points) >= 2:
        d1, v1 = points[-2]
        if d2 != d1:
            slope = (v2 - v1) / (d2 - d1)
            # The converter's gain dv/dD lies near v/D (more with conduction drops),
            # v/(D·(1 − D)) for boost-like stages (a flyback in CCM).
            if 0.5 * v2 / d2 < slope < SLOPE_MAX * v2 / d2:
                d_new = d2 + (target - v2) / slope
    d_new = min(max(d_new, 0.5 * d2), 1.5 * d2)  # no wild steps
    return min(max(d_new, 1e-3), d_max)


def _run(c: Circuit, duty: float, ic: dict, choke: str, workdir: Path,
         periods: int) -> tuple[dict, str]:
    ts = 1.0 / c.f_sw
    t_stop, t_meas = periods * ts, N_MEASURE_PERIODS * ts
    text, lay = build_deck(c, duty, t_stop, t_meas, ic, choke)
    vec = run_netlist(text, workdir)
    return measure(c, lay, vec, t_stop - t_meas, duty), text


def simulate(c: Circuit, *, keep_netlist: Path | None = None) -> SimResult:
    """Regulated steady state of one corner and its measured stresses.

    Parameters
    ----------
    c : Circuit
        The corner; ``c.duty``, ``c.i_l_start`` and ``c.i_m_start`` seed the first run.
    keep_netlist : Path, optional
        Where to write the accepted run's netlist; the measured results go beside it
        as JSON (same stem, ``.json``).

    Returns
    -------
    SimResult

    Raises
    ------
    SimulationError
        ngspice fails, the duty needed exceeds the limit, or no steady state is
        accepted within :data:`MAX_RUNS` runs.
    NotImplementedError
        A topology, rectifier or modulation that no deck builds.
    ValueError
        The circuit lacks positions its topology needs.
    """
    deck = deck_for(c.topology)  # every deck's build checks its circuit
    t0 = time.perf_counter()
    d_max = deck.duty_limit(c)
    duty = min(max(c.duty, 1e-3), d_max)
    ic = analytic_ic(c)
    choke, points, ref = "short", [], None
    dv = di = math.nan
    with tempfile.TemporaryDirectory(prefix="stresscheck-spice-") as tmp:
        for n_run in range(1, MAX_RUNS + 1):
            m, text = _run(c, duty, ic, choke, Path(tmp), N_RUN_PERIODS)
            v_mean, i_mean = m["means"]["v_out"], m["means"]["i_l"]
            if abs(v_mean / c.v_out - 1) < V_TOL and choke == "real":
                if ref is not None:  # this was the confirmation run
                    dv, di = abs(v_mean / ref[0] - 1), abs(i_mean / ref[1] - 1)
                    # a clamp capacitor has its own slow mode (ngspice notes)
                    dc = abs(m["means"]["clamp_v"] - ref[2]) / max(abs(ref[2]), 1e-12)
                    if dv < STEADY_TOL and di < STEADY_TOL and dc < STEADY_TOL:
                        break
                # confirm at unchanged duty and filter state
                ref = (v_mean, i_mean, m["means"]["clamp_v"])
                ic = {k: x + m["flux_shift"].get(k, 0.0) for k, x in m["final"].items()}
                continue
            ref = None
            ic = {k: x + m["shift"].get(k, 0.0) + m["flux_shift"].get(k, 0.0)
                  for k, x in m["final"].items()}
            # The search steers by the steady state of this duty where the family's
            # slow-mode shift estimates it (a flyback's right-half-plane zero makes the
            # first response to a duty step go the wrong way); else by the window mean.
            v_mean = m["v_steady"]
            if abs(v_mean / c.v_out - 1) < V_TOL:
                if choke == "short":  # once: later runs keep the shifted choke state
                    choke = "real"
                    ic["lch"] = m["means"]["i_choke"]  # the real choke carries DC only
                continue
            points.append((duty, v_mean))
            new = _next_duty(points, c.v_out, d_max)
            if new >= d_max and duty >= d_max:
                raise SimulationError(f"cannot regulate: mean v_out {v_mean:.6g} V at "
                                      f"the duty limit {d_max:.4f}")
            duty = new
        else:
            raise SimulationError(f"no accepted steady state after {MAX_RUNS} runs "
                                  f"(duty {duty:.6f}, mean v_out {v_mean:.6g} V)")
    diag = dict(m["diagnostics"])
    diag.update(runs=n_run, wall_time=time.perf_counter() - t0, steady_dv=dv, steady_di=di)
    if c.l_leak and c.modulation != "phase-shift" and not c.clamp:  # simulated there
        diag["l_leak_ignored"] = c.l_leak  # no clamp or snubber modelled for its energy
    res = SimResult(duty=duty, v_out_mean=v_mean, p_in=m["p_in"], p_out=m["p_out"],
                    positions=m["positions"], diagnostics=diag)
    if keep_netlist is not None:
        keep = Path(keep_netlist)
        keep.parent.mkdir(parents=True, exist_ok=True)
        write_text_atomic(keep, text)
        write_text_atomic(keep.with_suffix(".json"),
                          json.dumps(result_json(c, res), indent=2) + "\n")
    return res


def result_json(c: Circuit, res: SimResult) -> dict:
    """JSON-ready record of a simulation: the circuit and everything measured.

    Parameters
    ----------
    c : Circuit
    res : SimResult

    Returns
    -------
    dict
        ``schema``, ``circuit`` (every field of :class:`Circuit`), ``duty`` [1],
        ``v_out_mean`` [V], ``p_in`` and ``p_out`` [W], ``positions`` keyed ``role:index``
        [V, A, T], ``measured_periods`` and ``diagnostics`` (without the wall time).
    """
    return {"schema": "stresscheck.spice-result/1", "circuit": asdict(c),
            "duty": res.duty, "v_out_mean": res.v_out_mean, "p_in": res.p_in,
            "p_out": res.p_out,
            "positions": {f"{role}:{k}": q for (role, k), q in res.positions.items()},
            "measured_periods": N_MEASURE_PERIODS,
            # wall time left out: the committed references stay reproducible
            "diagnostics": {k: x for k, x in res.diagnostics.items() if k != "wall_time"}}


def diode_dc_sweep(d: DiodeModel, i_ref: float, i_max: float, n: int = 50,
                   workdir: Path | None = None) -> tuple[np.ndarray, np.ndarray]:
    """DC sweep of the straight-line diode model in ngspice.

    Parameters
    ----------
    d : DiodeModel
    i_ref : float
        Current at which the model's offset is fitted [A].
    i_max : float
        Largest current of the sweep, which runs from i_max/n in n steps [A].
    n : int
        Number of sweep points.
    workdir : Path, optional
        Folder for the deck and raw file (default: a temporary one).

    Returns
    -------
    (numpy.ndarray, numpy.ndarray)
        Forward currents [A] and terminal voltages [V].
    """
    with tempfile.TemporaryDirectory(prefix="stresscheck-diode-") as tmp:
        vec = run_netlist(diode_sweep_netlist(d, i_ref, i_max, n), workdir or tmp)
    return vec["i(vdt)"], vec["v(a)"]  # the offset source carries the diode current
