"""The study workbook (kept importable here; the writer lives in
:mod:`tractive.report.workbook`, one module per sheet)."""

from __future__ import annotations

from .workbook import (MAX_SERIES_ROWS, build_sheets, build_workbook, number_format,
                       series_step, series_steps, sheet_title, write_workbook)

__all__ = ["write_workbook", "build_workbook", "build_sheets", "sheet_title", "number_format",
           "MAX_SERIES_ROWS", "series_step", "series_steps"]
