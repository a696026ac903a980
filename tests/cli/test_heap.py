"""Batch commands ask the C library to keep freed memory for the next file."""

from __future__ import annotations

import platform
import sys

from logbook.cli.heap import keep_freed_memory


def test_glibc_takes_the_setting_and_other_libraries_are_left_alone() -> None:
    on_glibc = sys.platform.startswith("linux") and platform.libc_ver()[0] == "glibc"
    assert keep_freed_memory() is on_glibc
