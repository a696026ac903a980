"""Packaging: the migrations are found from a checkout and from an installed wheel."""

from __future__ import annotations

import json
import subprocess
import sys
import tomllib
from pathlib import Path

import pytest

from logbook.store.migrate import migrations_dir

ROOT = Path(__file__).resolve().parents[1]


def test_migrations_found_from_the_checkout() -> None:
    assert (migrations_dir() / "env.py").is_file()
    assert any((migrations_dir() / "versions").glob("0001_*.py"))


def test_every_package_is_listed_in_pyproject() -> None:
    listed = set(
        tomllib.loads((ROOT / "pyproject.toml").read_text())["tool"]["setuptools"]["packages"]
    )
    found = {
        ".".join(p.parent.relative_to(ROOT).parts) for p in (ROOT / "logbook").rglob("__init__.py")
    }
    assert found <= listed, f"add to [tool.setuptools] packages: {sorted(found - listed)}"


@pytest.mark.slow
def test_installed_wheel_creates_a_database_and_the_demo(tmp_path: Path) -> None:
    wheel_dir = tmp_path / "wheel"
    subprocess.run(
        [
            sys.executable,
            "-m",
            "pip",
            "wheel",
            "--no-deps",
            "--no-build-isolation",
            "-q",
            "-w",
            str(wheel_dir),
            str(ROOT),
        ],
        check=True,
    )
    wheel = next(wheel_dir.glob("*.whl"))
    venv = tmp_path / "venv"
    subprocess.run([sys.executable, "-m", "venv", "--system-site-packages", str(venv)], check=True)
    python = venv / "bin" / "python"
    # --ignore-installed: the same version may already sit in the base site-packages.
    subprocess.run(
        [str(python), "-m", "pip", "install", "--no-deps", "--ignore-installed", "-q", str(wheel)],
        check=True,
    )
    elsewhere = tmp_path / "elsewhere"
    elsewhere.mkdir()
    found = subprocess.run(
        [
            str(python),
            "-c",
            "import logbook.store.migrate as m; print(m.migrations_dir());"
            "import logbook_plaintext as p; print(p.__file__)",
        ],
        cwd=elsewhere,
        capture_output=True,
        text=True,
        check=False,
    )
    printed = found.stdout.split()
    assert printed, found.stderr
    where, *native = printed
    assert str(venv) in where, f"migrations came from {where}, not the installed wheel"
    assert native and str(venv) in native[0], (
        f"the compiled reader is not in the wheel: {found.stderr}"
    )
    result = subprocess.run(
        [str(venv / "bin" / "logbook"), "init", "--db", "wheel.db"],
        cwd=elsewhere,
        capture_output=True,
        text=True,
        check=False,
    )
    assert result.returncode == 0, result.stderr
    assert "schema 0001" in result.stdout
    demo = subprocess.run(
        [str(venv / "bin" / "logbook"), "demo", "--db", "demo.db"],
        cwd=elsewhere,
        capture_output=True,
        text=True,
        check=False,
    )
    assert demo.returncode == 0, demo.stderr
    captures = len(json.loads((ROOT / "demo_data" / "scenario.json").read_text())["captures"])
    assert f"{captures} captures imported" in demo.stdout, "the demo data must ship in the wheel"
