"""The errors the search half raises to the user; the checker's own live in certify.check."""

from __future__ import annotations


class InputError(ValueError):
    """Bad input: the message names the file, the key, the line and the reason (exit code 2)."""

    def __init__(self, reason: str, file: str | None = None, key: str | None = None,
                 line: int | None = None, column: int | None = None):
        self.reason, self.file, self.key, self.line, self.column = reason, file, key, line, column
        place = file or "<input>"
        if line:
            place += f":{line}"
            if column:
                place += f":{column}"
        head = f"{place}: " + (f"{key}: " if key else "")
        super().__init__(head + reason)
