"""Free-text log lines: a regex, ``key=value`` pairs, and a leading time stamp.

The value is found by ``--pattern`` (a regex whose single group, or group named
``value``, captures the number) or by ``--field KEY``, which reads ``KEY=VALUE`` pairs
(``dur=12ms``, ``took="1.5 s"``) wherever they sit in the line. Without either, a line
whose pairs include exactly one key holding durations (``dur=12ms``) gives that key.

Time: a named group of the pattern, a ``KEY=`` pair, or, when the lines begin with
an ISO 8601 or epoch time stamp (optionally in brackets), that stamp: it is used for
the time range without any option, and ``--time-field`` with any name that is not a
group or key takes it too, so no regex is needed for the usual layout.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

import polars as pl

from ..errors import OgiveError
from . import anchor, times
from . import layout as L
from .delimited import DECIMAL_COMMA_NOTE, MOST, SNIFF_LINES, comma_to_point, decimal_comma
from .options import ScanOptions
from .values import MISSING_FIELD, looks_numeric

LEADING_TIME = rf"^\[?\s*({times.ISO_LEADING}|{times.EPOCH_LEADING})\]?(?:[\s,;|]|$)"
"""A time stamp at the very start of a line, as one group."""
_BARE = r"[^\s,;\"\]\)}]"
"""A character of an unquoted value: a space, comma or semicolon ends it (pairs are
separated so), as does a closing bracket or quote around the pair."""
_DECIMAL = rf",\d{_BARE}*"
"""...except a comma followed by a digit: a decimal comma (``dur=12,5ms``) or an ISO 8601
fraction (``ts=10:00:00,123Z``). Cut there, ``12,5ms`` was read as 12 without a word."""
_PAIR = rf"(?:^|[^\w.@-])([A-Za-z_@][\w.@-]*)=(\"[^\"]*\"|{_BARE}*(?:{_DECIMAL})?)"
_VALUE_CHARS = rf"(?:\"([^\"]*)\"|({_BARE}+(?:{_DECIMAL})?))"


def key_value_regex(key: str) -> str:
    """A regex whose groups 1 (quoted) or 2 (bare) capture the value of ``key=``."""
    return rf"(?:^|[^\w.@-]){re.escape(key)}={_VALUE_CHARS}"


def field_value(key: str, lines: list[str]) -> Extract:
    """The value column from ``key=`` pairs, read with a decimal comma when the sample
    lines write it so (``dur=12,5ms``; the rule of :func:`ogive.read.delimited.decimal_comma`)."""
    comma = decimal_comma([v.strip('"') for v in pairs(lines).get(key, [])], ";")
    return Extract("v", key_value_regex(key), (1, 2), decimal_comma=comma)


@dataclass(frozen=True)
class Extract:
    """One output column: the first non-null of some capture groups of a regex."""

    name: str
    regex: str
    groups: tuple[int, ...]
    fast: str | None = None
    """An anchored twin of ``regex`` that finds the same groups at less cost
    (:mod:`ogive.read.anchor`); lines it misses are read with ``regex`` itself."""
    decimal_comma: bool = False
    """The column's numbers are written with a decimal comma: read with a point."""


def extract_columns(extracts: tuple[Extract, ...] | list[Extract], lines: pl.Series) -> list[pl.Series]:
    """The columns of ``extracts``, each regex run once over the lines.

    Why: a pattern naming both the value and the time (``(?P<ts>...)...(?P<value>...)``)
    gave two extracts of one regex, each a full regex pass over the chunk; with a
    pattern that is not a plain literal the pass is most of the scan's cost (measured:
    ~0.5 us a line for such a pattern against ~0.13 for ``rt=([0-9.]+)ms``). Extracts
    sharing a regex now read their groups from one ``str.extract_groups``, through its
    anchored twin when it has one (``Extract.fast``).

    The regexes run as expressions of one ``select`` on the lines as a frame: a Series
    method is a sequential query of its own (measured: ``rt=([0-9.]+)ms`` over a 4 MB
    chunk 3.7 ms as ``Series.str.extract``, 2.8 ms in a frame's select).
    """
    shared: dict[str, list[Extract]] = {}
    for e in extracts:
        shared.setdefault(e.regex, []).append(e)
    runs = [(group, group[0].fast or regex) for regex, group in shared.items()]
    out = _run(runs, lines)
    for group, run in runs:
        if run == group[0].regex:
            continue
        # Lines the twin missed may hold a match further on: the pattern itself reads them.
        names = [e.name for e in group]
        missed = pl.all_horizontal([out[n].is_null() for n in names]) & lines.is_not_null()
        idx = L.rows_where(pl.select(missed).to_series())
        if idx.size:
            again = _run([(group, group[0].regex)], lines.gather(idx))
            for n in names:
                out[n] = out[n].scatter(idx, again[n])
    return [comma_to_point(out[e.name]) if e.decimal_comma else out[e.name] for e in extracts]


def _run(runs: list[tuple[list[Extract], str]], lines: pl.Series) -> dict[str, pl.Series]:
    """Each group of extracts read with its regex, in one ``select``: name -> column."""
    first = pl.first()
    exprs: list[pl.Expr] = []
    for i, (group, regex) in enumerate(runs):
        if len(group) == 1 and len(group[0].groups) == 1:
            exprs.append(first.str.extract(regex, group[0].groups[0]).alias(group[0].name))
        else:
            exprs.append(first.str.extract_groups(regex).alias(f"groups {i}"))
    frame = lines.to_frame().select(exprs)
    out: dict[str, pl.Series] = {}
    for i, (group, _) in enumerate(runs):
        if f"groups {i}" not in frame.columns:
            out[group[0].name] = frame.get_column(group[0].name)
            continue
        found = frame.get_column(f"groups {i}")
        fields = found.struct.fields
        for e in group:
            parts = [found.struct.field(fields[g - 1]) for g in e.groups]
            col = parts[0] if len(parts) == 1 else pl.select(pl.coalesce(parts)).to_series()
            out[e.name] = col.alias(e.name)
    return out


@dataclass(frozen=True)
class TextLayout(L.Layout):
    extracts: tuple[Extract, ...] = ()
    missing_reason: str = L.NO_MATCH
    """Why a line without a value is skipped: the regex did not match, or the key was absent."""

    def frame(self, lines: pl.Series) -> pl.DataFrame:
        df = pl.DataFrame(extract_columns(self.extracts, lines))
        missing = L.rows_where(df.get_column("v").is_null())
        if not missing.size:
            return df
        empty = missing[L.rows_where(L.blank(lines.gather(missing)))]
        r = L.reason_column(len(lines), [(empty, L.BLANK_LINE), (missing, self.missing_reason)])
        return df if r is None else df.with_columns(r)


def sample_lines(data: bytes) -> list[str]:
    text = data[: 1 << 16].decode("utf-8", errors="replace")
    lines = [ln.rstrip("\r") for ln in text.split("\n")[:SNIFF_LINES]]
    return [ln for ln in lines if ln.strip()]


def leading_time(lines: list[str]) -> bool:
    """Whether at least half the lines begin with an ISO 8601 or epoch time stamp (the
    rest may be continuation lines: stack traces, wrapped messages)."""
    rx = re.compile(LEADING_TIME)
    return bool(lines) and sum(bool(rx.match(ln)) for ln in lines) >= 0.5 * len(lines)


def pairs(lines: list[str]) -> dict[str, list[str]]:
    """``key=value`` pairs of the sample lines: the values seen per key."""
    rx = re.compile(_PAIR)
    seen: dict[str, list[str]] = {}
    for ln in lines:
        for key, value in rx.findall(ln):
            value = value.strip('"')
            if value:
                seen.setdefault(key, []).append(value)
    return seen


def choose_key(lines: list[str], exclude: set[str]) -> tuple[str | None, list[str], bool]:
    """The one key whose values are durations (``12ms``) wherever it appears, in at least
    a tenth of the lines (syslog mixes many programs); else the one key that holds
    numbers in most lines. Also the numeric keys seen, for an error message, and whether
    the key chosen holds durations (for the note). Values with a decimal comma
    (``12,5ms``) count as numbers where the key writes them so."""
    found = pairs(lines)
    durations: list[str] = []
    numbers: list[str] = []
    for key, vals in found.items():
        if key in exclude or key.lower() in ("ts", "time", "timestamp"):
            continue
        if decimal_comma(vals, ";"):
            vals = [v.replace(",", ".") for v in vals]
        numeric = [v for v in vals if looks_numeric(v)]
        if len(numeric) >= MOST * len(lines):
            numbers.append(key)
        suffixed = sum(not _plain_number(v) for v in numeric)
        if suffixed >= MOST * len(vals) and len(vals) >= max(2, 0.1 * len(lines)):
            durations.append(key)
    if len(durations) == 1:
        return durations[0], numbers, True
    if not durations and len(numbers) == 1:
        return numbers[0], numbers, False
    return None, sorted(set(numbers) | set(durations)), False


def _plain_number(text: str) -> bool:
    try:
        float(text)
    except ValueError:
        return False
    return True


@dataclass(frozen=True)
class ValueSource:
    """Where the value (and named groups) come from, for any line format."""

    extract: Extract
    named: dict[str, int]
    """Named groups of --pattern (name -> index)."""
    pattern: str
    description: str
    missing_reason: str
    notes: tuple[str, ...] = ()
    """What the user must hear of the choices made (the key taken, a decimal comma)."""

    def group(self, name: str, group: str) -> Extract:
        """Column ``name`` from the pattern's named ``group``: read in the same regex pass
        as the value (and through the same anchored twin)."""
        return Extract(name, self.pattern, (self.named[group],), self.extract.fast)


def value_source(options: ScanOptions, lines: list[str], *, what: str = "free text") -> ValueSource:
    """The value from --pattern, from --field KEY (``KEY=VALUE`` pairs), or else the one
    key whose pairs hold durations; an error saying what to give when none fits."""
    pattern = options.pattern
    if pattern:
        compiled = _compile(pattern)
        named = dict(compiled.groupindex)
        if "value" in named:
            vidx = named["value"]
        elif compiled.groups == 1:
            vidx = 1
        else:
            raise OgiveError(
                f"the --pattern regex has {compiled.groups} groups; use exactly one, "
                "or name the number (?P<value>...)."
            )
        value = Extract("v", pattern, (vidx,), anchor.anchored_twin(pattern, lines))
        return ValueSource(value, named, pattern, f"pattern {pattern}", L.NO_MATCH)
    key = options.field or options.column
    note = ""
    if key is None:
        key, numeric, durations = choose_key(lines, {k for k in (options.by, options.time_field) if k})
        if key is None:
            found = f" (keys with numbers: {', '.join(numeric[:8])})" if numeric else ""
            raise OgiveError(
                f"the records look like {what}; give --field KEY for KEY=VALUE pairs{found}, or "
                "--pattern with a regex whose group captures the number (or --format to say what they are)."
            )
        held = "durations" if durations else "numbers"
        note = f"value: the {key}= pairs, the only ones that hold {held} (choose another with --field)."
    value = field_value(key, lines)
    notes = tuple(n for n in (note, DECIMAL_COMMA_NOTE if value.decimal_comma else "") if n)
    return ValueSource(value, {}, "", f"field {key}", MISSING_FIELD, notes)


NEVER = r"$x(x)"
"""A regex that matches no line: for a source whose first lines are all blank."""


def plan(data: bytes, options: ScanOptions) -> TextLayout:
    lines = sample_lines(data)
    if not lines and not (options.pattern or options.field or options.column):
        # Nothing but blank lines to go by: each line is counted blank, and the scan says
        # there were no usable values (as for an empty file), instead of asking for a regex.
        return TextLayout(format="text", extracts=(Extract("v", NEVER, (1,)),), description="no records")
    src = value_source(options, lines)
    extracts = [src.extract]
    named = src.named
    starts_with_time = leading_time(lines)
    if options.by is not None:
        if options.by in named:
            extracts.append(src.group("g", options.by))
        else:
            extracts.append(Extract("g", key_value_regex(options.by), (1, 2)))
    spec = options.time_field
    time_source = ""
    if spec is not None:
        if spec in named:
            extracts.append(src.group("t", spec))
        elif spec in pairs(lines):
            extracts.append(Extract("t", key_value_regex(spec), (1, 2)))
        elif starts_with_time:
            extracts.append(Extract("t", LEADING_TIME, (1,)))
        else:
            raise OgiveError(
                f"--time-field {spec!r} is not a named group (?P<{spec}>...) of --pattern nor a "
                f"{spec}=VALUE pair of the lines, and the lines do not begin with a time stamp."
            )
    elif starts_with_time:
        extracts.append(Extract("t", LEADING_TIME, (1,)))
        time_source = "the time stamp that begins each line"
    elif not options.pattern and (key := times.time_key(pairs(lines), len(lines), MOST)) is not None:
        # logfmt's ts=: a time=12ms is no moment (times.holds_moments tells).
        extracts.append(Extract("t", key_value_regex(key), (1, 2)))
        time_source = f"the {key}= pairs"
    return TextLayout(
        format="text",
        names=tuple(e.name for e in extracts),
        extracts=tuple(extracts),
        missing_reason=src.missing_reason,
        description=src.description,
        time_source=time_source,
        notes=src.notes,
    )


def _compile(pattern: str) -> re.Pattern[str]:
    try:
        compiled = re.compile(pattern)
    except re.error as exc:
        raise OgiveError(f"the --pattern regex does not compile: {exc}.") from None
    try:
        pl.Series([""], dtype=pl.String).str.extract(pattern, 0)
    except pl.exceptions.PolarsError as exc:
        raise OgiveError(
            f"the --pattern regex is not accepted by the parser: {str(exc).splitlines()[0][:200]}."
        ) from None
    return compiled
