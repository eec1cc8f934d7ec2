"""Output streams that cannot carry terminal control sequences.

Names, keys and file contents reach the screen in tables, notes and error
messages. A control character among them (ESC, BEL, backspace, carriage
return, C1 codes such as CSI) could move the cursor, rewrite what was
printed, change the terminal's title or hide text. Every character of the
C0 set (except newline and tab), DEL and the C1 set is written as a visible
``\\uXXXX`` escape instead; in JSON documents that escape is valid JSON for
the same character.
"""

from __future__ import annotations

import re

#: C0 controls but tab and newline, DEL, and the C1 controls
_CONTROL = re.compile("[\x00-\x08\x0b-\x1f\x7f-\x9f]")


def escape_controls(text: str) -> str:
    """``text`` with every control character written as ``\\uXXXX``."""
    return _CONTROL.sub(lambda m: f"\\u{ord(m.group()):04x}", text)


class SafeStream:
    """A text stream wrapper whose ``write`` escapes control characters; everything
    else (``isatty``, ``encoding``, ``flush``...) is the wrapped stream's."""

    def __init__(self, stream):
        self._stream = stream

    def write(self, text):
        """Write ``text`` with its control characters escaped."""
        if isinstance(text, str):
            text = escape_controls(text)
        return self._stream.write(text)

    def writelines(self, lines):
        """Write each line, escaped."""
        for line in lines:
            self.write(line)

    def __getattr__(self, name):
        return getattr(self._stream, name)
