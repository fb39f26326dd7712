"""What the ngspice tests share: finding ngspice, running a case (design -> engine ->
circuit of one corner -> regulated simulation) once per module, keeping its netlist and
results, comparing them with the references committed in tests/reference/spice/, and the
conduction losses of a simulated circuit for the energy balance.

The comparison tests (test_spice_<family>.py): each case is a small design evaluated by
the engine; the circuit of one corner (the engine's R_DS(on), duty and part values,
:func:`stresscheck.spice.circuit.circuit_at`) is simulated to its regulated steady state
(:func:`stresscheck.spice.simulate.simulate`) and every stress is compared with
``stresscheck.verify.compare_at``, the comparison of ``stresscheck verify``:
  voltages, averages and rms values  2 %
  peaks and capacitor ripple         4 %
(the tolerances of stresscheck.verify; never widened in a test). Measured worst relative
differences are printed with ``pytest -s``. The netlists and results of each case are
committed in tests/reference/spice/ (file name = case).

- Without ngspice a module that imports :func:`ngspice` (an autouse fixture) is skipped,
  unless STRESSCHECK_REQUIRE_NGSPICE=1 (set by ``.ci/run``): then it fails.
- With STRESSCHECK_UPDATE_REFERENCE=1 a case keeps its netlist and results in
  tests/reference/spice/ (file name = case), rewriting the committed reference; otherwise
  in a temporary folder.
"""

from __future__ import annotations

import json
import os
from pathlib import Path

import numpy as np
import pytest

from stresscheck.spice.circuit import SwitchModel, circuit_at
from stresscheck.spice.run import find_ngspice

REFERENCE = Path(__file__).parent / "reference" / "spice"
UPDATE = os.environ.get("STRESSCHECK_UPDATE_REFERENCE") == "1"
REQUIRE = os.environ.get("STRESSCHECK_REQUIRE_NGSPICE") == "1"


@pytest.fixture(scope="module", autouse=True)
def ngspice():
    """The ngspice executable; skips the module without it, unless
    STRESSCHECK_REQUIRE_NGSPICE=1, which turns the skip into a failure."""
    exe = find_ngspice()
    if exe is None:
        if REQUIRE:
            pytest.fail("ngspice not found and STRESSCHECK_REQUIRE_NGSPICE=1", pytrace=False)
        pytest.skip("ngspice not installed")
    return exe


def keep_folder(tmp: Path) -> Path:
    """Folder in which a case keeps its netlist and results: the committed reference
    with STRESSCHECK_UPDATE_REFERENCE=1, else ``tmp``."""
    return REFERENCE if UPDATE else tmp


def kept_results(folder: Path, case: str, netlist: bool = True) -> dict:
    """The results a case kept in ``folder`` (``<case>.json``); with ``netlist``, first
    check that the kept ``<case>.cir`` is a whole deck (ends with ``.end``)."""
    if netlist:
        assert (folder / f"{case}.cir").read_text().rstrip().endswith(".end")
    return json.loads((folder / f"{case}.json").read_text())


def json_positions(positions: dict) -> dict:
    """``SimResult.positions`` keyed as in the results file, ``role:index``."""
    return {f"{role}:{k}": quantities for (role, k), quantities in positions.items()}


def assert_reference_reproduced(case: str, duty: float, positions: dict) -> None:
    """A fresh simulation (its duty [1] and ``positions`` keyed ``role:index``) against
    the committed ``<case>.json``: same models and simulator, so the duty and every
    committed stress reproduce to 1e-3 (absolute 1e-6 for values near zero). A missing
    reference fails and names the variable that writes it."""
    committed = REFERENCE / f"{case}.json"
    if not committed.is_file():
        pytest.fail(f"{committed} missing; run with STRESSCHECK_UPDATE_REFERENCE=1")
    ref = json.loads(committed.read_text())
    assert duty == pytest.approx(ref["duty"], rel=1e-3)
    for key, quantities in ref["positions"].items():
        for name, value in quantities.items():
            assert positions[key][name] == pytest.approx(value, rel=1e-3, abs=1e-6), \
                f"{key} {name}"


def report_worst(case: str, comparisons) -> list[str]:
    """Print the case's worst relative difference (shown with ``pytest -s``); return the
    comparisons outside their tolerance, one line each."""
    worst = max(comparisons, key=lambda x: abs(x.rel))
    print(f"\n{case}: {len(comparisons)} comparisons, worst {worst.ref} {worst.quantity} "
          f"{100 * worst.rel:+.3f} %")
    return [f"{x.ref} {x.quantity}: {x.computed:.6g} vs {x.simulated:.6g} "
            f"({100 * x.rel:+.2f} %)" for x in comparisons if not x.ok]


def outside_tolerance(comparisons) -> list[str]:
    """The comparisons outside their tolerance, one line each with the tolerance."""
    return [f"{c.ref} {c.quantity}: computed {c.computed:.5g}, simulated "
            f"{c.simulated:.5g} ({100 * c.rel:+.2f} % vs ±{100 * c.tolerance:.0f} %)"
            for c in comparisons if not c.ok]


def evaluate(folder: Path, design: dict, parts: dict):
    """The engine's evaluation of ``design`` with ``parts``, written as files into
    ``folder`` (tests/builders.py) and loaded like a user's design."""
    from builders import write_case
    from stresscheck.design import load_design
    from stresscheck.engine import run

    return run(load_design(write_case(folder, design, parts)))


def corner_index(ev, line: str, load: str = "max") -> int:
    """The first corner at low or high line (``line``: "low", "lowline", "high",
    "highline"), at the largest (``load="max"``) or smallest output current and the
    highest ambient temperature."""
    c = ev.corners
    v_in = c["input_voltage"]
    v_line = v_in.min() if line.startswith("low") else v_in.max()
    i_out = c["output_current"].max() if load == "max" else c["output_current"].min()
    mask = ((v_in == v_line) & (c["output_current"] == i_out)
            & (c["ambient_temperature"] == c["ambient_temperature"].max()))
    return int(np.flatnonzero(mask)[0])


def simulate_corner(ev, i: int, folder: Path, case: str):
    """The circuit of corner ``i`` and its regulated simulation, keeping ``<case>.cir``
    and ``<case>.json`` in :func:`keep_folder` of ``folder``.

    Returns (circuit, SimResult, folder kept in)."""
    from stresscheck.spice.simulate import simulate

    target = keep_folder(folder) / f"{case}.cir"
    c = circuit_at(ev, i)
    return c, simulate(c, keep_netlist=target), target.parent


def simulated_cases(run_case):
    """A module-scoped fixture ``simulated(case)`` that returns ``run_case(case,
    folder)`` (``folder`` a fresh temporary folder), running each case once per session:
    the simulations are the slow part and several tests read the same one."""
    cache: dict = {}

    @pytest.fixture(scope="module")
    def simulated(tmp_path_factory):
        def get(case: str):
            if case not in cache:
                cache[case] = run_case(case, tmp_path_factory.mktemp(case))
            return cache[case]
        return get
    return simulated


def conduction_losses(c, r) -> float:
    """Conduction losses of a simulated circuit from its measured currents and the
    circuit's resistances [W].

    Joule losses R·I_rms² in every MOSFET channel (R_DS(on)), inductor (DCR), capacitor
    (ESR) and winding; straight-line diodes, body diodes included, v_f0·I_avg +
    r_d·I_rms² (Erickson & Maksimović, Fundamentals of Power Electronics, 2nd ed.,
    ch. 3 — from memory). The off resistance of the simulated switches is not counted.

    Parameters
    ----------
    c : Circuit
        The simulated circuit.
    r : SimResult
        Its measured positions and diagnostics [V, A].
    """
    pos, dg = r.positions, r.diagnostics
    p = 0.0
    for role, models in (("switch", c.switches), ("rectifier", c.rectifiers),
                         ("freewheel", c.freewheels), ("reset", c.resets)):
        for k, m in enumerate(models):
            if isinstance(m, SwitchModel):  # channel, and body diode source -> drain
                p += m.r_on * dg[f"{role}-{k}.i_channel_rms"] ** 2
                p += (m.body.v_f0 * dg[f"{role}-{k}.i_body_avg"]
                      + m.body.r_d * dg[f"{role}-{k}.i_body_rms"] ** 2)
            else:
                q = pos[(role, k)]
                p += m.v_f0 * q["i_avg"] + m.r_d * q["i_rms"] ** 2
    for k, dcr in enumerate((c.dcr_out, c.dcr_out_2)):
        if ("inductor", k) in pos:
            p += dcr * pos[("inductor", k)]["i_rms"] ** 2
    banks = {"output-capacitor": [c.c_out], "input-capacitor": [c.c_in],
             "split-capacitor": c.c_split}
    for role, caps in banks.items():
        for k, cap in enumerate(caps):
            if (role, k) in pos:
                p += cap.esr * pos[(role, k)]["i_ripple_rms"] ** 2
    windings = {"primary": c.r_primary, "secondary": c.r_secondary, "reset": c.r_reset}
    for name, value in dg.items():
        if name.endswith(".i_rms"):  # windings only: primary[-k], secondary-k, reset
            p += windings[name.split(".")[0].split("-")[0]] * value ** 2
    return p


def assert_energy_balance(case: str, c, r, extra: float = 0.0) -> None:
    """Energy conservation in the simulation (common practice): p_in = p_out + the
    conduction losses (:func:`conduction_losses`) + ``extra`` [W] + the damping-resistor
    loss + the change of stored energy, to 1e-3 of p_in: the diode fit departs by ~3 mV
    per decade of current from its straight line, and the steady state is accepted at
    1e-4. The balance is printed (``pytest -s``)."""
    balance = (r.p_out + conduction_losses(c, r) + extra + r.diagnostics["p_damp"]
               + r.diagnostics["p_stored"])
    print(f"\n{case}: energy balance {(r.p_in - balance) / r.p_in:+.2e} of p_in")
    assert abs(r.p_in - balance) / r.p_in < 1e-3
