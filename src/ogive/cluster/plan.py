"""Which parts a split scan reads: sources listed, their first bytes looked at, cut up.

- A plain UTF-8 file larger than a part is cut into byte ranges of ``part_bytes``
  (each widened to whole records by the map task, :mod:`.ranges`).
- A compressed file (gzip, zstd, bz2, xz, recognised by its first bytes as always) is
  one part: its bytes cannot be entered in the middle without an index.
- A file in another encoding (UTF-16, CR line ends) is one part: its line ends are not
  the byte ``\\n``, so it cannot be cut there.
- A Parquet file is cut at row-group boundaries read from its footer (:mod:`.parquet`),
  a part holding row groups of about ``part_bytes`` (uncompressed).

Only the first 4 KB of each source (and a Parquet footer) is read here, on the client;
for URLs the heads of all files are fetched in one concurrent call per file system.
"""

from __future__ import annotations

import os
from dataclasses import dataclass

from ..errors import OgiveError
from ..read import encoding, sources, urls
from .head import Decisions
from .parquet import row_groups
from .tasks import RANGE, ROWS, WHOLE, PartSpec, open_plain

PART_BYTES = 64 << 20
"""Default bytes per part: large enough that a part's fixed cost (~0.1 s measured, see
``benchmarks/cluster_bench.py``) is a few percent of its reading, small enough that 100
workers share a 100 GB scan evenly."""


@dataclass(frozen=True)
class Source:
    display: str
    """As the user named it (or as a glob listed it)."""
    path: str
    """What a worker opens: an absolute path (workers have their own working folder) or a URL."""
    size: int | None
    head: bytes


def list_sources(names: list[str]) -> list[Source]:
    """The sources behind ``names`` (globs expanded), with their sizes and first bytes."""
    if "-" in names:
        raise OgiveError("--cluster reads files and URLs, not standard input ('-').")
    out: list[Source | None] = []
    remote: dict[str, list[tuple[int, str, str, int | None]]] = {}
    for name, size in urls.listing(names):
        if urls.is_url(name):
            fs, path = urls.url_fs(name)
            remote.setdefault(type(fs).__name__, []).append((len(out), name, path, size))
            out.append(None)
            continue
        try:
            with open(name, "rb") as fh:
                out.append(Source(name, os.path.abspath(name), os.fstat(fh.fileno()).st_size, fh.read(4096)))
        except OSError as exc:
            raise OgiveError(f"cannot open {name}: {exc.strerror or exc}.") from None
    for group in remote.values():
        fs, _ = urls.url_fs(group[0][1])
        try:
            sizes = [size if size is not None else fs.size(path) for _, _, path, size in group]
            heads = fs.cat_ranges([p for _, _, p, _ in group], [0] * len(group), [4096] * len(group))
        except FileNotFoundError as exc:
            raise OgiveError(f"cannot open {exc}: no such file.") from None
        except Exception as exc:  # the store's own errors (auth, network), as one line
            raise OgiveError(f"cannot read {group[0][1]}: {str(exc) or type(exc).__name__}.") from None
        for (i, name, _, _), size, head in zip(group, sizes, heads, strict=True):
            if isinstance(head, BaseException):
                raise OgiveError(f"cannot read {name}: {head}.")
            out[i] = Source(name, name, size, bytes(head))
    return [s for s in out if s is not None]


def cut(
    files: list[Source], decisions: Decisions, part_bytes: int = PART_BYTES, *, named: str | None = None
) -> list[PartSpec]:
    """The parts of ``files``, in source order (``slot`` and ``leaf`` number them).
    ``named``: the ``--encoding`` given; a file decoded from it is read whole."""
    specs: list[PartSpec] = []

    def add(f: Source, **kw: object) -> None:
        slot = len(specs)
        specs.append(PartSpec(slot, slot, f.path, f.display, **kw))  # type: ignore[arg-type]

    for f in files:
        compressed = any(f.head.startswith(m) for m in sources.MAGIC)
        parquet = not compressed and f.head.startswith(sources.PARQUET_MAGIC)
        if parquet and f.size is not None:
            for offset, count, nbytes in _row_parts(f, part_bytes):
                add(f, kind=ROWS, rows=(offset, count), first_line=offset + 1, nbytes=nbytes)
        elif (
            compressed
            or f.size is None
            or f.size <= part_bytes
            or encoding.sniff(f.head)[0] != encoding.UTF8
            or encoding.transcoded(named)
            or decisions.layout.format == "parquet"
        ):
            add(f, kind=WHOLE, nbytes=f.size or 0)
        else:
            for start in range(0, f.size, part_bytes):
                end = min(start + part_bytes, f.size)
                add(f, kind=RANGE, start=start, end=end, nbytes=end - start)
    return specs


def _row_parts(f: Source, part_bytes: int) -> list[tuple[int, int, int]]:
    """(first row, rows, share of the file's bytes) per part of a Parquet file."""
    assert f.size is not None
    raw = open_plain(f.path)
    try:
        groups = row_groups(raw, f.size, f.display)
    finally:
        raw.close()
    total = sum(g.rows for g in groups) or 1
    out: list[tuple[int, int, int]] = []
    offset = rows = held = 0
    for g in groups:
        rows += g.rows
        held += g.nbytes
        if held >= part_bytes:
            out.append((offset, rows, f.size * rows // total))
            offset, rows, held = offset + rows, 0, 0
    if rows or not out:
        out.append((offset, rows, f.size * rows // total))
    return out
