"""A study result written by the output file's ending: ``.xlsx``, ``.csv`` or ``.json``."""

from __future__ import annotations

from pathlib import Path

from ..errors import InputError

#: endings :func:`write_output` writes
OUTPUT_SUFFIXES = (".xlsx", ".csv", ".json")


def study_inputs(result) -> list:
    """Every file a study read (the output must not replace any of them), sorted.

    The study file, every input echoed with a file source (``path`` or
    ``path:line``), every profile read from a CSV or GPX file (relative to
    the study file), and every file the run recorded as read
    (``result.input_files``).
    """
    files = {result.source}
    for item in result.inputs:
        src = str(item.source)
        if src in ("default", "computed", "command line"):
            continue
        files.add(src.rsplit(":", 1)[0] if src.rsplit(":", 1)[-1].isdigit() else src)
    for p in result.profiles:
        if p.spec and Path(p.spec).suffix.lower() in (".csv", ".gpx"):
            files.add(str(Path(result.source).parent / p.spec))
    files.update(getattr(result, "input_files", ()))
    return sorted(files)


def write_output(result, path, *, inputs) -> Path:
    """Write a study result by the file's ending: .xlsx (workbook), .csv (summary) or
    .json (the result's JSON document); atomic, never over one of ``inputs``."""
    suffix = Path(path).suffix.lower()
    if suffix == ".csv":
        from .csv import write_summary_csv
        return write_summary_csv(result, path, inputs=inputs)
    if suffix == ".json":
        from ..plain import json_text
        from .common import write_text_atomic
        return write_text_atomic(path, json_text(result.to_dict()) + "\n", inputs=inputs)
    if suffix == ".xlsx":
        try:
            from .workbook import write_workbook
        except ImportError:
            raise InputError("the workbook writer is not available in this installation; "
                             "write .csv or .json", file=str(path)) from None
        return write_workbook(result, path, inputs=inputs)
    raise InputError("unknown output type; use a name ending in .xlsx, .csv or .json",
                     file=str(path))
