"""The study summary as CSV: one line per variant and profile (or duty mix).

Columns: ``variant``, ``role``, ``profile``, ``profile_kind``, then for each
metric present, in the order of the metric registry (:mod:`tractive.metrics`),
its value, ``change_``, ``change_pct_``, interval bounds and the
distinguishable flag (the columns of
:meth:`tractive.study.results.StudyResult.summary_frame`). Numbers are
written unquoted with full precision (``repr``), so a change read back equals
the variant minus the baseline read back up to the last digit of the float.
Text is quoted (``csv.QUOTE_NONNUMERIC``), and text a spreadsheet could take
as a formula gets a leading apostrophe (see
:func:`tractive.report.common.is_formula_like`). Written atomically.

References
----------
.. [1] OWASP, "CSV Injection".
.. [2] RFC 4180, Common Format and MIME Type for CSV Files (quoting).
"""

from __future__ import annotations

import csv
import io
import math
from typing import Iterable

from .. import metrics as registry
from .common import csv_text, write_text_atomic

#: per metric key k: column name and the row field it reads
_FIELDS = (("{k}", "metrics"), ("change_{k}", "change"), ("change_pct_{k}", "change_pct"),
           ("{k}_low", "interval_low"), ("{k}_high", "interval_high"),
           ("change_{k}_low", "change_low"), ("change_{k}_high", "change_high"),
           ("distinguishable_{k}", "distinguishable"))


def summary_columns(result) -> tuple:
    """(metric keys in registry order, column names) of the summary table."""
    present = set()
    for r in result.rows:
        present.update(r.metrics)
    keys = registry.ordered_keys(present)
    columns = ["variant", "role", "profile", "profile_kind"]
    for k in keys:
        columns += [name.format(k=k) for name, _ in _FIELDS]
    return keys, columns


def summary_records(result):
    """Each row of the summary table as a list of values (None where absent)."""
    keys, _ = summary_columns(result)
    for r in result.rows:
        rec = [r.variant, r.role, r.profile, r.profile_kind]
        for k in keys:
            rec += [getattr(r, attr).get(k) for _, attr in _FIELDS]
        yield rec


def summary_csv_text(result) -> str:
    """The summary table as CSV text (text quoted, numbers not)."""
    _, columns = summary_columns(result)
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n", quoting=csv.QUOTE_NONNUMERIC)
    w.writerow([csv_text(c) for c in columns])
    for rec in summary_records(result):
        w.writerow([_cell(v) for v in rec])
    return buf.getvalue()


def _cell(value):
    """A CSV value: finite numbers as float or int, booleans as true/false text, text
    guarded against formulas, NaN and None empty."""
    if value is None:
        return ""
    if isinstance(value, bool):
        return "true" if value else "false"
    if hasattr(value, "item") and not isinstance(value, (str, bytes)):  # numpy scalar
        return _cell(value.item())
    if isinstance(value, float):
        return value if math.isfinite(value) else ""
    if isinstance(value, int):
        return value
    return csv_text(str(value))


def write_summary_csv(result, path, *, inputs: Iterable = ()):
    """Write the summary CSV atomically; refuses to overwrite an input file."""
    return write_text_atomic(path, summary_csv_text(result), inputs=inputs)
