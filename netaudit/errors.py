"""Errors a user can cause: each becomes one clear line and exit code 2."""

from __future__ import annotations


class InputError(Exception):
    """Bad input (unreadable design, bad config, missing tool).

    The CLI prints ``str(error)`` as one line on stderr and exits with code 2.
    ``where`` names the file and, when known, ``line:column`` or the config key.
    """

    def __init__(self, message: str, path: str | None = None,
                 line: int | None = None, column: int | None = None) -> None:
        self.message = message
        self.path = path
        self.line = line
        self.column = column
        super().__init__(self.__str__())

    @property
    def where(self) -> str:
        if self.path is None:
            return ""
        if self.line is None:
            return str(self.path)
        if self.column is None:
            return f"{self.path}:{self.line}"
        return f"{self.path}:{self.line}:{self.column}"

    def __str__(self) -> str:
        from .terminal import visible

        text = " ".join(self.message.split())  # always a single line, printable as it is
        return visible(f"{self.where}: {text}" if self.where else text)
