"""Deck primitives: the element blocks, sources, switch and diode models and initial
conditions that the ngspice decks of every family write, and the :class:`Deck` type
of a family's deck.

Models (the project's ngspice notes, shared reference "ngspice-notes"): ``S`` switches
with an antiparallel body diode, an ideal transformer built from controlled sources
plus one magnetizing inductance, straight-line diodes (offset source + near-ideal diode
+ slope resistor), L with DCR, C with ESR and a 0 V sense source, and a DC input behind
a damped choke. The element names each block writes are listed in its docstring and in
the docstring of each deck module.

Initial conditions (``ic``) use the keys of :data:`IC_KEYS`: inductor currents [A] in the
element's positive direction and capacitor voltages [V] across the ideal capacitance
(ESR excluded).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Callable

from .circuit import Circuit, DiodeModel

CHOKES = ("short", "real")

#: Near-ideal diode of the straight-line model: saturation current [A], emission coefficient.
DIODE_IS = 1e-12
DIODE_N = 0.05
#: Thermal voltage at ngspice's default TNOM = 27 degC [V] (k/q = 8.617087e-5 V/K in ngspice).
V_THERMAL = 8.617087e-5 * 300.15
#: Switch off resistance [ohm] and gate thresholds [V] for 0/1 V gate pulses: on above
#: VT + VH = 0.7 V, off below VT - VH = 0.3 V, so the on-time (0.7 ns into the rise to
#: 0.7 ns into the fall) equals the pulse's mid-edge to mid-edge width.
R_OFF = 1e7  # v²/R_OFF per blocking switch: 1e6 would leak ~5e-5 of the power at 48 V
SW_VT, SW_VH = 0.5, 0.2
T_EDGE = 1e-9  # [s] gate pulse rise and fall
#: Input choke resonance with the input capacitance, as a fraction of f_sw: the real
#: choke passes DC only (the bridge draws its AC at f_sw or 2 f_sw, (1/100)^2 of the
#: ripple power leaks into the damping branch), the short one settles ten times faster.
CHOKE_RESONANCE = {"short": 0.1, "real": 0.01}
R_FLOAT = 1e7  # [ohm] common-mode anchor of a floating secondary
STEPS_PER_PERIOD = 400  # maximum time step Ts/400
#: Current tolerance [A]. The default 1 pA is below the round-off of the ~10 nA that an
#: off diode branch carries beside amperes elsewhere: Newton never converges and the
#: run stops with "timestep too small" (seen in a half-bridge at light load).
ABSTOL = 1e-9
#: Current at which the diode fit is exact, as a fraction of i_out (reflected for body
#: diodes): a bridge rectifier conducts between i_out/2 (freewheel) and i_out.
I_REF_FRACTION = 0.75
#: Initial-condition keys of the decks: inductor currents [A] by element name, capacitor
#: voltages [V] (``cout``, ``cin``, half-bridge ``ctop``/``cbot``).
IC_KEYS = ("lout", "lm", "lch", "cout", "cin", "ctop", "cbot", "lout2", "llk")


@dataclass
class Layout:
    """Node and element names of one netlist, for the measurement code.

    Attributes
    ----------
    switches : list of (sense, drain, source, body) names per switch position
    rectifiers : list of (offset source, anode node, cathode node) per rectifier position
    freewheels, resets : the same for the 'freewheel' and 'reset' positions (forward)
    mosfets : dict position key -> (sense, drain, source, body) for MOSFETs outside the
        'switch' role (synchronous freewheel or rectifier)
    caps : dict position key -> (sense source, plus node, minus node, cap + node, cap - node)
    windings : dict winding label -> (sense source, resistance [ohm])
    inductors : dict element name (also its IC key) -> inductance [H] of further
        inductors (``lout2``: the second output inductor, position ('inductor', 1);
        ``llk``: a series leakage inductance), for warm start and stored energy
    """

    switches: list[tuple[str, str, str, str]] = field(default_factory=list)
    rectifiers: list[tuple[str, str, str]] = field(default_factory=list)
    freewheels: list[tuple[str, str, str]] = field(default_factory=list)
    resets: list[tuple[str, str, str]] = field(default_factory=list)
    mosfets: dict[tuple[str, int], tuple[str, str, str, str]] = field(default_factory=dict)
    caps: dict[tuple[str, int], tuple[str, str, str, str, str]] = field(default_factory=dict)
    windings: dict[str, tuple[str, float]] = field(default_factory=dict)
    inductors: dict[str, float] = field(default_factory=dict)
    # leakage clamps (deck_clamp): per switch a dict with "kind" ("rcd": "ic_key",
    # "sense", "plus", "minus", "capacitance", "resistance"; "voltage": "sense",
    # "voltage")
    clamps: list[dict] = field(default_factory=list)
    r_load: float = 1.0  # [ohm]
    r_damp: float = 1.0  # [ohm] choke damping resistor, between ``vsrc`` and ``bus``
    l_choke: float = 1.0  # [H]
    l_m: float = 1.0  # [H] as simulated

def diode_offset(d: DiodeModel, i_ref: float) -> float:
    """Offset source of the straight-line diode model [V].

    The near-ideal diode adds n·V_T·ln(1 + I/I_S) (about 36 mV at 1 A); the offset is
    chosen so the drop is exactly ``v_f0 + r_d·i_ref`` at ``i_ref`` [A]; it departs by
    n·V_T·ln(10), about 3 mV, per decade of current away from it.

    Parameters
    ----------
    d : DiodeModel
        The straight-line diode (v_f0 [V], r_d [ohm]).
    i_ref : float
        Current at which the model is exact [A].

    Returns
    -------
    float
        DC value of the offset source [V].
    """
    return d.v_f0 - DIODE_N * V_THERMAL * math.log1p(max(i_ref, 1e-6) / DIODE_IS)


def switching_period(c: Circuit) -> float:
    """Switching period of each switch, 1/f_sw [s].

    Parameters
    ----------
    c : Circuit

    Returns
    -------
    float
        1/f_sw [s].
    """
    return 1.0 / c.f_sw


def choke_values(c: Circuit, choke: str) -> tuple[float, float]:
    """Input choke inductance [H] and parallel damping resistance [ohm].

    The choke resonates with the input capacitance at
    ``CHOKE_RESONANCE[choke]·f_sw``; the damping resistor equals the characteristic
    impedance sqrt(L/C), which damps that resonance to a quality factor near one.
    Half-bridge: C is the series value of the two split capacitors.

    Parameters
    ----------
    c : Circuit
    choke : {"short", "real"}
        Which choke (:data:`CHOKE_RESONANCE`).

    Returns
    -------
    (float, float)
        Inductance [H] and damping resistance [ohm].

    Raises
    ------
    ValueError
        ``choke`` not in :data:`CHOKES`.
    """
    if choke not in CHOKES:
        raise ValueError(f"choke {choke!r} not known; valid: {', '.join(CHOKES)}")
    if c.topology == "half-bridge":  # the bus sees the split capacitors in series
        c_t, c_b = c.c_split[0].capacitance, c.c_split[1].capacitance
        cap = c_t * c_b / (c_t + c_b)
    else:
        cap = c.c_in.capacitance
    w_r = 2 * math.pi * CHOKE_RESONANCE[choke] * c.f_sw
    l_ch = 1.0 / (w_r * w_r * cap)
    return l_ch, math.sqrt(l_ch / cap)


def analytic_ic(c: Circuit) -> dict[str, float]:
    """Initial conditions of a first run from the analytic values [A, V].

    Parameters
    ----------
    c : Circuit
        The corner with the engine's warm start (``i_l_start``, ``i_m_start`` [A]).

    Returns
    -------
    dict of str to float
        By IC key: inductor currents [A] (the choke's from the output power at an assumed
        90 % efficiency), capacitor voltages [V] (output at v_out, input at v_in, split
        capacitors at v_in/2).
    """
    p_in = c.v_out * c.i_out / 0.9  # choke DC; the first runs correct it
    ic = {"lout": c.i_l_start, "lm": c.i_m_start, "lch": p_in / c.v_in, "cout": c.v_out}
    if c.topology == "half-bridge":
        ic["ctop"] = ic["cbot"] = c.v_in / 2
    else:
        ic["cin"] = c.v_in
    return ic


def initial_conditions(c: Circuit, ic: dict | None, warm=analytic_ic) -> dict[str, float]:
    """Initial state of a run [A, V]: ``warm(c)`` (default :func:`analytic_ic`), the keys
    of ``ic`` taking precedence.

    Parameters
    ----------
    c : Circuit
    ic : dict or None
        Known state by IC key [A, V].
    warm : callable
        ``warm(c) -> dict``, the state of a first run [A, V].

    Returns
    -------
    dict of str to float
        State by IC key [A, V].
    """
    return {**warm(c), **(ic or {})}

class NetlistWriter:
    """Lines of one netlist and its :class:`Layout` (``lay``), with the element blocks
    that the decks of every family share (the models of the module docstring)."""

    def __init__(self):
        self.lines: list[str] = []
        self.lay = Layout()

    def add(self, line: str) -> None:
        self.lines.append(line)

    def res(self, name: str, a: str, b: str, r: float) -> None:
        """A resistor, or a 0 V source where r = 0 (an exact short)."""
        self.add(f"R{name} {a} {b} {r:.12g}" if r > 0 else f"V{name}_0 {a} {b} 0")

    def diode(self, tag: str, anode: str, cathode: str, d: DiodeModel, i_ref: float) -> str:
        """Straight-line diode; returns the offset source, whose current is the forward current."""
        src = f"v{tag}"
        self.add(f"{src} {anode} {tag}_1 DC {diode_offset(d, i_ref):.9g}")
        self.add(f"D{tag} {tag}_1 {tag}_2 didl")
        self.res(f"{tag}", f"{tag}_2", cathode, d.r_d)
        return src

    def diode_at(self, positions: list, tag: str, anode: str, cathode: str, d: DiodeModel,
                 i_ref: float) -> None:
        """A straight-line diode (:meth:`diode`, exact at ``i_ref`` [A]), recorded as
        (offset source, anode, cathode) in ``positions``, a list of the :class:`Layout`."""
        positions.append((self.diode(tag, anode, cathode, d, i_ref), anode, cathode))

    def cap(self, tag: str, plus: str, minus: str, capacitance: float, esr: float,
            v0: float) -> tuple[str, str, str, str, str]:
        """C with ESR and a sense source (plus -> ESR -> C -> sense -> minus)."""
        self.res(f"{tag}_esr", plus, f"{tag}_e", esr)
        self.add(f"C{tag} {tag}_e {tag}_s {capacitance:.12g} IC={v0:.12g}")
        self.add(f"v{tag} {tag}_s {minus} 0")
        return (f"v{tag}", plus, minus, f"{tag}_e", f"{tag}_s")

    def inductor(self, name: str, a: str, b: str, inductance: float, dcr: float, i0: float,
                 dcr_tag: str = "dcr", mid: str = "lo", roll_off=None) -> None:
        """L with its DCR: ``a`` -> ``R{dcr_tag}`` -> ``mid`` -> ``name`` -> ``b``;
        inductance [H], DCR [ohm], initial current ``i0`` [A] from ``mid`` to ``b``.

        With ``roll_off`` = (currents [A], fractions [1]) of the position, the inductance
        falls with the current: a behavioural source ``B{name}`` in series after ``name``
        holds V = (f(|i|) − 1)·v_L, so the branch obeys v = f(|i|)·L·di/dt, i.e.
        di/dt = v/(L·f(|i|)) (the differential inductance at the current), with f the
        table read by straight lines, flat beyond its ends."""
        self.res(dcr_tag, a, mid, dcr)
        if roll_off is None:
            self.add(f"{name} {mid} {b} {inductance:.12g} IC={i0:.12g}")
            return
        x, y = roll_off
        pts = [(x[0] - 1e3 * (1.0 + abs(x[0])), y[0]), *zip(x, y),
               (x[-1] + 1e3 * (1.0 + abs(x[-1])), y[-1])]
        table = ", ".join(f"{xi:.9g},{yi:.9g}" for xi, yi in pts)
        node = f"{mid}_{name.lower()}"
        self.add(f"{name} {mid} {node} {inductance:.12g} IC={i0:.12g}")
        self.add(f"B{name} {node} {b} V = (pwl(abs(i({name})), {table}) - 1)"
                 f" * V({mid},{node})")

    def options(self, extra: str = "") -> None:
        """Simulator options (current tolerance :data:`ABSTOL`, then ``extra``, e.g. an
        integration method) and the near-ideal diode model ``didl``."""
        self.add(f".options rshunt=1e9 reltol=1e-5 abstol={ABSTOL:g}{extra}")
        self.add(f".model didl D(IS={DIODE_IS:g} N={DIODE_N:g})")

    def switch_models(self, switches, group: str = "") -> None:
        """Switch model ``sw{group}{k}`` of each of ``switches``: R_DS(on) ``r_on`` [ohm],
        off resistance :data:`R_OFF`, thresholds :data:`SW_VT` ± :data:`SW_VH` [V]."""
        for k, sw in enumerate(switches):
            self.add(f".model sw{group}{k} SW(RON={sw.r_on:.9g} ROFF={R_OFF:g} VT={SW_VT:g} "
                     f"VH={SW_VH:g})")

    def switch(self, k: int, drain: str, source: str, gate: str, sw, i_ref: float,
               group: str = "") -> tuple[str, str, str, str]:
        """Switch ``S{group}{k}`` (model ``sw{group}{k}``, gate node ``g{gate}``) with its
        antiparallel body diode ``b{group}{k}`` (anode at the source, exact at ``i_ref``
        [A]) and a 0 V sense source in the drain lead, ``vq{k}`` (``v{group}{k}`` for a
        group). Returns (sense, drain, source, body-diode offset source)."""
        tag = f"{group or 'q'}{k}"
        self.add(f"v{tag} {drain} {tag}d 0")
        self.add(f"S{group}{k} {tag}d {source} g{gate} 0 sw{group}{k} OFF")
        body = self.diode(f"b{group}{k}", source, f"{tag}d", sw.body, i_ref)
        return (f"v{tag}", drain, source, body)

    def gate(self, name: str, delay: float, on_time: float, period: float) -> None:
        """0/1 V gate pulse on node ``g{name}``: on from ``delay`` for ``on_time``, every
        ``period`` [s], mid-edge to mid-edge (edges :data:`T_EDGE`)."""
        width = max(on_time - T_EDGE, T_EDGE)
        self.add(f"Vg{name} g{name} 0 PULSE(0 1 {delay:.12g} {T_EDGE:g} {T_EDGE:g} "
                 f"{width:.12g} {period:.12g})")

    def gate_off(self, name: str, t_off: float, off_time: float, period: float) -> None:
        """Gate that is on at t = 0, off from ``t_off`` for ``off_time`` every ``period``
        [s] (same edge convention as :meth:`gate`: the switch changes 0.7 ns into each
        edge)."""
        width = max(off_time - T_EDGE, T_EDGE)
        self.add(f"Vg{name} g{name} 0 PULSE(1 0 {t_off:.12g} {T_EDGE:g} {T_EDGE:g} "
                 f"{width:.12g} {period:.12g})")

    def input_filter(self, c: Circuit, choke: str, ic: dict) -> None:
        """Input: source -> choke || damping -> bus (:func:`choke_values`), and the input
        capacitor ``ci`` (bus to ground) or, half-bridge, the split capacitors ``ct``
        (bus to ``mid``) and ``cb`` (``mid`` to ground); initial values from ``ic``."""
        lay = self.lay
        l_ch, r_damp = choke_values(c, choke)
        lay.l_choke, lay.r_damp = l_ch, r_damp
        self.add(f"Vin vsrc 0 DC {c.v_in:.12g}")
        self.add(f"Lch vsrc bus {l_ch:.12g} IC={ic['lch']:.12g}")
        self.add(f"Rdamp vsrc bus {r_damp:.12g}")
        if c.topology == "half-bridge":
            top, bot = c.c_split
            lay.caps[("split-capacitor", 0)] = self.cap("ct", "bus", "mid", top.capacitance,
                                                        top.esr, ic["ctop"])
            lay.caps[("split-capacitor", 1)] = self.cap("cb", "mid", "0", bot.capacitance,
                                                        bot.esr, ic["cbot"])
        else:
            lay.caps[("input-capacitor", 0)] = self.cap("ci", "bus", "0", c.c_in.capacitance,
                                                        c.c_in.esr, ic["cin"])

    def primary(self, top: str, r: float) -> None:
        """Primary current sense ``vp1`` from ``top`` into the dot, then the primary
        resistance ``r`` [ohm] to the emf node ``p1``."""
        self.add(f"vp1 {top} p1r 0")
        self.res("p1", "p1r", "p1", r)

    def magnetizing(self, undot: str, l_m: float, i0: float) -> None:
        """Magnetizing inductance ``Lm`` across the primary emf (``p1`` -> ``undot``),
        ``l_m`` [H] (not finite or not positive: "no Lm", a negligible 1 kH), initial
        current ``i0`` [A]."""
        l_m = l_m if math.isfinite(l_m) and l_m > 0 else 1e3  # "no Lm" -> negligible
        self.lay.l_m = l_m
        self.add(f"Lm p1 {undot} {l_m:.12g} IC={i0:.12g}")

    def winding(self, tag: str, dot: str, undot: str, pu: str, ratio: float,
                r: float) -> str:
        """Winding ``tag`` of the ideal transformer: E source ``V(dot) − V(undot) =
        ratio·V(p1, pu)`` in series with its resistance ``r`` [ohm] and the sense source
        ``vw{tag}`` (into the dot), reflected to the primary by an F source drawing
        −ratio·i. Returns the sense source."""
        self.add(f"vw{tag} {dot} w{tag}i 0")
        self.res(f"w{tag}", f"w{tag}i", f"w{tag}e", r)
        self.add(f"Ew{tag} w{tag}e {undot} p1 {pu} {ratio:.12g}")
        self.add(f"Fw{tag} p1 {pu} vw{tag} {-ratio:.12g}")
        return f"vw{tag}"

    def output(self, c: Circuit, ic: dict) -> None:
        """Output capacitor ``co`` (``out`` to ground, initial voltage ``ic['cout']``
        [V]) and the load resistor v_out/i_out [ohm]."""
        lay = self.lay
        lay.caps[("output-capacitor", 0)] = self.cap("co", "out", "0", c.c_out.capacitance,
                                                     c.c_out.esr, ic["cout"])
        lay.r_load = c.v_out / c.i_out
        self.add(f"Rload out 0 {lay.r_load:.12g}")

    def finish(self, ts: float, t_stop: float, t_measure: float,
               steps: int = STEPS_PER_PERIOD) -> str:
        """``.tran`` to ``t_stop`` [s] from the initial conditions (``uic``), maximum step
        ts/``steps`` (default :data:`STEPS_PER_PERIOD`), saving from one step before the
        last ``t_measure`` [s]; ``.end``. Returns the netlist text."""
        t_start = max(t_stop - t_measure - ts / steps, 0.0)
        h = ts / steps
        self.add(f".tran {h:.12g} {t_stop:.12g} {t_start:.12g} {h:.12g} uic")
        self.add(".end")
        return "\n".join(self.lines) + "\n"


def diode_sweep_netlist(d: DiodeModel, i_ref: float, i_max: float, n: int = 50) -> str:
    """DC sweep of the straight-line diode model from i_max/n to i_max [A].

    The diode's terminal voltage is ``v(a)``; offset chosen for ``i_ref`` [A] as in
    the converter netlists.

    Parameters
    ----------
    d : DiodeModel
        The straight-line model (v_f0 [V], r_d [ohm]).
    i_ref : float
        The offset makes the model exact at this current [A].
    i_max : float
        End of the sweep, which starts at i_max/n [A].
    n : int
        Sweep steps.

    Returns
    -------
    str
        The deck, ending with ``.end``.
    """
    deck = NetlistWriter()
    deck.add("* straight-line diode model, DC sweep")
    deck.add(".options rshunt=1e9 reltol=1e-5")
    deck.add(f".model didl D(IS={DIODE_IS:g} N={DIODE_N:g})")
    deck.add("Itest 0 a DC 1")
    deck.diode("dt", "a", "0", d, i_ref)
    step = i_max / n
    deck.add(f".dc Itest {step:.9g} {i_max:.9g} {step:.9g}")
    deck.add(".end")
    return "\n".join(deck.lines) + "\n"


@dataclass(frozen=True)
class Deck:
    """The ngspice deck of one converter family, as the simulation uses it.

    Attributes
    ----------
    name : str
        The family, for messages.
    build : callable
        ``build(c, duty, t_stop, t_measure, ic, choke) -> (text, Layout)``: the netlist
        of circuit ``c`` at ``duty`` [1], ``t_stop`` and ``t_measure`` [s], initial state
        ``ic`` by :data:`IC_KEYS` [A, V] and input ``choke`` (``"short"`` | ``"real"``).
        It checks that it builds ``c`` (``NotImplementedError``, ``ValueError``).
    duty_limit : callable
        ``duty_limit(c) -> float``: the largest duty ratio the deck can simulate [1].
    slow_mode_shift : callable
        ``slow_mode_shift(c, lay, w, duty) -> (filters, flux, v_steady)``: the state shift
        to the averaged equilibrium of a run's duty, by IC key [A, V], split into the
        filter shift and the flux-bias shift, and the estimated steady mean output
        voltage of the duty [V] (see :mod:`stresscheck.spice.simulate`).
    refused : str or None
        Why ``verify`` does not simulate this topology at all (None: it does); the
        three callables then raise ``NotImplementedError`` with it.
    """

    name: str
    build: Callable
    duty_limit: Callable
    slow_mode_shift: Callable
    refused: str | None = None
