"""The one exception type for bad input."""

from __future__ import annotations


class InputError(Exception):
    """Bad input: names the file, the field and what to fix.

    The command shell prints ``error: FILE: FIELD: message`` and exits with status 2.
    """

    def __init__(self, file: str, field: str, message: str) -> None:
        self.file = str(file)
        self.field = field
        self.message = message
        super().__init__(f"{self.file}: {field}: {message}")
