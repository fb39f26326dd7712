"""The ngspice decks rebuild every committed reference netlist text for text.

Each ``tests/reference/spice/<case>.cir`` was written by the deck of its topology from the
circuit kept beside it in ``<case>.json`` (every field of ``Circuit``), the regulated duty,
the real input choke, 100 periods of which the last 20 are saved, and the warm start of
the accepted run (the ``IC=`` values of the file, the only numbers taken from the deck
itself). Rebuilding it from those inputs must give the same text, byte for byte: a deck
refactoring that moves one element or one digit fails here, without running ngspice.
"""

from __future__ import annotations

import json
import re
from pathlib import Path

import pytest

from stresscheck.spice.circuit import CapacitorModel, Circuit, DiodeModel, SwitchModel

REFERENCE = Path(__file__).parent / "reference" / "spice"
CASES = sorted(p.stem for p in REFERENCE.glob("*.cir"))
#: Element of the deck -> initial-condition key of the deck builders.
IC_ELEMENTS = {"lout": "lout", "lout2": "lout2", "lm": "lm", "lch": "lch", "llk": "llk",
               "cco": "cout", "cci": "cin", "cct": "ctop", "ccb": "cbot",
               # leakage and clamp capacitor of each switch (deck_clamp)
               "llk0": "llk0", "llk1": "llk1", "cccl0": "ccl0", "cccl1": "ccl1"}
#: Periods per run and saved at its end (stresscheck.spice.simulate; the README of
#: tests/reference/spice/).
RUN_PERIODS, MEASURED_PERIODS = 100, 20


def _model(x):
    """A position of the JSON circuit back as its model."""
    if isinstance(x, dict) and "r_on" in x:
        return SwitchModel(x["r_on"], DiodeModel(**x["body"]))
    return DiodeModel(**x)


def circuit_from_json(data: dict) -> Circuit:
    """The :class:`Circuit` of a results file (``dataclasses.asdict`` inverted)."""
    fields = dict(data)
    for key in ("switches", "rectifiers", "freewheels", "resets"):
        fields[key] = [_model(x) for x in fields[key]]
    for key in ("c_out", "c_in"):
        fields[key] = CapacitorModel(**fields[key]) if fields[key] else None
    fields["c_split"] = [CapacitorModel(**x) for x in fields["c_split"]]
    return Circuit(**fields)


def initial_state(text: str) -> dict[str, float]:
    """The ``IC=`` values of a deck by initial-condition key [A, V]."""
    ic = {}
    for line in text.splitlines():
        m = re.match(r"(\S+) .* IC=(\S+)$", line)
        if m and m.group(1).lower() in IC_ELEMENTS:
            ic[IC_ELEMENTS[m.group(1).lower()]] = float(m.group(2))
    return ic


def test_every_reference_has_its_results():
    assert len(CASES) >= 40
    for case in CASES:
        assert (REFERENCE / f"{case}.json").is_file(), case


@pytest.mark.parametrize("case", CASES)
def test_reference_netlist_rebuilt(case):
    from stresscheck.spice.decks import build_deck

    text = (REFERENCE / f"{case}.cir").read_text()
    data = json.loads((REFERENCE / f"{case}.json").read_text())
    c = circuit_from_json(data["circuit"])
    ts = 1.0 / c.f_sw
    rebuilt, _ = build_deck(c, data["duty"], RUN_PERIODS * ts, MEASURED_PERIODS * ts,
                            initial_state(text), "real")
    assert rebuilt == text


def test_every_topology_has_one_deck():
    """The registry covers exactly the closed set of topology names (schema.py)."""
    from stresscheck import schema
    from stresscheck.spice.decks import DECKS

    assert set(DECKS) == set(schema.TOPOLOGIES)


def test_unknown_topology_names_the_valid_ones():
    from stresscheck.spice.decks import DECKS, deck_for

    with pytest.raises(NotImplementedError, match="valid: " + ", ".join(DECKS)):
        deck_for("resonant-llc")
