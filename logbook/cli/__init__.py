"""The ``logbook`` command line: thin shells over the Python API.

Each command parses its options, calls one service function and prints the
result. A :class:`~logbook.errors.LogbookError` becomes one line on stderr and
exit code 1; click's usage errors exit with 2.
"""

from __future__ import annotations

from logbook.cli.base import main
from logbook.cli.commands import register_commands

register_commands(main)

__all__ = ["main"]
