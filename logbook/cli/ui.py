"""``logbook ui``: start the web front end on a local address."""

from __future__ import annotations

import os
import signal
import subprocess
import sys
from pathlib import Path

import click

from logbook.cli.base import db_option
from logbook.store.config import ENV_VAR, display_url, resolve_url

DEFAULT_HOST = "127.0.0.1"
DEFAULT_PORT = 8501


def app_path() -> Path:
    """The Streamlit script of the front end (inside the installed package)."""
    return Path(__file__).resolve().parents[1] / "ui" / "app.py"


def streamlit_command(host: str, port: int) -> list[str]:
    """The ``streamlit run`` command line: headless, no usage statistics, no file watching."""
    return [
        sys.executable,
        "-m",
        "streamlit",
        "run",
        str(app_path()),
        "--server.address",
        host,
        "--server.port",
        str(port),
        "--server.headless",
        "true",
        "--browser.gatherUsageStats",
        "false",
        "--server.fileWatcherType",
        "none",
        "--theme.base",
        "light",
        "--client.toolbarMode",
        "viewer",
    ]


@click.command("ui")
@db_option
@click.option(
    "--port",
    type=click.IntRange(1, 65535),
    default=DEFAULT_PORT,
    show_default=True,
    help="TCP port to listen on.",
)
@click.option(
    "--host",
    default=DEFAULT_HOST,
    show_default=True,
    help="Address to listen on; give 0.0.0.0 only on a network you trust (there is no login).",
)
def ui_command(db: str | None, port: int, host: str) -> None:
    """Start the web front end and print its address; Ctrl+C stops it.

    A missing or outdated logbook opens a page saying which command to run.

    Example: logbook ui --db demo-logbook.db --port 8600
    """
    url = resolve_url(db)
    env = {**os.environ, ENV_VAR: url.render_as_string(hide_password=False)}
    shown = f"[{host}]" if ":" in host else host
    click.echo(f"Logbook {display_url(url)} at http://{shown}:{port}/ (Ctrl+C to stop)")
    server = subprocess.Popen(streamlit_command(host, port), env=env)
    # Stopping this command stops the server too (Ctrl+C reaches both by itself).
    signal.signal(signal.SIGTERM, lambda *_: server.terminate())
    try:
        code = server.wait()
    except KeyboardInterrupt:
        code = server.wait()
    if code not in (0, -signal.SIGTERM, -signal.SIGINT):
        raise click.ClickException(f"the web server stopped with exit code {code}")
