"""`ogive demo`: the workspace on the bundled demo data, with the telling comparison chosen."""

from __future__ import annotations

import argparse
import dataclasses
import os
import tempfile
from pathlib import Path
from typing import TYPE_CHECKING

from ..errors import OgiveError

if TYPE_CHECKING:
    from ..read.options import ScanOptions
    from ..ui import OgiveApp

DESCRIPTION = """\
Open the workspace on the bundled demo data: the request latencies of an invented
service before and after a release. The subject is 'after' and the reference
'before', so the quantile ladder answers "did the release slow anything down, and
where?" straight away. The demo logs are read from demo_logs/ in the source tree; when
that folder is missing (an installed copy) the same set is generated into a cache folder
(~/.cache/ogive/demo_logs) first.
"""

EPILOG = """\
The same data by hand:
  ogive view demo_logs/checkout-before.log demo_logs/checkout-after.log.gz --pattern 'dur=(\\S+)' --unit ms
The demo also opens demo_logs/checkout-rollout.csv.gz with 5-minute windows: the same
release deployed host by host from 13:00 to 13:40. t shows its timeline, where the
rollout is a span; enter on it makes the time after it the subject, before it the
reference."""

ROLLOUT = "checkout-rollout.csv.gz"
"""The demo day told as a rolling deploy (``ogive generate --phase rollout``)."""


def add_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument(
        "--folder",
        metavar="DIR",
        default=None,
        help="use demo logs from this folder instead of the bundled ones",
    )
    parser.add_argument("--ascii", action="store_true", help="plain ASCII pictures and borders")


def demo_folder() -> Path:
    """demo_logs/ beside src/ in a source checkout."""
    return Path(__file__).resolve().parents[3] / "demo_logs"


def pick_pair(folder: Path) -> tuple[Path, Path] | None:
    """The 'before' and 'after' logs of the folder, the text access logs preferred (the largest)."""
    files = sorted(p for p in folder.iterdir() if p.is_file()) if folder.is_dir() else []

    def choose(phase: str) -> Path | None:
        found = [p for p in files if phase in p.name and not p.name.endswith((".md", ".ogive"))]
        text = [p for p in found if ".log" in p.name]
        best = text or found
        return best[0] if best else None

    before, after = choose("before"), choose("after")
    return (before, after) if before and after else None


def _cache_folder() -> Path:
    base = os.environ.get("XDG_CACHE_HOME") or str(Path.home() / ".cache")
    folder = Path(base) / "ogive" / "demo_logs"
    try:
        folder.mkdir(parents=True, exist_ok=True)
    except OSError:
        folder = Path(tempfile.mkdtemp(prefix="ogive-demo-"))
    return folder


def generate_small(folder: Path) -> None:
    """Write the demo set with ``ogive.demo`` (byte for byte the bundled files)."""
    from ..demo import write_demo_set

    write_demo_set(folder)


def demo_options(path: Path) -> ScanOptions:
    """How to read one demo log, by the layout the generator gives each format.

    The field, column and pattern are the generator's own constants where it names them,
    so the demo and its data cannot drift apart.
    """
    from ..demo import TEXT_PATTERN
    from ..read.options import ScanOptions

    name = path.name
    if ".ndjson" in name or ".jsonl" in name:
        return ScanOptions(format="ndjson", field="timing.total_ms", unit="ms")
    if ".csv" in name:
        return ScanOptions(format="csv", column="latency_ms", unit="ms")
    return ScanOptions(format="text", pattern=TEXT_PATTERN, unit="ms")


def run(args: argparse.Namespace) -> int:
    return demo_app(
        Path(args.folder) if args.folder else None, ascii_only=True if args.ascii else None
    ).run_for_status()


def demo_app(folder: Path | None = None, *, ascii_only: bool | None = None) -> OgiveApp:
    """The workspace on the demo pair, subject 'after' and reference 'before' (also what
    the README's screenshots are taken of, by a test)."""
    from ..ui import OgiveApp

    given = folder is not None
    folder = folder if folder is not None else demo_folder()
    pair = pick_pair(folder)
    if pair is None and given:
        raise OgiveError(f"{folder} holds no before*/after* logs.")
    if pair is None:
        folder = _cache_folder()
        pair = pick_pair(folder)
        if pair is None:
            generate_small(folder)
            pair = pick_pair(folder)
        if pair is None:
            raise OgiveError(f"generating the demo logs into {folder} gave no before*/after* files.")
    before, after = pair
    per_source = {str(p): demo_options(p) for p in (before, after)}
    rollout = folder / ROLLOUT
    if rollout.is_file():
        # The same release deployed host by host: the Timeline pane (t) shows it as a span.
        from .timeline import scan_options

        per_source[str(rollout)] = scan_options(
            dataclasses.replace(demo_options(rollout), time_field="timestamp"), "5m"
        )
    return OgiveApp(
        list(per_source),
        per_source=per_source,
        subject=_stem(after),
        reference=_stem(before),
        ascii_only=ascii_only,
    )


def _stem(path: Path) -> str:
    """The row name the workspace gives a scanned file (its name without log suffixes)."""
    from ..store import source_stem

    return source_stem(str(path))
