"""A worksheet held in memory, drawn into an openpyxl workbook at the end.

The sheet builders write into a :class:`Sheet`: single cells with their
style, whole numeric columns as arrays (the long time series), merged
ranges, widths, frozen panes, charts and print settings. :func:`render`
then draws a sheet into a normal openpyxl workbook (cells that can be read
back, used by :func:`~tractive.report.workbook.build_workbook`) or into a
write-only one (rows streamed to the file one by one, used when writing),
so a long time series never exists as millions of cell objects at once.
"""

from __future__ import annotations

import math

import numpy as np

from .cells import set_number_cell, shown_length


def exact_number(cell, value: float) -> None:
    """Store a float in a write-only cell as the shortest text that reads back to the
    same double (``repr``, at most 17 significant digits), typed as a number.

    openpyxl writes a number with 16 significant digits (``"%.16g"``), which can
    change the last bit (0.1 + 0.2 = 0.30000000000000004 becomes 0.3). A cell
    whose value is text and whose data type is set to ``"n"`` afterwards (the
    public ``data_type`` attribute, as :func:`~tractive.report.common.set_text_cell`
    uses for ``"s"``) is written as ``<c t="n"><v>text</v></c>``: a number cell
    (ECMA-376 Part 1, 18.3.1.4) holding every digit.
    """
    cell.value = repr(float(value))
    cell.data_type = "n"


class BufferedCell:
    """One cell: value, data type and style, as the sheet builders set them."""

    __slots__ = ("value", "data_type", "number_format", "font", "fill", "alignment",
                 "border")

    def __init__(self):
        """An empty cell without style."""
        self.value = None
        self.data_type = "n"
        self.number_format = None
        self.font = self.fill = self.alignment = self.border = None

    def style_onto(self, cell, exact: bool = False) -> None:
        """Copy this cell's value, type and style onto an openpyxl cell (``exact``: a
        float as its shortest exact text, see :func:`exact_number`)."""
        if isinstance(self.value, float) and exact:
            exact_number(cell, self.value)
        elif self.value is not None:
            cell.value = self.value
            cell.data_type = self.data_type
        if self.number_format:
            cell.number_format = self.number_format
        for name in ("font", "fill", "alignment", "border"):
            style = getattr(self, name)
            if style is not None:
                setattr(cell, name, style)


class Sheet:
    """A worksheet being built (see the module doc).

    Attributes
    ----------
    title : str
        Sheet name (valid and unique, see :func:`~.cells.sheet_title`).
    freeze_panes, auto_filter, print_area, print_title_rows, print_title_cols : str or None
        Cell or range references as in a spreadsheet (``"C3"``, ``"A1:F9"``, ``"1:2"``).
    landscape : bool
    fit_to_width : int
        Pages across when printing.
    """

    def __init__(self, title: str):
        """An empty sheet named ``title``."""
        self.title = title
        self.rows: dict = {}            # row → {column → BufferedCell}
        self.columns: list = []         # (first row, column, float array, number format)
        self.merged: list = []          # "A1:C1"
        self.widths: dict = {}          # column → width
        self.heights: dict = {}         # row → height
        self.charts: list = []          # (chart, anchor)
        self.freeze_panes = None
        self.auto_filter = None
        self.print_area = None
        self.print_title_rows = None
        self.print_title_cols = None
        self.landscape = True
        self.fit_to_width = 1

    def cell(self, row: int, column: int) -> BufferedCell:
        """The cell at (row, column), 1-based, created when new."""
        line = self.rows.setdefault(row, {})
        c = line.get(column)
        if c is None:
            c = line[column] = BufferedCell()
        return c

    def put_column(self, first_row: int, column: int, values, fmt: str | None) -> None:
        """A whole numeric column from ``first_row`` down (NaN and ±inf become empty)."""
        self.columns.append((first_row, column, np.asarray(values, float), fmt))

    def merge(self, row: int, col0: int, col1: int) -> None:
        """Merge the cells of one row from column ``col0`` to ``col1``."""
        from openpyxl.utils import get_column_letter

        self.merged.append(f"{get_column_letter(col0)}{row}:{get_column_letter(col1)}{row}")

    def add_chart(self, chart, anchor: str) -> None:
        """Place a chart with its top left corner at ``anchor``."""
        self.charts.append((chart, anchor))

    @property
    def max_row(self) -> int:
        """Last row holding anything."""
        last = max(self.rows, default=0)
        for r0, _, values, _ in self.columns:
            last = max(last, r0 + values.size - 1)
        return last

    @property
    def max_column(self) -> int:
        """Last column holding anything."""
        last = max((max(line) for line in self.rows.values() if line), default=0)
        return max([last] + [c for _, c, _, _ in self.columns])

    def fit_number_columns(self) -> None:
        """Widen any column whose numbers would not fit (a spreadsheet shows '###')."""
        need: dict = {}
        for line in self.rows.values():
            for col, cell in line.items():
                v = cell.value
                if isinstance(v, (int, float)) and not isinstance(v, bool) \
                        and cell.number_format and '"' in cell.number_format:
                    need[col] = max(need.get(col, 0), shown_length(float(v),
                                                                   cell.number_format))
        for _, col, values, fmt in self.columns:
            finite = values[np.isfinite(values)]
            if finite.size and fmt and '"' in fmt:
                need[col] = max(need.get(col, 0),
                                shown_length(float(np.max(np.abs(finite))), fmt))
        for col, n in need.items():
            width = n * 1.1 + 2                          # characters → column width units
            if self.widths.get(col, 0) < width:
                self.widths[col] = width


def _setup(ws, sheet: Sheet) -> None:
    """Widths, heights, panes, filter, merged cells, charts and printing of a sheet."""
    from openpyxl.utils import get_column_letter

    for col, w in sheet.widths.items():
        ws.column_dimensions[get_column_letter(col)].width = w
    for row, h in sheet.heights.items():
        ws.row_dimensions[row].height = h
    if sheet.freeze_panes:
        ws.freeze_panes = sheet.freeze_panes
    for ref in sheet.merged:
        ws.merged_cells.add(ref)
    for chart, anchor in sheet.charts:
        ws.add_chart(chart, anchor)
    ws.page_setup.orientation = "landscape" if sheet.landscape else "portrait"
    ws.page_setup.paperSize = "9"                      # A4 (ECMA-376 18.3.1.63)
    ws.page_setup.fitToWidth = sheet.fit_to_width
    ws.page_setup.fitToHeight = 0
    ws.sheet_properties.pageSetUpPr.fitToPage = True
    if sheet.print_title_rows:
        ws.print_title_rows = sheet.print_title_rows
    if sheet.print_title_cols:
        ws.print_title_cols = sheet.print_title_cols
    if sheet.print_area:
        ws.print_area = sheet.print_area


def render(wb, sheet: Sheet) -> None:
    """Draw ``sheet`` into the openpyxl workbook ``wb`` (normal or write-only)."""
    ws = wb.create_sheet(sheet.title)
    if getattr(wb, "write_only", False):
        _setup(ws, sheet)
        if sheet.auto_filter:
            ws.auto_filter.ref = sheet.auto_filter
        for line in _stream_rows(ws, sheet):
            ws.append(line)
        return
    for row, line in sheet.rows.items():
        for col, buffered in line.items():
            buffered.style_onto(ws.cell(row=row, column=col))
    for r0, col, values, fmt in sheet.columns:
        for i, v in enumerate(values.tolist()):
            if math.isfinite(v):
                set_number_cell(ws.cell(row=r0 + i, column=col), v, fmt)
    if sheet.auto_filter:
        ws.auto_filter.ref = sheet.auto_filter
    _setup(ws, sheet)


def _stream_rows(ws, sheet: Sheet):
    """Rows of a write-only sheet, top to bottom, as lists of cells (None: empty).

    Cells of the long columns share one styled template per column: the
    number format is looked up once, not once per value.
    """
    from openpyxl.cell import WriteOnlyCell

    width = sheet.max_column
    templates = []
    for r0, col, values, fmt in sheet.columns:
        templates.append((r0, col, values.tolist(), fmt))
    for row in range(1, sheet.max_row + 1):
        line = [None] * width
        for col, buffered in sheet.rows.get(row, {}).items():
            cell = WriteOnlyCell(ws)
            buffered.style_onto(cell, exact=True)
            line[col - 1] = cell
        for r0, col, values, fmt in templates:
            i = row - r0
            if 0 <= i < len(values) and math.isfinite(values[i]):
                cell = WriteOnlyCell(ws)
                exact_number(cell, values[i])
                if fmt:
                    cell.number_format = fmt
                line[col - 1] = cell
        yield line
