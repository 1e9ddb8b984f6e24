"""The ``.ogive`` file format: JSON with arrays, versioned, checksummed.

Bytes in, bytes out: the caller does the (atomic) file I/O. Loading parses JSON and
checks every field's type and shape; it never evaluates or unpickles anything.

Format 1, top level::

    {
      "format": "ogive-sketch-set",
      "version": 1,
      "writer": "ogive 0.1.0",
      "sketches": {NAME: SKETCH, ...},
      "unassigned": {REASON: {"count": N, "examples": [...]}, ...},   (optional)
      "checksum": "sha256:<hex of the canonical JSON of every other key>"
    }

``unassigned`` counts rows that were read but belong to no sketch (a bad time when the
sketches are cut by time); it is written only when there are such rows, so files
without it are the same as before it existed.

SKETCH holds ``unit``, ``compression``, ``scale``, ``tail_size``, the counts (``count``,
``sum``, ``nan_count``, ``inf_count``, ``negative_count``, ``zero_count``), the digest
(``centroids``: parallel arrays ``mean``, ``weight``, ``min``, ``max`` - the smallest and
largest value each centroid holds; a centroid with ``min == max`` holds one repeated
value), the exact tails (``low``, ``high``: sorted arrays) and ``provenance`` (sources,
field, lines and rows read, rows skipped by reason with example locations, first/last
timestamp, partial).

Older files of the same version have ``pure`` (0/1) instead of ``min``/``max`` and may
have ``merge_slack``; they load, with each mixed centroid's range taken to reach its
neighbours' means (``digest.neighbour_ranges``) and the slack no longer needed.
The canonical JSON for the checksum is ``json.dumps(obj, sort_keys=True,
separators=(",", ":"))`` of the document without its ``checksum`` key.
"""

from __future__ import annotations

import hashlib
import json
import math
from typing import Any

import numpy as np

from .. import __version__
from .digest import DEFAULT_COMPRESSION
from .sketch import Provenance, Sketch, SketchSet, SkipTally

FORMAT = "ogive-sketch-set"
VERSION = 1


class SketchFormatError(ValueError):
    """The bytes are not a sketch file this version can read; the message says why."""


# ---------------------------------------------------------------------- writing
def sketch_to_dict(s: Sketch) -> dict[str, Any]:
    # The digest keeps its numbers rounded as the file holds them (rounding.py), so
    # they are written as they are and read back identical.
    means, weights, _ = s.digest.centroids()
    lows, highs = s.digest.ranges()
    p = s.provenance
    return {
        "unit": s.unit,
        "compression": s.compression,
        "scale": s.digest.scale,
        "tail_size": s.tail_size,
        "count": s.count,
        "sum": s.total,
        "nan_count": s.nan_count,
        "inf_count": s.inf_count,
        "negative_count": s.negative_count,
        "zero_count": s.zero_count,
        "centroids": {
            "mean": _floats(means),
            "weight": _floats(weights),
            "min": _floats(lows),
            "max": _floats(highs),
        },
        "low": _floats(s.low),
        "high": _floats(s.high),
        "provenance": {
            "sources": list(p.sources),
            "field": p.field,
            "lines_read": p.lines_read,
            "rows_read": p.rows_read,
            "skipped": _tallies(p.skipped),
            "time_first": p.time_first,
            "time_last": p.time_last,
            "partial": p.partial,
        },
    }


def _tallies(tallies: dict[str, SkipTally]) -> dict[str, Any]:
    return {r: {"count": t.count, "examples": list(t.examples)} for r, t in tallies.items()}


def _floats(a: np.ndarray) -> list[float | int]:
    """Integral values as ints: shorter files, same numbers."""
    return [int(v) if v.is_integer() and abs(v) < 2**53 else v for v in a.tolist()]


def dumps(sketches: SketchSet) -> bytes:
    doc: dict[str, Any] = {
        "format": FORMAT,
        "version": VERSION,
        "writer": f"ogive {__version__}",
        "sketches": {name: sketch_to_dict(s) for name, s in sketches.sketches.items()},
    }
    if sketches.unassigned:
        doc["unassigned"] = _tallies(sketches.unassigned)
    doc["checksum"] = "sha256:" + hashlib.sha256(_canonical(doc)).hexdigest()
    return (_pretty(doc, 0) + "\n").encode()


def _canonical(doc: dict[str, Any]) -> bytes:
    body = {k: v for k, v in doc.items() if k != "checksum"}
    return json.dumps(body, sort_keys=True, separators=(",", ":"), allow_nan=False).encode()


def _pretty(obj: Any, depth: int) -> str:
    """Indented objects, arrays on one line: readable in a pager, still compact."""
    pad = "  " * (depth + 1)
    if isinstance(obj, dict) and obj:
        items = [f"{pad}{json.dumps(k)}: {_pretty(v, depth + 1)}" for k, v in obj.items()]
        return "{\n" + ",\n".join(items) + "\n" + "  " * depth + "}"
    return json.dumps(obj, separators=(",", ":"), allow_nan=False)


# ---------------------------------------------------------------------- reading
def loads(data: bytes) -> SketchSet:
    try:
        doc = json.loads(data)
    except (UnicodeDecodeError, json.JSONDecodeError) as exc:
        raise SketchFormatError(
            f"not an ogive sketch file (not valid JSON: {exc.msg if hasattr(exc, 'msg') else exc})."
        ) from None
    if not isinstance(doc, dict) or doc.get("format") != FORMAT:
        raise SketchFormatError("not an ogive sketch file (no 'format': 'ogive-sketch-set').")
    version = doc.get("version")
    if not isinstance(version, int):
        raise SketchFormatError("the sketch file has no valid 'version'.")
    if version > VERSION:
        raise SketchFormatError(
            f"the sketch file is format version {version}, written by a newer ogive; "
            f"this one reads up to version {VERSION}."
        )
    want = doc.get("checksum")
    try:
        got = "sha256:" + hashlib.sha256(_canonical(doc)).hexdigest()
    except ValueError:  # json.loads takes NaN/Infinity tokens that we never write
        raise SketchFormatError(
            "the sketch file holds a non-finite number (NaN or Infinity), which the format never contains."
        ) from None
    if want != got:
        raise SketchFormatError("the sketch file's checksum does not match: it was edited or damaged.")
    raw = doc.get("sketches")
    if not isinstance(raw, dict):
        raise SketchFormatError("the sketch file has no 'sketches' object.")
    out = SketchSet()
    for name, body in raw.items():
        try:
            out.sketches[name] = sketch_from_dict(body)
        except KeyError as exc:
            raise SketchFormatError(
                f"sketch {name!r} in the file is malformed: it lacks the field {exc}."
            ) from None
        except (TypeError, ValueError) as exc:
            raise SketchFormatError(f"sketch {name!r} in the file is malformed: {exc}.") from None
    try:
        out.unassigned = _read_tallies(doc.get("unassigned", {}))
    except (AttributeError, KeyError, TypeError, ValueError):
        raise SketchFormatError("the sketch file's 'unassigned' rows are malformed.") from None
    return out


def _read_tallies(body: Any) -> dict[str, SkipTally]:
    return {
        str(r): SkipTally(int(t["count"]), [str(e) for e in t["examples"]]) for r, t in dict(body).items()
    }


def _array(body: Any, name: str) -> np.ndarray:
    value = body[name]
    if not isinstance(value, list):
        raise ValueError(f"'{name}' must be an array of numbers")
    # One numpy pass instead of a Python isinstance per element (files hold ~10^4
    # numbers per sketch, sets hold hundreds of sketches): a list of JSON numbers
    # becomes an int or float array; strings, booleans, nulls or nesting do not.
    try:
        raw = np.array(value)
    except ValueError:
        raise ValueError(f"'{name}' must be a flat array of numbers") from None
    if raw.ndim != 1 or (raw.size and raw.dtype.kind not in "iuf"):
        raise ValueError(f"'{name}' must be an array of numbers")
    arr = raw.astype(np.float64)
    if not np.isfinite(arr).all():
        raise ValueError(f"'{name}' holds a non-finite number")
    return arr


def _int(body: dict[str, Any], name: str) -> int:
    value = body[name]
    if not isinstance(value, int) or isinstance(value, bool) or value < 0:
        raise ValueError(f"'{name}' must be a non-negative integer")
    return value


def sketch_from_dict(body: Any) -> Sketch:
    if not isinstance(body, dict):
        raise ValueError("a sketch must be an object")
    s = Sketch(
        str(body["unit"]),
        compression=float(body["compression"]),
        tail_size=_int(body, "tail_size"),
        scale=str(body["scale"]),
    )
    cents = body["centroids"]
    if not isinstance(cents, dict):
        raise ValueError("'centroids' must be an object of arrays")
    if not isinstance(body["provenance"], dict):
        raise ValueError("'provenance' must be an object")
    means, weights = _array(cents, "mean"), _array(cents, "weight")
    if "min" in cents or "pure" not in cents:
        lows, highs = _array(cents, "min"), _array(cents, "max")
        if not (means.size == weights.size == lows.size == highs.size):
            raise ValueError("centroid arrays differ in length")
        if np.any(lows > highs):
            raise ValueError("a centroid's 'min' is above its 'max'")
        pure = lows == highs
        # A file edited by hand may put a mean outside its range; widening the
        # range to it keeps the range a bound.
        ranges: tuple[np.ndarray, np.ndarray] | None = (np.minimum(lows, means), np.maximum(highs, means))
    else:  # files written before centroids kept their ranges
        pure = _array(cents, "pure").astype(bool)
        if not (means.size == weights.size == pure.size):
            raise ValueError("centroid arrays differ in length")
        ranges = None
    if np.any(np.diff(means) < 0) or np.any(weights <= 0):
        raise ValueError("centroids must be sorted with positive weights")
    s.count = _int(body, "count")
    if not math.isclose(weights.sum(), s.count, rel_tol=1e-9, abs_tol=0.5):
        raise ValueError("centroid weights do not add up to 'count'")
    s.digest.add_centroids(means, weights, pure, ranges)
    s.low, s.high = _array(body, "low"), _array(body, "high")
    if s.low.size > s.tail_size or s.high.size > s.tail_size or s.low.size > s.count:
        raise ValueError("the exact tails are longer than the sketch allows")
    s.total = float(body["sum"])
    for name in ("nan_count", "inf_count", "negative_count", "zero_count"):
        setattr(s, name, _int(body, name))
    slack = body.get("merge_slack", 0.0)  # older files: a merge allowance the ranges replace
    if not isinstance(slack, (int, float)) or isinstance(slack, bool) or not 0 <= slack < math.inf:
        raise ValueError("'merge_slack' must be a non-negative number")
    p = body["provenance"]
    s.provenance = Provenance(
        sources=[str(x) for x in p["sources"]],
        field=str(p["field"]),
        lines_read=_int(p, "lines_read"),
        rows_read=_int(p, "rows_read"),
        skipped={
            str(r): SkipTally(_int(t, "count"), [str(x) for x in t["examples"]])
            for r, t in p["skipped"].items()
        },
        time_first=None if p["time_first"] is None else str(p["time_first"]),
        time_last=None if p["time_last"] is None else str(p["time_last"]),
        partial=None if p["partial"] is None else str(p["partial"]),
    )
    return s


def from_tdigest_dict(doc: Any, unit: str = "") -> Sketch:
    """A sketch from ``tdigest.TDigest.to_dict()`` (the PyPI ``tdigest`` package).

    That format keeps centroids only, so the imported sketch has no exact tails: its
    minimum, maximum and extreme quantiles are the digest's approximations. Its
    centroids may overlap in value (that package clusters in arrival order) and carry
    no ranges; each is taken to reach its neighbours' means, so interval bounds read
    from such a sketch assume that they do not overlap.
    """
    if not isinstance(doc, dict) or not isinstance(doc.get("centroids"), list):
        raise SketchFormatError("not a tdigest export (no 'centroids' list).")
    try:
        means = np.array([float(c["m"]) for c in doc["centroids"]])
        weights = np.array([float(c["c"]) for c in doc["centroids"]])
    except (KeyError, TypeError, ValueError):
        raise SketchFormatError("a tdigest centroid lacks a numeric 'm' or 'c'.") from None
    if not np.isfinite(means).all() or np.any(weights <= 0):
        raise SketchFormatError("a tdigest centroid has a non-finite mean or a weight <= 0.")
    # Room for every imported centroid: regrouping them at that package's nominal
    # compression (1 / delta) would throw away most of its resolution, because it
    # keeps far more centroids per unit of compression than the k1 scale does.
    s = Sketch(unit, compression=max(DEFAULT_COMPRESSION, 2.0 * means.size), tail_size=1)
    s.digest.add_centroids(means, weights)
    s.count = round(float(weights.sum()))
    s.total = float((means * weights).sum())
    s.negative_count = int(weights[means < 0].sum())
    s.zero_count = int(weights[means == 0].sum())
    s.provenance.sources = ["tdigest export"]
    return s
