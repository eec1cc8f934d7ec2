"""Native charts of the study workbook (DrawingML, ECMA-376 Part 1, 21.2)."""

from __future__ import annotations

#: line colours, told apart also with colour-vision deficiency (baseline black)
PALETTE = ("000000", "E69F00", "56B4E9", "009E73", "D55E00", "0072B2", "CC79A7", "F0E442",
           "7F7F7F", "8C564B")


def plain_axes(ch) -> None:
    """Axis labels as plain numbers (the unit is in the axis title), at the low edge."""
    from openpyxl.chart.data_source import NumFmt

    for ax in (ch.x_axis, ch.y_axis):
        ax.delete = False
        ax.numFmt = NumFmt(formatCode="General", sourceLinked=False)
    ch.x_axis.tickLblPos = "low"


def scatter(title, x_title, y_title):
    """An empty scatter chart of lines with titled axes and the legend on the right."""
    from openpyxl.chart import ScatterChart

    ch = ScatterChart()
    ch.title = title
    ch.style = 2
    ch.x_axis.title = x_title
    ch.y_axis.title = y_title
    plain_axes(ch)
    ch.legend.position = "r"
    ch.width, ch.height = 22, 8.5
    return ch


def series_label(ws, ref: str):
    """A series name read from a cell of ``ws`` (``ref`` like ``"$B$1"``)."""
    from openpyxl.chart.data_source import StrRef
    from openpyxl.chart.series import SeriesLabel
    from openpyxl.utils import quote_sheetname

    return SeriesLabel(strRef=StrRef(f"{quote_sheetname(ws.title)}!{ref}"))


def line_series(ws, x_col, y_col, r0, r1, title_cell):
    """A line of a scatter chart: y column against x column, rows r0..r1, no markers."""
    from openpyxl.chart import Reference, Series

    x = Reference(ws, min_col=x_col, min_row=r0, max_row=r1)
    y = Reference(ws, min_col=y_col, min_row=r0, max_row=r1)
    s = Series(y, x)
    s.tx = series_label(ws, title_cell)
    s.marker.symbol = "none"
    s.smooth = False
    s.graphicalProperties.line.width = 15875      # 1.25 pt in EMU
    return s


def colour(chart) -> None:
    """Give each line of a chart its own colour (the first, the baseline, black)."""
    for i, s in enumerate(chart.series):
        s.graphicalProperties.line.solidFill = PALETTE[i % len(PALETTE)]
