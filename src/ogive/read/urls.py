"""Sources named by URL, opened through fsspec: ``s3://``, ``gs://``, ``https://``,
``file://``, ``memory://`` and whatever else an installed fsspec package serves; and
globs, local or remote, expanded to the files they match.

fsspec is optional (the extra ``ogive[cluster]``) and imported only when a URL is met,
so local files cost nothing here. A missing package is one sentence naming it.
"""

from __future__ import annotations

import glob
import os
import re
from typing import BinaryIO

from ..errors import OgiveError

_URL = re.compile(r"^[A-Za-z][A-Za-z0-9+.-]+://")
_GLOB = re.compile(r"[*?[]")
EXTRA = "pip install 'ogive[cluster]'"


def has_glob(name: str) -> bool:
    """Whether ``name`` holds a glob character (``*``, ``?``, ``[``)."""
    return bool(_GLOB.search(name))


def is_url(name: str) -> bool:
    """``s3://bucket/key``, ``https://...``, ``memory://...``: a path fsspec opens."""
    return bool(_URL.match(name))


def _fsspec(name: str):  # type: ignore[no-untyped-def]
    try:
        import fsspec
    except ImportError:
        raise OgiveError(f"{name} is a URL; reading URLs needs fsspec, which comes with {EXTRA}.") from None
    return fsspec


def url_fs(name: str):  # type: ignore[no-untyped-def]
    """(fsspec file system, path) for a URL; one sentence when its package is missing."""
    try:
        return _fsspec(name).core.url_to_fs(name)
    except ImportError as exc:  # fsspec names the package the protocol needs (s3fs, gcsfs, aiohttp)
        need = str(exc).rstrip(".")
        raise OgiveError(f"cannot open {name}: {need} (pip install it beside ogive).") from None
    except ValueError as exc:
        raise OgiveError(f"cannot open {name}: {exc}.") from None


def open_url(name: str) -> tuple[BinaryIO, int | None]:
    """A URL opened through fsspec for reading, and its size when the store tells it.

    Credentials come from where each store's fsspec package looks for them (the
    environment, the usual config files); nothing is asked for here.
    """
    fs, path = url_fs(name)
    try:
        raw = fs.open(path, "rb")
    except FileNotFoundError:
        raise OgiveError(f"cannot open {name}: no such file.") from None
    except Exception as exc:  # each store raises its own kinds (auth, network): one line, named
        raise OgiveError(f"cannot open {name}: {str(exc) or type(exc).__name__}.") from None
    size = getattr(raw, "size", None)
    return raw, size if isinstance(size, int) else None


def expand(names: list[str]) -> list[str]:
    """``names`` with globs replaced by the files they match, in name order (:func:`listing`)."""
    return [name for name, _ in listing(names)]


def listing(names: list[str]) -> list[tuple[str, int | None]]:
    """Each source with globs expanded, and its size where a URL listing told it.

    A URL glob (``s3://logs/2026-03-*/app.log.gz``) is listed through fsspec; a local one
    only when no file has that very name (the shell expands unquoted local globs first).
    A glob matching nothing is an error: a typo must not read as an empty log.
    """
    out: list[tuple[str, int | None]] = []
    for name in names:
        if not _GLOB.search(name) or (not is_url(name) and os.path.exists(name)):
            out.append((name, None))
            continue
        found: list[tuple[str, int | None]]
        if is_url(name):
            fs, path = url_fs(name)
            try:
                listed = fs.glob(path, detail=True)  # sizes and kinds in the listing: no request per file
            except Exception as exc:  # the store's own errors (auth, network), as one line
                raise OgiveError(f"cannot list {name}: {str(exc) or type(exc).__name__}.") from None
            files = [p for p in sorted(listed) if listed[p].get("type") != "directory"]
            found = [(fs.unstrip_protocol(p), listed[p].get("size")) for p in files]
        else:
            found = [(p, None) for p in sorted(glob.glob(name)) if os.path.isfile(p)]
        if not found:
            raise OgiveError(f"no file matches {name}.")
        out += found
    return out
