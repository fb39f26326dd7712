"""The design file's optional ``[review]`` table: the sign-off block of the reports.

```toml
[review]
revision = "B"                 # design revision shown in every report header
prepared_by = "A. Designer"    # names and dates of the three signatures;
prepared_date = 2026-11-30     # any left out is printed as a blank line to sign
reviewed_by = "B. Reviewer"
reviewed_date = "2026-12-01"
approved_by = ""
approved_date = ""
```
Values are one line of text (a TOML date is taken as its ISO text). Nothing here changes
a computed number: the block is carried to results.json ``review`` and printed.
"""

from __future__ import annotations

import datetime as _dt

from .errors import InputError
from .tomlio import check_keys, optional_text, require_table, type_name

REVIEW_KEYS = ("revision", "prepared_by", "prepared_date", "reviewed_by", "reviewed_date",
               "approved_by", "approved_date")
MAX_TEXT = 200


def load_review(doc: dict, path) -> dict[str, str]:
    """The ``[review]`` table as ``{key: text}`` (only keys given), ``{}`` when absent.

    Parameters
    ----------
    doc
        The parsed design file.
    path
        The design file (for messages).

    Returns
    -------
    dict of str to str
        Keys of `REVIEW_KEYS`; dates as ISO text.
    """
    if "review" not in doc:
        return {}
    table = require_table(doc, "review", path)
    check_keys(table, REVIEW_KEYS, path, "review.")
    out = {}
    for key in REVIEW_KEYS:
        if key not in table:
            continue
        value = table[key]
        if key.endswith("_date") and isinstance(value, (_dt.date, _dt.datetime)):
            out[key] = value.isoformat()
            continue
        if key.endswith("_date") and not isinstance(value, str):
            raise InputError(path, f"review.{key}", f"expected a date or text, got "
                             f"{type_name(value)}")
        out[key] = optional_text(table, key, path, "review.", max_length=MAX_TEXT,
                                 single_line=True)
    return out
