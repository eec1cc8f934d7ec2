"""The study summary as CSV: one line per variant and profile (or duty mix).

Columns are those of :meth:`tractive.study.results.StudyResult.summary_frame`
(``variant``, ``role``, ``profile``, ``profile_kind``, then for each metric
its value, ``change_``, ``change_pct_``, interval bounds and the
distinguishable flag). Numbers are written with full precision (``repr``), so
a change read back equals the variant minus the baseline read back up to the
last digit of the float. Text cells that would read as formulas are escaped
(see :mod:`tractive.report.common`). Written atomically.
"""

from __future__ import annotations

import csv
import io
import math
from typing import Iterable

from .common import csv_text, write_text_atomic


def summary_csv_text(result) -> str:
    """The summary table as CSV text."""
    frame = result.summary_frame()
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow([csv_text(c) for c in frame.columns])
    for rec in frame.itertuples(index=False, name=None):
        w.writerow([_cell(v) for v in rec])
    return buf.getvalue()


def _cell(value):
    if value is None:
        return ""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, float):
        if math.isnan(value):
            return ""
        return repr(value) if math.isfinite(value) else ""
    if isinstance(value, int):
        return str(value)
    if hasattr(value, "item"):          # numpy scalar
        return _cell(value.item())
    return csv_text(str(value))


def write_summary_csv(result, path, *, inputs: Iterable = ()):
    """Write the summary CSV atomically; refuses to overwrite an input file."""
    return write_text_atomic(path, summary_csv_text(result), inputs=inputs)
