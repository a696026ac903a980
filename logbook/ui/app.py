"""The logbook's web front end: ``streamlit run`` this file (``logbook ui`` does).

It checks the database first; a missing or outdated logbook gets a page saying
which command to run instead of a traceback. Otherwise the pages are offered in
the sidebar, each a module of this package.
"""

from __future__ import annotations

import streamlit as st

from logbook import __version__
from logbook.store.config import display_url
from logbook.ui.common import database_problem, logbook_url, page_file

PAGES = (
    ("pages_overview.py", "Overview", "overview", ":material/dashboard:"),
    ("pages_runs.py", "Runs", "runs", ":material/show_chart:"),
    ("pages_trends.py", "Trends", "trends", ":material/trending_up:"),
    ("pages_acceptance.py", "Acceptance", "acceptance", ":material/verified:"),
    ("pages_import.py", "Import", "import", ":material/upload_file:"),
    ("pages_setup.py", "Setup", "setup", ":material/settings:"),
)


def main() -> None:
    st.set_page_config(page_title="Axis logbook", page_icon=":material/tune:", layout="wide")
    problem = database_problem()
    if problem is not None:
        st.title("The logbook cannot be opened")
        st.error(problem.message, icon=":material/database:")
        st.markdown("Run one of these in a terminal, then reload this page:")
        st.code("\n".join(problem.commands), language="bash")
        st.caption(
            "logbook init creates an empty logbook, logbook demo one filled with sample"
            " data, and logbook db upgrade brings an older logbook to this version's schema."
        )
        return
    pages = [
        st.Page(page_file(file), title=title, url_path=path, icon=icon, default=i == 0)
        for i, (file, title, path, icon) in enumerate(PAGES)
    ]
    page = st.navigation(pages)
    st.sidebar.caption(f"Logbook: {display_url(logbook_url())}  \nSoftware {__version__}")
    page.run()


main()
