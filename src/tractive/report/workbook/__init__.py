"""The study workbook: summary, attribution, time series, charts and inputs in one file.

:func:`write_workbook` writes a :class:`~tractive.study.results.StudyResult`
as an ``.xlsx`` workbook (Office Open XML, ECMA-376) with native charts, built
with openpyxl. Sheets, in order, one module each:

``Summary`` (:mod:`.summary`)
    Per profile or duty mix: the baseline and each variant with the headline
    metrics of the metric registry (value, change against the baseline, change
    in percent, the central Monte Carlo interval of the change and whether it
    excludes zero), then cost, annual saving, simple payback and net present
    value with their intervals.
``Attribution`` (:mod:`.attribution`)
    The change split into parameter groups (Shapley values), one at a time,
    and the interaction.
``Energy parts`` (:mod:`.energy_parts`)
    Wheel energy per distance by part, with stacked column charts.
``Range vs speed`` (:mod:`.range_speed`)
    Range and consumption at constant speeds, with a chart.
one sheet per profile (:mod:`.profiles`)
    The nominal time series of every variant with charts; a long series is
    thinned to at most :data:`MAX_SERIES_ROWS` rows (:func:`series_step`).
``All results`` (:mod:`.all_results`)
    Every metric of every row (filterable).
``Study`` (:mod:`.study`)
    Study facts, uncertainty and economics as used, variants, profiles,
    warnings, and the meaning of each column.
``Inputs`` (:mod:`.inputs`)
    Every input value with its unit, where it came from and a note.

Sheets are built in memory (:class:`.sheet.Sheet`) and written with
openpyxl's write-only (streaming) workbook, so a long time series is written
row by row instead of living as millions of cell objects.

Numbers are stored unrounded, exactly as in
:meth:`~tractive.study.results.StudyResult.to_dict`: each float as the
shortest text that reads back to the same double (:func:`.sheet.exact_number`;
openpyxl's own number text has 16 significant digits, which can change the
last bit). Rounding for display happens only through number
formats, which carry the unit. Text cells are stored as strings, so names
beginning with ``=``, ``+``, ``-`` or ``@`` stay text and are never evaluated
(see :mod:`tractive.report.common`). The file is written atomically and never
over an input file.

References
----------
.. [1] ECMA-376 Part 1, Office Open XML File Formats (SpreadsheetML cells,
   number formats 18.8.31, DrawingML charts 21.2).
"""

from __future__ import annotations

import contextlib
from pathlib import Path
from typing import Iterable

from ..common import atomic_write, check_target, open_binary
from .all_results import all_results_sheet
from .attribution import attribution_sheet
from .cells import Styles, clean_text, number_format, sheet_title
from .energy_parts import energy_parts_sheet
from .inputs import inputs_sheet
from .profiles import MAX_SERIES_ROWS, SHEET_ROW_LIMIT, profile_sheets, series_step, \
    series_steps
from .range_speed import range_sheet
from .sheet import Sheet, render
from .study import study_sheet
from .summary import summary_sheet

__all__ = ["write_workbook", "build_workbook", "build_sheets", "sheet_title", "number_format",
           "MAX_SERIES_ROWS", "SHEET_ROW_LIMIT", "series_step", "series_steps"]

#: names of the sheets that are not per profile (profile sheets avoid them)
FIXED_SHEETS = ("Summary", "Attribution", "Energy parts", "Range vs speed", "All results",
                "Study", "Inputs")


def build_sheets(result) -> list:
    """Every sheet of the study workbook, in order, as :class:`.sheet.Sheet` objects."""
    st = Styles()
    notes = []
    if not result.series:
        notes.append("no time series in the result: the profile sheets are left out")
    sheets = [summary_sheet(result, st), attribution_sheet(result, st),
              energy_parts_sheet(result, st), range_sheet(result, st),
              *profile_sheets(result, st, list(FIXED_SHEETS)),
              all_results_sheet(result, st), study_sheet(result, st, notes),
              inputs_sheet(result, st)]
    sheets = [s for s in sheets if s is not None]
    for s in sheets:
        s.fit_number_columns()
    return sheets


def _workbook(result, write_only: bool, sheets=None):
    """An openpyxl workbook holding every sheet (normal or write-only)."""
    from openpyxl import Workbook

    wb = Workbook(write_only=write_only)
    if not write_only:
        wb.remove(wb.active)
    for sheet in build_sheets(result) if sheets is None else sheets:
        render(wb, sheet)
    if not write_only:
        wb.active = 0
    wb.properties.title = clean_text(str(result.study))[:255]
    wb.properties.creator = "tractive"
    return wb


def build_workbook(result):
    """The study workbook as a normal :class:`openpyxl.Workbook` (not yet saved; its
    cells can be read, e.g. for checks).

    Parameters
    ----------
    result : StudyResult
    """
    return _workbook(result, write_only=False)


def save(wb, path: Path) -> None:
    """Save an openpyxl workbook to ``path``, closing the zip file also on failure.

    A write error (a full disk) propagates as :class:`OSError` once; the zip
    file is closed before, so nothing is left to fail again when it is
    garbage-collected.
    """
    from zipfile import ZIP_DEFLATED, ZipFile

    from openpyxl.writer.excel import ExcelWriter

    fh = open_binary(path)
    try:
        with ZipFile(fh, "w", ZIP_DEFLATED, allowZip64=True) as archive:
            ExcelWriter(wb, archive).write_data()
        fh.flush()
    finally:
        with contextlib.suppress(OSError):
            fh.close()


def write_workbook(result, path, *, inputs: Iterable = ()) -> Path:
    """Write the study workbook atomically (streamed, see the module doc).

    Parameters
    ----------
    result : StudyResult
        A study result (run with time series for the profile sheets).
    path : str or path
        Target ``.xlsx`` file.
    inputs : iterable of paths or ReadFile
        Files the result was computed from; the target must not be one of them.

    Returns
    -------
    Path of the written file.

    Raises
    ------
    InputError
        When the target is an input file or a folder, or cannot be written.
    """
    inputs = list(inputs)
    check_target(path, inputs)
    sheets = build_sheets(result)

    def _write(tmp: Path):
        """Stream the sheets into the temporary file; finish them on a failure."""
        wb = _workbook(result, write_only=True, sheets=sheets)
        try:
            save(wb, tmp)
        except BaseException:
            discard(wb)
            raise

    return atomic_write(path, _write, inputs=inputs)


def discard(wb) -> None:
    """Finish every streamed sheet of a write-only workbook that failed to save and
    remove its temporary file, so nothing is left open to fail again when it is
    garbage-collected (no "Exception ignored" messages)."""
    for ws in wb.worksheets:
        with contextlib.suppress(Exception):
            if not ws.closed:
                ws.close()
        writer = getattr(ws, "_writer", None)
        if writer is not None:
            with contextlib.suppress(Exception):
                writer.xf.close()
            with contextlib.suppress(Exception):
                writer.cleanup()
