"""End to end in a real browser: ``logbook ui`` on a free loopback port, driven by
Playwright with Debian's Chromium; every page opened, a run selected, screenshots saved.

The logbook is the demo's, built by ``logbook demo``.
Screenshots go to the test's temporary folder, and also to $LOGBOOK_SCREENSHOT_DIR
when it is set (``docs/screenshots`` refreshes the README's pictures).
"""

from __future__ import annotations

import os
import shutil
import signal
import socket
import subprocess
import sys
import time
import urllib.request
from collections.abc import Iterator
from pathlib import Path

import pytest

from logbook.services import views
from logbook.store.config import resolve_url
from logbook.store.engine import Database
from tests.services.capture_files import write_capture

CHROMIUM = "/usr/bin/chromium"
SCREENSHOT_ENV = "LOGBOOK_SCREENSHOT_DIR"
VIEWPORT = {"width": 1440, "height": 1100}
TIMEOUT_MS = 60_000

pytestmark = [
    pytest.mark.browser,
    pytest.mark.skipif(
        not Path(CHROMIUM).is_file(), reason=f"needs Debian's chromium at {CHROMIUM}"
    ),
]
sync_api = pytest.importorskip("playwright.sync_api", reason="needs the playwright package")


def free_port() -> int:
    with socket.socket() as sock:
        sock.bind(("127.0.0.1", 0))
        return int(sock.getsockname()[1])


@pytest.fixture(scope="module")
def logbook_file(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """The demo's logbook, built by ``logbook demo`` as a newcomer would."""
    path = tmp_path_factory.mktemp("browser-logbook") / "logbook.db"
    subprocess.run(
        [sys.executable, "-m", "logbook", "demo", "--db", str(path)],
        check=True,
        capture_output=True,
        timeout=300,
    )
    return path


@pytest.fixture(scope="module")
def server(logbook_file: Path) -> Iterator[str]:
    """``logbook ui`` serving the logbook; yields its base URL."""
    port = free_port()
    process = subprocess.Popen(
        [sys.executable, "-m", "logbook", "ui", "--db", str(logbook_file), "--port", str(port)],
        stdout=subprocess.PIPE,
        stderr=subprocess.STDOUT,
        text=True,
        start_new_session=True,
    )
    base = f"http://127.0.0.1:{port}"
    try:
        assert process.stdout is not None
        first = process.stdout.readline()
        assert first.startswith(f"Logbook sqlite:///{logbook_file} at {base}/"), first
        deadline = time.monotonic() + 60
        while True:
            try:
                with urllib.request.urlopen(f"{base}/_stcore/health", timeout=2) as reply:
                    if reply.status == 200:
                        break
            except OSError:
                assert process.poll() is None, "logbook ui stopped before serving"
                assert time.monotonic() < deadline, "logbook ui did not answer within 60 s"
                time.sleep(0.3)
        yield base
    finally:
        process.send_signal(signal.SIGTERM)  # `logbook ui` stops its server on SIGTERM
        try:
            process.wait(timeout=20)
        except subprocess.TimeoutExpired:
            os.killpg(process.pid, signal.SIGKILL)
            process.wait()
        if process.stdout is not None:
            process.stdout.close()


@pytest.fixture(scope="module")
def page(server: str) -> Iterator[object]:
    with sync_api.sync_playwright() as playwright:
        browser = playwright.chromium.launch(executable_path=CHROMIUM)
        tab = browser.new_page(viewport=VIEWPORT)
        tab.set_default_timeout(TIMEOUT_MS)
        yield tab
        browser.close()


def shoot(tab: object, tmp_path: Path, name: str) -> Path:
    """A screenshot of the whole page (the window is stretched to the content first)."""
    path = tmp_path / f"{name}.png"
    height = tab.evaluate(  # type: ignore[attr-defined]
        "() => document.querySelector('[data-testid=stMainBlockContainer]').scrollHeight"
    )
    tall = {"width": VIEWPORT["width"], "height": max(VIEWPORT["height"], int(height) + 60)}
    tab.set_viewport_size(tall)  # type: ignore[attr-defined]
    tab.wait_for_timeout(800)  # type: ignore[attr-defined]
    tab.screenshot(path=str(path))  # type: ignore[attr-defined]
    tab.set_viewport_size(VIEWPORT)  # type: ignore[attr-defined]
    target = os.environ.get(SCREENSHOT_ENV)
    if target:
        Path(target).mkdir(parents=True, exist_ok=True)
        shutil.copyfile(path, Path(target) / path.name)
    return path


def settle(tab: object) -> None:
    """Wait until the script has finished (Streamlit's running indicator is gone)."""
    tab.wait_for_timeout(500)  # type: ignore[attr-defined]
    running = tab.get_by_test_id("stStatusWidget")  # type: ignore[attr-defined]
    running.wait_for(state="hidden")
    tab.wait_for_timeout(800)  # type: ignore[attr-defined]


def visit(tab: object, url: str, heading: str) -> None:
    tab.goto(url)  # type: ignore[attr-defined]
    tab.get_by_role("heading", name=heading, level=1).wait_for()  # type: ignore[attr-defined]
    settle(tab)


def navigate(tab: object, title: str) -> None:
    """Open a page from the sidebar, in the same session (choices carry over)."""
    nav = tab.get_by_test_id("stSidebarNav")  # type: ignore[attr-defined]
    nav.get_by_role("link", name=title).click()
    tab.get_by_role("heading", name=title, level=1).wait_for()  # type: ignore[attr-defined]
    settle(tab)


def choose(tab: object, index: int, option: str, within: object | None = None) -> None:
    """Pick ``option`` in the ``index``-th selectbox of the page (or of ``within``).

    A click that lands while the page is still drawing can leave the list closed, which
    happened on a loaded CI machine; so the list is opened again, up to three times,
    when its option has not shown within ten seconds."""
    root = tab if within is None else within
    wanted = tab.get_by_role("option", name=option, exact=True)  # type: ignore[attr-defined]
    for _ in range(3):
        root.get_by_test_id("stSelectbox").nth(index).click()  # type: ignore[attr-defined]
        try:
            wanted.wait_for(timeout=10_000)
            break
        except sync_api.TimeoutError:
            tab.keyboard.press("Escape")  # type: ignore[attr-defined]
            settle(tab)
    wanted.click()
    settle(tab)


def tick(tab: object, row: int) -> None:
    """Tick the ``row``-th row (1 = first) of the page's first table: its checkbox is
    drawn on a canvas, in the first column, rows 35 px high under a 35 px header."""
    box = tab.get_by_test_id("stDataFrame").first.bounding_box()  # type: ignore[attr-defined]
    assert box is not None
    tab.mouse.click(box["x"] + 16, box["y"] + 35 * (row + 0.5))  # type: ignore[attr-defined]
    settle(tab)


def body(tab: object) -> str:
    return str(tab.get_by_test_id("stMain").inner_text())  # type: ignore[attr-defined]


def new_capture(logbook_file: Path, folder: Path) -> Path:
    """A capture of x-stage's newest revision with a gain set it uses, not yet imported."""
    database = Database(resolve_url(str(logbook_file)))
    try:
        with database.session() as session:
            choices = views.axis_choices(session, "x-stage")
    finally:
        database.dispose()
    metadata = {
        "axis": "x-stage",
        "revision": choices.revisions[-1],
        "gains": choices.gains[0],
        "operator": "browser test",
        "date": "2026-07-01T09:00:00+00:00",
    }
    return write_capture(folder / "bench-0701.csv", seed=7, metadata=metadata)


def test_every_page_in_a_browser(
    server: str, page: object, logbook_file: Path, tmp_path: Path
) -> None:
    tab = page
    visit(tab, server, "Overview")
    tab.get_by_text("Comparing each revision with its parent…").first.wait_for(  # type: ignore[attr-defined]
        state="detached"
    )
    settle(tab)
    text = body(tab)
    assert "Latest revision" in text and "Recent findings" in text
    shoot(tab, tmp_path, "overview")

    navigate(tab, "Runs")
    choose(tab, 0, "x-stage")
    everything = body(tab)
    assert "runs; tick rows to open them" in everything
    choose(tab, 1, "C")  # the revision filter
    assert body(tab).split(" runs; tick rows")[0] != everything.split(" runs; tick rows")[0]
    tick(tab, 1)
    tab.locator(".js-plotly-plot").first.wait_for()  # type: ignore[attr-defined]
    settle(tab)
    text = body(tab)
    assert "Tick a run in the table" not in text
    assert "source file" in text
    plot = str(tab.locator(".js-plotly-plot").first.inner_text())  # type: ignore[attr-defined]
    assert "setpoint" in plot and "feedback" in plot  # the legend
    assert "rise 10%–90%" in plot and "settling band" in plot  # the figures marked
    shoot(tab, tmp_path, "run")
    choose(tab, 1, "(any)")
    for row in (1, 4, 7, 9):
        tick(tab, row)
    tab.get_by_text("Figures side by side").wait_for()  # type: ignore[attr-defined]
    settle(tab)
    shoot(tab, tmp_path, "runs-overlay")

    navigate(tab, "Trends")
    assert "runs of x-stage" in body(tab)  # the axis chosen on the runs page
    tab.locator(".js-plotly-plot").first.wait_for()  # type: ignore[attr-defined]
    assert "hardware revision" in str(tab.locator(".js-plotly-plot").first.inner_text())  # type: ignore[attr-defined]
    shoot(tab, tmp_path, "trends")

    navigate(tab, "Acceptance")
    text = body(tab)
    assert "Verdict" in text and "Runs judged" in text and "Issue report" in text
    shoot(tab, tmp_path, "acceptance")

    navigate(tab, "Import")
    assert "Capture files" in body(tab)
    capture = new_capture(logbook_file, tmp_path)
    tab.locator("input[type=file]").set_input_files(str(capture))  # type: ignore[attr-defined]
    tab.get_by_text(f"Preview: {capture.name}").wait_for()  # type: ignore[attr-defined]
    settle(tab)
    tab.get_by_role("button", name="Check (dry run)").click()  # type: ignore[attr-defined]
    tab.get_by_text("Dry run (nothing was written): 1 checked").wait_for()  # type: ignore[attr-defined]
    settle(tab)
    shoot(tab, tmp_path, "import")

    navigate(tab, "Setup")
    assert "Add an axis" in body(tab)
    shoot(tab, tmp_path, "setup")
