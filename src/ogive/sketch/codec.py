"""The ``.ogive`` file format: JSON with arrays, versioned, checksummed.

Bytes in, bytes out: the caller does the (atomic) file I/O. Loading parses JSON and
checks every field's type and shape; it never evaluates or unpickles anything.

Format 2 (the current one), top level::

    {
      "format": "ogive-sketch-set",
      "version": 2,
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

A sum too large for a float64 (values near 1.8e308) is written divided by
``2 ** sum_exponent``; the key is there only then, so other files are unchanged.

Older files of the same version have ``pure`` (0/1) instead of ``min``/``max`` and may
have ``merge_slack``; they load, with each mixed centroid's range taken to reach its
neighbours' means (``runs.neighbour_ranges``) and the slack no longer needed.
Version 2 adds binned distributions (telemetry histograms, ``binned.py``): a SKETCH
entry with ``"kind": "binned"`` holds ``unit``, ``count``, ``provenance`` as above and
``parts``, each one bucket layout as its spec writes it (``binned_codec.py`` lists the
fields). An entry without ``kind`` is a t-digest sketch exactly as in version 1, so a
version-1 file loads unchanged; version 2 is always written (an older ogive refuses
the file with "written by a newer ogive" instead of misreading a binned entry).

The canonical JSON for the checksum is ``json.dumps(obj, sort_keys=True,
separators=(",", ":"))`` of the document without its ``checksum`` key.
"""

from __future__ import annotations

import hashlib
import json
import math
from typing import Any, NamedTuple

import numpy as np

from .. import __version__
from .binned import KIND, Binned
from .binned_codec import binned_from_dict, binned_to_dict
from .digest import DEFAULT_COMPRESSION
from .fields import array_field, int_field, provenance_from_dict, provenance_to_dict, tallies_to_dict
from .sketch import Sketch, SketchSet, SkipTally

FORMAT = "ogive-sketch-set"
VERSION = 2
"""Written in every file; files of versions 1 and 2 are read."""


class SketchFormatError(ValueError):
    """The bytes are not a sketch file this version can read; the message says why."""


# ---------------------------------------------------------------------- writing
def entry_to_dict(s: Sketch | Binned) -> dict[str, Any]:
    """One sketch set entry: a t-digest sketch, or a binned distribution (version 2)."""
    if isinstance(s, Binned):
        return binned_to_dict(s)
    return sketch_to_dict(s)


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
        **({"sum_exponent": s.sum_exponent} if s.sum_exponent else {}),
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
        "provenance": provenance_to_dict(p),
    }


def _floats(a: np.ndarray) -> list[float | int]:
    """Integral values as ints: shorter files, same numbers.

    Decided with numpy, not per value in Python: that loop was a fifth of the time of
    writing a file of 200 groups.
    """
    a = np.asarray(a, dtype=np.float64)
    whole = (np.floor(a) == a) & (np.abs(a) < 2**53)
    if whole.all():
        return a.astype(np.int64).tolist()  # type: ignore[no-any-return]
    out: list[float | int] = a.tolist()
    for i in np.flatnonzero(whole).tolist():
        out[i] = int(out[i])
    return out


def dumps(sketches: SketchSet) -> bytes:
    # Each sketch is turned to text as soon as its dict is built, so only one sketch's
    # numbers are ever held as Python objects (they cost ~8 times the text they make).
    entries = {name: _Text(*_encode(entry_to_dict(s), 2)) for name, s in sketches.sketches.items()}
    doc: dict[str, Any] = {
        "format": FORMAT,
        "version": VERSION,
        "writer": f"ogive {__version__}",
        "sketches": entries,
    }
    if sketches.unassigned:
        doc["unassigned"] = tallies_to_dict(sketches.unassigned)
    canonical, pretty = _encode(doc, 0)
    checksum = "sha256:" + hashlib.sha256(canonical.encode()).hexdigest()
    return (pretty[:-2] + f',\n  "checksum": {json.dumps(checksum)}\n}}' + "\n").encode()


class _Text(NamedTuple):
    """A value already encoded by ``_encode``: (canonical, pretty)."""

    canonical: str
    pretty: str


def _canonical(doc: dict[str, Any]) -> bytes:
    body = {k: v for k, v in doc.items() if k != "checksum"}
    return json.dumps(body, sort_keys=True, separators=(",", ":"), allow_nan=False).encode()


def _encode(obj: Any, depth: int) -> tuple[str, str]:
    """(canonical, pretty) JSON of ``obj``, each array's numbers turned to text once.

    Canonical is ``_canonical``'s form (sorted keys, no spaces: what the checksum
    covers); pretty has indented objects and arrays on one line, readable in a pager,
    still compact. Encoding the same ~10^3 floats per sketch twice, once per form, was
    half the time of writing a file of many groups.
    """
    if isinstance(obj, _Text):
        return obj.canonical, obj.pretty
    if not (isinstance(obj, dict) and obj):
        pretty = json.dumps(obj, separators=(",", ":"), allow_nan=False)
        # Without a "{" in its text it holds no object, so sorting keys changes nothing.
        if "{" not in pretty:
            return pretty, pretty
        return json.dumps(obj, sort_keys=True, separators=(",", ":"), allow_nan=False), pretty
    pad = ",\n" + "  " * (depth + 1)
    parts = {k: _encode(v, depth + 1) for k, v in obj.items()}
    keys = {k: json.dumps(k) for k in obj}
    # Flat lists of pieces, joined once: no piece is copied into an intermediate string.
    c_pieces = [p for k in sorted(obj) for p in (",", keys[k], ":", parts[k][0])]
    p_pieces = [p for k in obj for p in (pad, keys[k], ": ", parts[k][1])]
    c_pieces[0], p_pieces[0] = "{", "{" + pad[1:]
    return "".join((*c_pieces, "}")), "".join((*p_pieces, "\n", "  " * depth, "}"))


# ---------------------------------------------------------------------- reading
class MissingSketch(SketchFormatError):
    """The file holds no sketch of the name asked for; ``names`` are the ones it holds."""

    def __init__(self, names: list[str]) -> None:
        super().__init__("no such sketch in the file")
        self.names = names


def loads(data: bytes, only: str | None = None) -> SketchSet:
    """The sketch set in ``data``; with ``only``, just that sketch (``MissingSketch`` if absent).

    The checksum covers the whole file, so every byte is parsed and checked either way
    (format 2 has no index); ``only`` saves building the other sketches, which is most
    of the time for a file of many groups (10^5 groups, 126 MB: 70 s -> about 8 s).
    """
    try:
        doc = json.loads(data)
    except (UnicodeDecodeError, json.JSONDecodeError) as exc:
        raise SketchFormatError(
            f"not an ogive sketch file (not valid JSON: {exc.msg if hasattr(exc, 'msg') else exc})."
        ) from None
    except RecursionError:  # arrays or objects nested thousands deep: no sketch file is
        raise SketchFormatError(
            "not an ogive sketch file (JSON nested too deep; a sketch file nests four levels)."
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
    if only is not None and only not in raw:
        raise MissingSketch(list(raw))
    for name, body in raw.items():
        if only is not None and name != only:
            continue
        try:
            out.sketches[name] = entry_from_dict(body, version)
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


def entry_from_dict(body: Any, version: int = VERSION) -> Sketch | Binned:
    """One entry of the ``sketches`` object: a binned distribution (version 2) or a sketch."""
    kind = body.get("kind", "tdigest") if isinstance(body, dict) else None
    if kind == KIND:
        if version < 2:
            raise ValueError("a binned distribution in a version-1 file (version 1 has none)")
        return binned_from_dict(body)
    if kind != "tdigest":
        raise ValueError(f"unknown kind {kind!r} (this ogive reads 'tdigest' and 'binned')")
    return sketch_from_dict(body)


def sketch_from_dict(body: Any) -> Sketch:
    if not isinstance(body, dict):
        raise ValueError("a sketch must be an object")
    for name in ("unit", "scale"):  # str() would read null as the unit "None" (found by fuzzing)
        if not isinstance(body[name], str):
            raise ValueError(f"'{name}' must be a string")
    if not isinstance(body["compression"], (int, float)) or isinstance(body["compression"], bool):
        raise ValueError("'compression' must be a number")
    s = Sketch(
        str(body["unit"]),
        compression=float(body["compression"]),
        tail_size=int_field(body, "tail_size"),
        scale=str(body["scale"]),
    )
    cents = body["centroids"]
    if not isinstance(cents, dict):
        raise ValueError("'centroids' must be an object of arrays")
    if not isinstance(body["provenance"], dict):
        raise ValueError("'provenance' must be an object")
    means, weights = array_field(cents, "mean"), array_field(cents, "weight")
    if "min" in cents or "pure" not in cents:
        lows, highs = array_field(cents, "min"), array_field(cents, "max")
        if not (means.size == weights.size == lows.size == highs.size):
            raise ValueError("centroid arrays differ in length")
        if np.any(lows > highs):
            raise ValueError("a centroid's 'min' is above its 'max'")
        pure = lows == highs
        # A file edited by hand may put a mean outside its range; widening the
        # range to it keeps the range a bound.
        ranges: tuple[np.ndarray, np.ndarray] | None = (np.minimum(lows, means), np.maximum(highs, means))
    else:  # files written before centroids kept their ranges
        pure = array_field(cents, "pure").astype(bool)
        if not (means.size == weights.size == pure.size):
            raise ValueError("centroid arrays differ in length")
        ranges = None
    if np.any(np.diff(means) < 0) or np.any(weights <= 0):
        raise ValueError("centroids must be sorted with positive weights")
    s.count = int_field(body, "count")
    if not math.isclose(weights.sum(), s.count, rel_tol=1e-9, abs_tol=0.5):
        raise ValueError("centroid weights do not add up to 'count'")
    if ranges is None:
        s.digest.add_centroids(means, weights, pure, ranges)
    else:
        s.digest.restore(means, weights, pure.astype(bool), ranges[0], ranges[1])
    s.low, s.high = array_field(body, "low"), array_field(body, "high")
    if s.low.size > s.tail_size or s.high.size > s.tail_size or s.low.size > s.count:
        raise ValueError("the exact tails are longer than the sketch allows")
    exponent = body.get("sum_exponent", 0)
    if not isinstance(exponent, int) or isinstance(exponent, bool) or not 0 <= exponent <= 1100:
        raise ValueError("'sum_exponent' must be a whole number from 0 to 1100")
    s.set_sum(float(body["sum"]), exponent)
    for name in ("nan_count", "inf_count", "negative_count", "zero_count"):
        setattr(s, name, int_field(body, name))
    slack = body.get("merge_slack", 0.0)  # older files: a merge allowance the ranges replace
    if not isinstance(slack, (int, float)) or isinstance(slack, bool) or not 0 <= slack < math.inf:
        raise ValueError("'merge_slack' must be a non-negative number")
    s.provenance = provenance_from_dict(body["provenance"])
    s.check()  # a checksum proves the bytes arrived; this proves they make sense
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
    if not np.isfinite(means).all() or not np.isfinite(weights).all() or np.any(weights <= 0):
        raise SketchFormatError("a tdigest centroid has a non-finite mean or weight, or a weight <= 0.")
    with np.errstate(over="ignore"):
        too_many = not float(weights.sum()) < 2.0**53
    if too_many:
        raise SketchFormatError("the tdigest centroid weights add up to more values than a file can hold.")
    # Room for every imported centroid: regrouping them at that package's nominal
    # compression (1 / delta) would throw away most of its resolution, because it
    # keeps far more centroids per unit of compression than the k1 scale does.
    s = Sketch(unit, compression=max(DEFAULT_COMPRESSION, 2.0 * means.size), tail_size=1)
    s.digest.add_centroids(means, weights)
    s.count = round(float(weights.sum()))
    with np.errstate(over="ignore"):
        total = float((means * weights).sum())
    if math.isfinite(total):
        s.add_sum(total, 0)
    else:  # means near the float limit: kept scaled (Sketch.add_sum)
        s.add_sum(float((np.ldexp(means, -64) * weights).sum()), 64)
    s.negative_count = int(weights[means < 0].sum())
    s.zero_count = int(weights[means == 0].sum())
    s.provenance.sources = ["tdigest export"]
    return s
