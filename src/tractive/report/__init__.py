"""Writers for study results: CSV summary, JSON, and the workbook.

:mod:`tractive.report.common` holds what every writer shares: atomic writing
(a temporary file in the target folder renamed into place, never over an
input file) and the guard that keeps formula-like text cells as text.
"""
