"""Printing an HTML report to PDF with a headless Chromium.

The page is printed exactly as a reader's browser would print it (the report's
print style sheet sets A4 and the page footer), by Debian's ``chromium`` or any
Chromium given explicitly. A throw-away profile directory keeps the run from
touching or depending on a user profile; background networking, component
updates and sync are switched off, since the report needs nothing from outside.
"""

from __future__ import annotations

import os
import shutil
import subprocess
import tempfile
from pathlib import Path

from logbook.errors import LogbookError

DEBIAN_CHROMIUM = "/usr/bin/chromium"
CHROMIUM_ENV = "LOGBOOK_CHROMIUM"  # path of another Chromium build, when set


def find_chromium() -> str | None:
    """$LOGBOOK_CHROMIUM, else ``chromium`` on PATH, else Debian's path; None if absent."""
    for candidate in (os.environ.get(CHROMIUM_ENV), shutil.which("chromium"), DEBIAN_CHROMIUM):
        if candidate and Path(candidate).is_file() and os.access(candidate, os.X_OK):
            return candidate
    return None


def require_chromium(browser: str | None = None) -> str:
    """``browser`` or :func:`find_chromium`; a clear LogbookError when there is none."""
    executable = browser or find_chromium()
    if executable is None:
        raise LogbookError(
            "cannot print to PDF: no Chromium browser found (install Debian's 'chromium'"
            f" package, or set {CHROMIUM_ENV} to a Chromium executable); the HTML report"
            " can still be opened and printed from any browser"
        )
    return executable


def print_pdf(
    html_path: str | Path,
    pdf_path: str | Path,
    *,
    browser: str | None = None,
    timeout_s: float = 120.0,
) -> Path:
    """Print ``html_path`` to ``pdf_path``; ``browser`` overrides :func:`find_chromium`.

    Raises LogbookError when no Chromium is installed, when it fails, or when it
    leaves no PDF behind.
    """
    executable = require_chromium(browser)
    source = Path(html_path).resolve()
    if not source.is_file():
        raise LogbookError(f"cannot print to PDF: {html_path} does not exist")
    target = Path(pdf_path).resolve()
    target.unlink(missing_ok=True)
    with tempfile.TemporaryDirectory(prefix="logbook-chromium-") as profile:
        command = [
            executable,
            "--headless",
            "--no-sandbox",
            "--disable-gpu",
            "--no-first-run",
            "--disable-background-networking",
            "--disable-component-update",
            "--disable-sync",
            f"--user-data-dir={profile}",
            "--no-pdf-header-footer",
            f"--print-to-pdf={target}",
            source.as_uri(),
        ]
        try:
            done = subprocess.run(
                command, capture_output=True, text=True, timeout=timeout_s, check=False
            )
        except subprocess.TimeoutExpired as exc:
            raise LogbookError(f"cannot print to PDF: Chromium took over {timeout_s:g} s") from exc
        except OSError as exc:
            raise LogbookError(f"cannot print to PDF: cannot start {executable}: {exc}") from exc
    if done.returncode != 0 or not target.is_file() or target.stat().st_size == 0:
        detail = (done.stderr.strip().splitlines() or [f"exit code {done.returncode}"])[-1]
        raise LogbookError(f"cannot print to PDF with {executable}: {detail}")
    return target
