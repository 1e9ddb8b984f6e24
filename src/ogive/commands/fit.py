"""`ogive fit` (not built yet)."""

from __future__ import annotations

import argparse

from ..errors import OgiveError


def add_arguments(parser: argparse.ArgumentParser) -> None:
    pass


def run(args: argparse.Namespace) -> int:
    raise OgiveError("'ogive fit' is not built yet.")
