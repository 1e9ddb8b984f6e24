"""NDJSON records: one JSON object per line (the shape structured loggers write).

Field paths (``--field``, ``--by``, ``--time-field``) are ours (``fieldpath``: dots
between keys, ``labels.k\\.dot`` or ``labels["k.dot"]`` for a dot inside a key). A dotted
name may be written nested (``{"event": {"duration": 5}}``) or flat (``{"event.duration":
5}``), even mixed in one file: the readings found in the first lines are all tried.

Without ``--field`` the value is the Elastic Common Schema's ``event.duration``
(nanoseconds, as ECS defines it) when the records have one, else the only field that
holds numbers; ``@timestamp`` (ECS) gives each record's time when no ``--time-field``
names one.

Lines that give no value are counted by why: blank, not JSON, JSON but not an object,
the field null, the field absent, or an array/object where a number should be.

The value may also be text inside a field, as container runtimes wrap each line a
program printed (``{"log": "GET /x dur=12ms\n", "time": ...}``): a ``KEY=`` pair in it
that holds durations is found as in free text (also without ``--field`` when no field
holds numbers), or ``--field log --pattern REGEX`` reads it with a regex.
"""

from __future__ import annotations

import json
import re
from collections import Counter
from dataclasses import dataclass
from typing import Any

import numpy as np
import polars as pl

from ..errors import OgiveError
from . import layout as L
from . import times
from .delimited import MOST, SNIFF_LINES, TIME_NAMES
from .fieldpath import Part, groupings, json_path, parse_path, shown
from .options import ScanOptions
from .text import Extract, choose_key, extract_columns, field_value, value_source
from .values import MISSING_FIELD, looks_numeric

ECS_DURATION = "event.duration"
ECS_TIMESTAMP = "@timestamp"


@dataclass(frozen=True)
class JsonLayout(L.Layout):
    paths: tuple[tuple[str, tuple[str, ...]], ...] = ()
    """(output name, JSONPaths): the first path that finds the field gives it (a dotted
    name written nested in some records and flat in others)."""
    validates_utf8: bool = False
    """Its own ``parse`` wants clean bytes (see :class:`~.layout.Layout`)."""
    null_probe: tuple[str, str] = ("$", "")
    """(JSONPath of the value's parent object, regex that finds the value's key set to
    null in it): tells a null value from a missing one, for the rows without a value."""

    decode: tuple[tuple[str, tuple[tuple[str, ...], ...]], ...] = ()
    """(output name, key paths) when every path is keys only: then one ``json_decode``
    of the line reads all fields at once (measured 1.5-2x faster than a JSONPath match
    per field); empty when a path has an index or two paths clash."""
    inner: Extract | None = None
    """The value is text inside the field, read there by this regex (a ``KEY=`` pair or
    ``--pattern``); rows whose text it does not find give ``inner_reason``."""
    inner_reason: str = MISSING_FIELD

    def parse(
        self, data: bytes, *, numeric: bool = False, literal_quotes: object = None, strict_utf8: bool = False
    ) -> tuple[pl.DataFrame, bool]:
        """polars' NDJSON reader on the whole chunk when it can be trusted to give one row
        per line (measured ~4x faster than a line-by-line decode); else line by line.

        With ``numeric`` the value is first read as Float64 straight from the JSON (as
        the CSV reader does): reading it as text and casting cost a quarter more. A
        chunk whose value is not a plain JSON number everywhere (a string such as
        ``"12ms"``, an object) fails that reading and is read as text; the returned flag
        tells the caller to stop trying.
        """
        df = None
        held = False
        numeric = numeric and self.inner is None
        if self.decode and numeric:
            df = self._read_ndjson(data, numeric=True)
            held = df is not None
        if df is None and self.decode:
            df = self._read_ndjson(data)
        if df is None:
            return self.frame(L.split_lines(data)), False
        return self._inner_value(self._checked(df, data)), held

    def _checked(self, df: pl.DataFrame, data: bytes) -> pl.DataFrame:
        """``df`` with the reasons of the rows that gave no value (read line by line)."""
        v = df.get_column("v")
        numbers = v.dtype == pl.Float64  # a number is never an array or object
        nonscalar = (
            np.zeros(0, dtype=np.intp)
            if numbers
            else L.rows_where(v.str.starts_with("[") | v.str.starts_with("{"))
        )
        missing = L.rows_where(v.is_null())
        if nonscalar.size or missing.size:
            r = self._reasons(L.split_lines(data), v, scalars_checked=numbers)
            if r is not None:
                df = df.with_columns(r)
        return df

    def _inner_value(self, df: pl.DataFrame) -> pl.DataFrame:
        """The value read from the text inside the field, when the layout says so."""
        if self.inner is None:
            return df
        text = df.get_column("v").cast(pl.String)
        (v,) = extract_columns((self.inner,), text)
        df = df.with_columns(v.alias("v"))
        lost = L.rows_where(v.is_null() & text.is_not_null())
        r = L.reason_column(df.height, [(lost, self.inner_reason)])
        if r is None:
            return df
        return df.with_columns(pl.coalesce(df.get_column("r"), r) if "r" in df.columns else r)

    def _read_ndjson(self, data: bytes, *, numeric: bool = False) -> pl.DataFrame | None:
        """The fields by ``pl.read_ndjson`` with a declared schema; None when the chunk
        has a blank line (the reader skips it, so rows would not be lines) or a line
        that is not a JSON object (the reader stops: the slower way names the line).

        Blank lines are found by the row count alone: the reader never gives more rows
        than lines (two objects on a line fail it), so a skipped line always shows as a
        short count. Searching the chunk for ``\n\n`` first cost ~7 ms a 4 MB chunk,
        a third of the reader's own time, with the GIL held."""
        if not data:
            return None
        lines = data.count(b"\n") + (0 if data.endswith(b"\n") else 1)
        try:
            floats = (
                {keys for name, ways in self.decode if name == "v" for keys in ways} if numeric else set()
            )
            doc = pl.read_ndjson(data, schema=_dtype(self._every(), floats).to_schema())
        except pl.exceptions.PolarsError:
            return None
        if doc.height != lines:  # a line of blanks, or anything else the reader passed over
            return None
        return self._columns(doc.to_struct("doc"))

    def frame(self, lines: pl.Series) -> pl.DataFrame:
        df = self._decoded(lines) if self.decode else None
        checked = df is not None  # a decode fails on arrays/objects: no value is one
        if df is None:
            df = pl.DataFrame(
                [_first([lines.str.json_path_match(p) for p in ps]).alias(n) for n, ps in self.paths]
            )
        r = self._reasons(lines, df.get_column("v"), scalars_checked=checked)
        return self._inner_value(df if r is None else df.with_columns(r))

    def _every(self) -> list[tuple[str, ...]]:
        return [keys for _, ways in self.decode for keys in ways]

    def _decoded(self, lines: pl.Series) -> pl.DataFrame | None:
        """All fields by one ``json_decode``; None when a line is not JSON or a field is
        not a scalar (then the JSONPath way reads the chunk and tells which line)."""
        try:
            doc = lines.str.json_decode(_dtype(self._every()))
        except pl.exceptions.PolarsError:
            return None
        return self._columns(doc)

    def _columns(self, doc: pl.Series) -> pl.DataFrame:
        """The v/g/t columns from decoded documents (first reading that finds each)."""
        cols = []
        for name, ways in self.decode:
            found = []
            for keys in ways:
                col = doc
                for key in keys:
                    col = col.struct.field(key)
                found.append(col)
            cols.append(_first(found).alias(name))
        return pl.DataFrame(cols)

    def _reasons(self, lines: pl.Series, v: pl.Series, *, scalars_checked: bool) -> pl.Series | None:
        n = len(lines)
        nonscalar = (
            np.zeros(0, dtype=np.intp)
            if scalars_checked
            else L.rows_where(v.str.starts_with("[") | v.str.starts_with("{"))
        )
        missing = L.rows_where(v.is_null())
        parts: list[tuple[np.ndarray, str]] = [(nonscalar, L.NOT_A_SCALAR)]
        if missing.size:
            sub = lines.gather(missing)
            empty = L.blank(sub)
            doc = sub.str.json_path_match("$")
            is_object = sub.str.strip_chars_start().str.starts_with("{")
            parent_path, null_re = self.null_probe
            parent = doc if parent_path == "$" else sub.str.json_path_match(parent_path)
            null = parent.str.contains(null_re) if null_re else pl.Series([False] * len(sub))
            parts += [
                (missing[L.rows_where(empty)], L.BLANK_LINE),
                (missing[L.rows_where(doc.is_null())], L.NOT_JSON),
                (missing[L.rows_where(~is_object)], L.NOT_AN_OBJECT),
                (missing[L.rows_where(null)], L.NULL_VALUE),
                (missing, MISSING_FIELD),
            ]
        return L.reason_column(n, parts)


def _first(cols: list[pl.Series]) -> pl.Series:
    """Per row, the first non-null of some columns."""
    return cols[0] if len(cols) == 1 else pl.select(pl.coalesce(cols)).to_series()


def _dtype(
    paths: list[tuple[str, ...]], floats: set[tuple[str, ...]] | frozenset[tuple[str, ...]] = frozenset()
) -> pl.Struct:
    """A struct type holding exactly the given key paths (leaves as strings, or Float64
    for the paths in ``floats``)."""
    tree: dict[str, Any] = {}
    for keys in paths:
        node = tree
        for key in keys[:-1]:
            node = node.setdefault(key, {})
        node[keys[-1]] = pl.Float64 if keys in floats else pl.String

    def build(node: dict[str, Any]) -> pl.Struct:
        return pl.Struct({k: build(sub) if isinstance(sub, dict) else sub for k, sub in node.items()})

    return build(tree)


def _decodable(
    pairs: list[tuple[str, list[list[Part]]]],
) -> tuple[tuple[str, tuple[tuple[str, ...], ...]], ...]:
    """The paths for one ``json_decode`` when all are keys only and none is another's
    prefix (a field cannot be both a leaf and an object); else empty."""
    every = [tuple(p) for _, ways in pairs for p in ways]
    if not all(isinstance(k, str) for p in every for k in p):
        return ()
    for a in every:
        for b in every:
            if a != b and b[: len(a)] == a:
                return ()
    if len(set(every)) < len(every):
        return ()
    return tuple((name, tuple(tuple(str(k) for k in p) for p in ways)) for name, ways in pairs)


_MISSING = object()


def _lookup(obj: Any, parts: list[Part]) -> Any:
    for p in parts:
        if isinstance(p, int):
            if not isinstance(obj, list) or p >= len(obj):
                return _MISSING
            obj = obj[p]
        else:
            if not isinstance(obj, dict) or p not in obj:
                return _MISSING
            obj = obj[p]
    return obj


def _ways(spec: str, objects: list[dict[str, Any]]) -> list[list[Part]]:
    """The readings of ``spec`` to try, in order: those found in the sampled objects (most
    often found first), then nested and fully flat; at most three."""
    ways = groupings(parse_path(spec))
    hits = [sum(_lookup(o, w) is not _MISSING for o in objects) for w in ways]
    order = sorted((i for i in range(len(ways)) if hits[i]), key=lambda i: -hits[i])
    for i in (0, len(ways) - 1):
        if i not in order:
            order.append(i)
    return [ways[i] for i in order[:3]]


def _found(objects: list[dict[str, Any]], ways: list[list[Part]]) -> int:
    """Sampled objects in which one of the readings finds the field."""
    return sum(any(_lookup(o, w) is not _MISSING for w in ways) for o in objects)


# ----------------------------------------------------------------- planning


def sample_objects(data: bytes) -> list[dict[str, Any]]:
    """The JSON objects among the first lines (others are skipped here, counted later)."""
    out: list[dict[str, Any]] = []
    for line in data[: 1 << 20].split(b"\n")[:SNIFF_LINES]:
        try:
            obj = json.loads(line.decode("utf-8", errors="replace"))  # bytes not yet cleaned
        except (ValueError, RecursionError):  # nested thousands deep: no record we can read
            continue
        if isinstance(obj, dict):
            out.append(obj)
    return out


def leaves(obj: Any, *, text: bool = False, prefix: tuple[Part, ...] = ()) -> list[tuple[Part, ...]]:
    """Paths to the numbers (or numeric strings, durations) in a parsed object; with
    ``text``, to the strings that are not numbers instead (a wrapped log line)."""
    if isinstance(obj, dict):
        return [p for k, v in obj.items() for p in leaves(v, text=text, prefix=(*prefix, str(k)))]
    if isinstance(obj, str):
        return [prefix] if looks_numeric(obj) != text else []
    number = isinstance(obj, int | float) and not isinstance(obj, bool)
    return [prefix] if number and not text else []


def plan(data: bytes, options: ScanOptions) -> JsonLayout:
    objects = sample_objects(data)
    notes: list[str] = []
    input_unit = None
    spec = options.field or options.column
    inner: Inside | None = None
    if spec:
        vways = _ways(spec, objects)
        inner = _inside(spec, _texts(objects, vways), options)
        notes.append(inner.note if inner else "")
    else:
        try:
            vways, note, input_unit = _choose_value(objects, options)
        except OgiveError:
            found = _text_field(objects, options)
            if found is None:
                raise
            vways, inner = found
            note = inner.note
        notes.append(note)
    chosen: list[tuple[str, list[list[Part]]]] = [("v", vways)]
    if options.by:
        chosen.append(("g", _ways(options.by, objects)))
    time_source = ""
    if options.time_field:
        chosen.append(("t", _ways(options.time_field, objects)))
    elif objects and sum(ECS_TIMESTAMP in o for o in objects) >= MOST * len(objects):
        chosen.append(("t", [[ECS_TIMESTAMP]]))
        time_source = f"field {ECS_TIMESTAMP}"
    elif (key := times.time_key(_top_level(objects, vways), len(objects), MOST)) is not None:
        # bunyan, pino, zap and container runtimes write "time" or "ts" at the top.
        chosen.append(("t", [[key]]))
        time_source = f"field {key}"
    paths = [(name, tuple(json_path(p) for p in ways)) for name, ways in chosen]
    vparts = vways[0]
    *parent, last = vparts
    null_re = ""
    if isinstance(last, str):
        null_re = "[{,]" + re.escape(json.dumps(last)) + ":null[,}]"
    return JsonLayout(
        format="ndjson",
        names=tuple(name for name, _ in paths),
        paths=tuple(paths),
        decode=_decodable(chosen),
        null_probe=(json_path(parent), null_re),
        description=f"field {shown(vparts)}" + (f", {inner.label}" if inner else ""),
        time_source=time_source,
        input_unit=input_unit,
        notes=tuple(n for n in notes if n),
        inner=None if inner is None else inner.extract,
        inner_reason=MISSING_FIELD if inner is None else inner.reason,
    )


@dataclass(frozen=True)
class Inside:
    """How the value is read inside a text field."""

    extract: Extract
    reason: str
    """Why a row whose text does not hold the value gives none."""
    note: str
    label: str
    """For the source line: ``dur= in its text``, ``pattern REGEX``."""


def _texts(objects: list[dict[str, Any]], ways: list[list[Part]]) -> list[str]:
    """The field's sampled values that are text, not numbers."""
    out = []
    for o in objects:
        for w in ways:
            found = _lookup(o, w)
            if found is not _MISSING:
                if isinstance(found, str) and not looks_numeric(found):
                    out.append(found.rstrip("\n"))
                break
    return out


def _inside(spec: str, texts: list[str], options: ScanOptions) -> Inside | None:
    """How the value is read inside the text of field ``spec``: by ``--pattern``, or by the
    one ``KEY=`` in it that holds durations when the field is text; else not (None)."""
    if options.pattern:
        src = value_source(options, texts, what="NDJSON text")
        return Inside(src.extract, L.NO_MATCH, "", src.description)
    if not texts:
        return None
    key, _, durations = choose_key(texts, set())
    if key is None or not durations:
        return None
    note = (
        f"value: the {key}= pairs in the text of field {spec}, the only ones that hold durations "
        "(or read it with --field and --pattern)."
    )
    return Inside(field_value(key, texts), MISSING_FIELD, note, f"{key}= in its text")


def _text_field(
    objects: list[dict[str, Any]], options: ScanOptions
) -> tuple[list[list[Part]], Inside] | None:
    """When no field holds numbers: the one text field (a wrapped log line) holding a
    ``KEY=`` of durations, as (readings, how it is read); None if not exactly one."""
    counts: Counter[tuple[Part, ...]] = Counter()
    for o in objects:
        counts.update(set(leaves(o, text=True)))
    found = []
    for path, count in counts.items():
        if count < MOST * len(objects):
            continue
        ways = [list(path)]
        inner = _inside(shown(ways[0]), _texts(objects, ways), options)
        if inner is not None:
            found.append((ways, inner))
    return found[0] if len(found) == 1 else None


def _top_level(objects: list[dict[str, Any]], value: list[list[Part]]) -> dict[str, list[object]]:
    """The sampled non-null values of the top-level keys named exactly as in
    ``times.TIME_KEYS``, the value's own key left out."""
    found: dict[str, list[object]] = {}
    for key in times.TIME_KEYS:
        vals = [o[key] for o in objects if o.get(key) is not None]
        if vals and [key] not in value:
            found[key] = vals
    return found


def _choose_value(
    objects: list[dict[str, Any]], options: ScanOptions
) -> tuple[list[list[Part]], str, str | None]:
    """ECS ``event.duration`` (ns), else the only numeric field; else an error naming them."""
    if objects:
        ecs = _ways(ECS_DURATION, objects)
        if _found(objects, ecs) >= MOST * len(objects):
            unit = None if options.input_unit else "ns"
            return (
                ecs,
                (
                    f"value: field {ECS_DURATION}, in nanoseconds as the Elastic Common Schema defines it "
                    "(choose another with --field)."
                ),
                unit,
            )
    counts: Counter[tuple[Part, ...]] = Counter()
    for o in objects:
        counts.update(set(leaves(o)))
    skip = {options.by, options.time_field}
    candidates = [
        list(p)
        for p, c in counts.most_common()
        if c >= MOST * len(objects) and shown(list(p)) not in skip and str(p[-1]).lower() not in TIME_NAMES
    ]
    if len(candidates) == 1:
        return (
            [candidates[0]],
            (
                f"value: field {shown(candidates[0])}, the only field that holds numbers (choose another "
                "with --field)."
            ),
            None,
        )
    names = ", ".join(shown(c) for c in candidates[:8]) + (", ..." if len(candidates) > 8 else "")
    if candidates:
        raise OgiveError(
            f"the records are NDJSON and several fields hold numbers ({names}); name the value with --field."
        )
    raise OgiveError(
        "the records are NDJSON; name the value with --field (a dotted path such as timing.total_ms)."
    )
