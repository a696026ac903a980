"""``python -m logbook.simulate [FOLDER]``: regenerate the demo data (default demo_data)."""

from __future__ import annotations

import argparse
from pathlib import Path

from logbook.simulate.demo import write_demo_data


def main(argv: list[str] | None = None) -> None:
    parser = argparse.ArgumentParser(
        prog="python -m logbook.simulate",
        description="Simulate the demo scenario and rewrite its captures, profiles, "
        "specs and scenario.json in FOLDER.",
        epilog="Example: python -m logbook.simulate demo_data",
    )
    parser.add_argument("folder", nargs="?", type=Path, default=Path("demo_data"))
    folder = parser.parse_args(argv).folder
    write_demo_data(folder)
    print(f"demo data written to {folder}")


if __name__ == "__main__":
    main()
