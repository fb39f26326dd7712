"""The run id: one id stamped in every file of a report set (results.json, report.html,
report.xlsx, checks.csv), so a file left from another run is recognised.

The id is derived from the results' content, so identical results give identical ids and
results.json stays byte-identical across reruns.
"""

from __future__ import annotations

import hashlib
import json


def run_id_of(doc: dict) -> str:
    """The run id of a results document: the first 16 hex digits of the SHA-256 of its
    content (``run_id`` itself left out), so identical results give identical ids and
    results.json stays byte-identical across reruns.

    Parameters
    ----------
    doc
        A results dict.

    Returns
    -------
    str
        16 lowercase hex digits.
    """
    body = {k: v for k, v in doc.items() if k != "run_id"}
    text = json.dumps(body, sort_keys=True, ensure_ascii=False, allow_nan=False)
    return hashlib.sha256(text.encode("utf-8")).hexdigest()[:16]


def stamp_run_id(doc: dict) -> dict:
    """``doc`` with ``run_id`` (see `run_id_of`) placed after ``schema``; every report of
    a set shows this id, so a file from another run is recognised."""
    run_id = run_id_of(doc)
    out = {}
    for key, value in doc.items():
        if key == "run_id":
            continue
        out[key] = value
        if key == "schema":
            out["run_id"] = run_id
    if "run_id" not in out:
        out["run_id"] = run_id
    return out
