"""The one error type for bad input; the CLI turns it into one line on stderr and exit code 2."""

from __future__ import annotations


class InputError(Exception):
    """Bad input: a file that cannot be read, a malformed record, a refused archive.

    The message is one line that names the file and, where there is one, the line.
    """

    def __init__(self, message: str, path: str | None = None, line: int | None = None):
        self.path = path
        self.line = line
        self.detail = message
        where = ""
        if path is not None:
            where = f"{path}:{line}: " if line is not None else f"{path}: "
        super().__init__(where + message)
