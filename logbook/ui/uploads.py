"""Uploaded files on disk for the importer, and its results as a table.

The importer reads files by path, so uploads are written to a temporary folder
under their own names (the name is what the run records as its source file) and
the folder is removed afterwards. Messages name files without that folder.
"""

from __future__ import annotations

import os
import tempfile
from collections.abc import Iterator, Sequence
from contextlib import contextmanager
from pathlib import Path
from typing import Protocol

import pandas as pd

from logbook.errors import InputError
from logbook.services.importing import FileResult

#: Figures shown beside each file's result (first step).
RESULT_FIGURES = ("rise_time_s", "overshoot_pct", "settling_time_s", "steady_state_error")


class Upload(Protocol):
    """What the pages need of Streamlit's ``UploadedFile``."""

    name: str

    def getvalue(self) -> bytes: ...


@contextmanager
def staged(uploads: Sequence[Upload]) -> Iterator[list[Path]]:
    """The uploads written to a temporary folder, removed on exit; names must differ."""
    names = [Path(u.name).name for u in uploads]
    twice = sorted({n for n in names if names.count(n) > 1})
    if twice:
        raise InputError(f"two uploaded files share the name {twice[0]}; rename one")
    with tempfile.TemporaryDirectory(prefix="logbook-upload-") as folder:
        paths = []
        for name, upload in zip(names, uploads, strict=True):
            path = Path(folder) / name
            path.write_bytes(upload.getvalue())
            paths.append(path)
        yield paths


def without_folder(text: str, path: str | Path) -> str:
    """``text`` with the temporary folder of ``path`` removed from file names in it."""
    return text.replace(f"{Path(path).parent}{os.sep}", "")


def result_table(results: Sequence[FileResult]) -> pd.DataFrame:
    """One row per file: outcome, message (conflicts appended) and first-step figures."""
    rows = []
    for r in results:
        message = without_folder(r.message, r.path)
        if r.conflicts:
            message += " | file and form disagree: " + "; ".join(r.conflicts)
        first = r.steps[0] if r.steps else {}
        rows.append(
            {
                "file": Path(r.path).name,
                "outcome": r.outcome.value,
                "run": r.run_id,
                "steps": len(r.steps),
                **{name: first.get(name) for name in RESULT_FIGURES},
                "message": message,
            }
        )
    return pd.DataFrame(rows)
