"""What the ngspice tests share: finding ngspice, keeping the netlists and results of a
case, and comparing them with the references committed in tests/reference/spice/.

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

import pytest

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
