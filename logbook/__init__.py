"""Bench-test logbook and step-response analysis database for motion-control axes.

The package is layered: ``analysis`` (pure numpy), ``ingest`` (files to traces),
``store`` (SQLAlchemy models, sessions, migrations), ``services`` (use-cases that
combine them), ``reports`` and the thin ``cli`` and ``ui`` shells.
"""

from importlib.metadata import PackageNotFoundError, version

try:
    __version__ = version("axis-logbook")
except PackageNotFoundError:  # running from a checkout that was never installed
    __version__ = "0.0.0+checkout"

__all__ = ["__version__"]
