"""Texts that results carry and every report prints: the safety and scope statements
(HTML top and bottom, spreadsheet summary sheet, results.json ``cautions``).

Below both computing and rendering: ``results.py`` and ``report/`` import from here, and
this module imports nothing of the package.
"""

from __future__ import annotations

CAUTIONS: tuple[str, ...] = (
    "Switch-mode power supplies carry hazardous voltages. Circuits fed from the mains and "
    "high-voltage DC buses can give a lethal shock, and capacitors can stay charged to a "
    "dangerous level long after the supply has been switched off. Check with a meter that "
    "a circuit is discharged before touching it.",
    "This report is an engineering aid. Its figures are computed from circuit models and "
    "datasheet values. They do not replace measurements on the built hardware, and they "
    "do not replace the judgement of a qualified engineer.",
    "Local electrical codes, the product safety standards that apply to the equipment and "
    "licensed professional practice take precedence over anything in this report.",
    "The results hold only for the inputs, operating corners and derating policy stated "
    "here. A change to the design, a part, a tolerance or the policy needs a new run.",
)
