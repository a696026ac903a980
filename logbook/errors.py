"""The project's exception hierarchy.

Every error a user can cause is a :class:`LogbookError`; the CLI and the UI turn it
into one clear line (exit code 1) and never show a traceback for it. Messages name
the offending file, line, column or field and, where it helps, what to do instead.
"""

from __future__ import annotations


class LogbookError(Exception):
    """Base class of every error the user can cause or fix."""


class ConfigError(LogbookError):
    """The database location or another setting is unusable."""


class NotFoundError(LogbookError):
    """A named axis, revision, gain set, spec, profile or run does not exist."""


class ConflictError(LogbookError):
    """The request clashes with what is stored (a duplicate name, a bad parent)."""


class LockedError(LogbookError):
    """The run is referenced by an issued acceptance report and may not change."""


class InputError(LogbookError, ValueError):
    """A file or value cannot be read; the message names file, line and column.

    ``line`` is 1-based and counts every physical line of the file, comment lines
    included, so an editor jumps straight to it.
    """

    def __init__(
        self,
        message: str,
        *,
        file: str | None = None,
        line: int | None = None,
        column: str | None = None,
    ) -> None:
        self.reason = message
        self.file = file
        self.line = line
        self.column = column
        super().__init__(self._render())

    def _render(self) -> str:
        where = []
        if self.file is not None:
            where.append(str(self.file))
        if self.line is not None:
            where.append(f"line {self.line}")
        if self.column is not None:
            where.append(f"column '{self.column}'")
        return f"{', '.join(where)}: {self.reason}" if where else self.reason

    def located(self, file: str) -> InputError:
        """Return the same error with ``file`` filled in (readers often know it last)."""
        return InputError(self.reason, file=file, line=self.line, column=self.column)
