"""The one exception type for user mistakes.

Every problem a user can fix (a missing key, a negative mass, a malformed CSV
row, an unknown cycle) is raised as :class:`InputError`. It carries the file,
the field (or column) and the line where it is known, and renders as one line:

    vehicle.yaml:7: road_load.f0_n: must be a number, got 'abc'

The command line turns it into that line on stderr and exit status 2.
"""

from __future__ import annotations


class InputError(Exception):
    """A user mistake in an input file, option or value.

    Parameters
    ----------
    message : str
        What is wrong, in plain words.
    file : str, optional
        The file the value came from.
    field : str, optional
        Dotted key path (``road_load.f0_n``) or column name.
    line : int, optional
        1-based line number in ``file``.
    """

    def __init__(self, message: str, *, file: str | None = None,
                 field: str | None = None, line: int | None = None):
        self.message = message
        self.file = None if file is None else str(file)
        self.field = field
        self.line = line
        super().__init__(self.one_line())

    def one_line(self) -> str:
        where = ""
        if self.file:
            where = self.file
            if self.line is not None:
                where += f":{self.line}"
            where += ": "
        elif self.line is not None:
            where = f"line {self.line}: "
        field = f"{self.field}: " if self.field else ""
        text = " ".join(str(self.message).split())
        return f"{where}{field}{text}"

    def __str__(self) -> str:
        return self.one_line()

    def located(self, *, file: str | None = None, field: str | None = None,
                line: int | None = None) -> "InputError":
        """Return a copy with missing location parts filled in."""
        return InputError(self.message, file=self.file or file,
                          field=self.field or field,
                          line=self.line if self.line is not None else line)
