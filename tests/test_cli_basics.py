"""The command line's frame: help stays light, errors are one line."""

from __future__ import annotations

import subprocess
import sys


def test_help_does_not_import_heavy_libraries() -> None:
    code = (
        "import sys; from ogive.cli import build_parser; build_parser().format_help(); "
        "print(sorted(m for m in ('scipy', 'textual', 'polars') if m in sys.modules))"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "[]"


def test_usage_error_is_one_line_and_exit_3() -> None:
    out = subprocess.run([sys.executable, "-m", "ogive", "nope"], capture_output=True, text=True)
    assert out.returncode == 3
    assert "Traceback" not in out.stderr
