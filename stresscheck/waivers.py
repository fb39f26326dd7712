"""Waivers: a reviewer's signed acceptance of one check that does not meet the policy.

``[[waivers]]`` in the design file (CONTRACT.md, "Extensions"): ``ref``, ``quantity``,
``reason``, ``approved_by``, ``date`` and optional ``expires``. A waived check keeps its
numbers, gets status ``waived`` (the status it replaced is kept in ``waived_status``) and
no longer sets the exit status. A waiver that has expired on the run date, or names a
ref or a quantity the design does not have, is an input error naming the waiver.
"""

from __future__ import annotations

import datetime as _dt
from dataclasses import dataclass

from . import schema
from .errors import InputError
from .tomlio import check_keys, optional_text, require_str, shorten, suggest, type_name

WAIVER_KEYS = ("ref", "quantity", "reason", "approved_by", "date", "expires")
# Statuses a waiver replaces; a waiver on a passing or info row is kept beside it.
WAIVABLE = ("fail", "marginal", "unrated", "not-computed")


@dataclass(frozen=True)
class Waiver:
    ref: str
    quantity: str
    reason: str
    approved_by: str
    date: _dt.date
    expires: _dt.date | None
    key: str  # "waivers[2]" for messages

    def as_dict(self) -> dict:
        return {"reason": self.reason, "approved_by": self.approved_by,
                "date": self.date.isoformat(),
                "expires": self.expires.isoformat() if self.expires else None}

    def label(self) -> str:
        return f"{self.key} ({self.ref} {self.quantity})"


def parse_date(value, path, key) -> _dt.date:
    """A TOML date (``2026-03-01``) or an ISO date string (``"2026-03-01"``)."""
    if isinstance(value, _dt.datetime):
        return value.date()
    if isinstance(value, _dt.date):
        return value
    if isinstance(value, str):
        try:
            return _dt.date.fromisoformat(value.strip())
        except ValueError:
            pass
    raise InputError(path, key, f"expected a date such as 2026-03-01, got "
                     f"{shorten(value) if isinstance(value, str) else type_name(value)}")


def read_waivers(doc: dict, path, components) -> list[Waiver]:
    """The design's ``[[waivers]]``, each checked against the design's refs and the
    quantities of that ref's part kind."""
    raw = doc.get("waivers")
    if raw is None:
        return []
    if not isinstance(raw, list) or not all(isinstance(w, dict) for w in raw):
        raise InputError(path, "waivers", "must be an array of tables [[waivers]]")
    kinds = {ref: c.part.kind for c in components for ref in c.refs}
    out: list[Waiver] = []
    seen: dict[tuple[str, str], str] = {}
    for i, entry in enumerate(raw):
        key = f"waivers[{i}]"
        check_keys(entry, WAIVER_KEYS, path, f"{key}.")
        ref = require_str(entry, "ref", path, f"{key}.")
        if ref not in kinds:
            raise InputError(path, f"{key}.ref", f"waiver {key} names ref {shorten(ref)}, "
                             "which is not in the design" + suggest(ref, kinds))
        quantity = require_str(entry, "quantity", path, f"{key}.")
        valid = schema.KIND_QUANTITIES[kinds[ref]]
        if quantity not in valid:
            raise InputError(path, f"{key}.quantity", f"waiver {key} names quantity "
                             f"{shorten(quantity)}, which {ref} (a {kinds[ref]}) does not "
                             "have" + suggest(quantity, valid))
        texts = {}
        for name in ("reason", "approved_by"):
            text = optional_text(entry, name, path, f"{key}.", max_length=1000)
            if text is None or not text.strip():
                raise InputError(path, f"{key}.{name}", f"waiver {key}: missing or empty; "
                                 "a waiver says why and who approved it")
            texts[name] = text.strip()
        if "date" not in entry:
            raise InputError(path, f"{key}.date", f"waiver {key}: missing key (the date of "
                             "approval)")
        date = parse_date(entry["date"], path, f"{key}.date")
        expires = None
        if "expires" in entry:
            expires = parse_date(entry["expires"], path, f"{key}.expires")
            if expires < date:
                raise InputError(path, f"{key}.expires", f"waiver {key} expires "
                                 f"({expires}) before it was approved ({date})")
        if (ref, quantity) in seen:
            raise InputError(path, f"{key}.quantity", f"waiver {key} repeats "
                             f"{seen[(ref, quantity)]} ({ref} {quantity})")
        seen[(ref, quantity)] = key
        out.append(Waiver(ref, quantity, texts["reason"], texts["approved_by"], date,
                          expires, key))
    return out


def apply_waivers(checks, waivers, today: _dt.date, path) -> None:
    """Mark the waived checks (in place).

    Parameters
    ----------
    checks
        The run's checks (checks.Check).
    waivers
        The design's waivers.
    today
        The run date: a waiver whose ``expires`` is before it is an error.
    path
        The design file, for messages.
    """
    for w in waivers:
        if w.expires is not None and w.expires < today:
            raise InputError(path, f"{w.key}.expires", f"waiver {w.label()} expired on "
                             f"{w.expires} (run date {today}); renew or remove it")
        rows = [c for c in checks if c.ref == w.ref and c.quantity == w.quantity]
        if not rows:
            raise InputError(path, f"{w.key}.quantity", f"waiver {w.label()} names a "
                             f"check that does not exist: {w.ref} has no {w.quantity} row")
        for c in rows:
            c.waiver = w.as_dict()
            text = f"waiver: {w.reason} (approved by {w.approved_by}, {w.date}"
            text += f", expires {w.expires})" if w.expires else ")"
            if c.status in WAIVABLE:
                c.waived_status, c.status = c.status, "waived"
                text = f"waived (was {c.waived_status}); " + text
            else:
                text = f"waiver not needed (status {c.status}); " + text
            c.note = f"{c.note}; {text}" if c.note else text
