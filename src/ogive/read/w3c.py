"""W3C extended log files: the fields named by a ``#Fields:`` directive, one entry a line.

The format is the W3C Working Draft "Extended Log File Format" (WD-logfile-960323, P. M.
Hallam-Baker and B. Behlendorf, 1996). Lines that begin with ``#`` are directives
(``#Version:``, ``#Fields:``, ``#Software:``, ``#Date:``, ``#Remark:``); every other line
is an entry holding the fields ``#Fields:`` lists, in that order, separated by white
space, with ``-`` for a field that has no value. Microsoft IIS writes it with single
spaces (a space inside a field becomes ``+``) and writes the directive block again at
every restart; CDN log exports write it with tabs.

Read without options: the value is ``time-taken``, the time ``date`` and ``time`` (UTC in
the draft). The draft gives ``time-taken`` in seconds; IIS writes whole milliseconds and
names itself in ``#Software:``, so an IIS file is read in milliseconds and any other in
seconds, with a note saying which (``--input-unit`` says otherwise). ``--field`` and
``--by`` take any field the directive names (``sc-status``, ``cs-uri-stem``, ``s-ip``,
``cs(User-Agent)``).

Directive lines are counted by the reason ``w3c_directive`` (they are the format's own
lines, so ``--strict`` does not stop at them). A later ``#Fields:`` that lists other
fields would make every entry after it read from the wrong places, so it stops the scan
with a one-line error instead.
"""

from __future__ import annotations

from dataclasses import dataclass

import polars as pl

from ..errors import OgiveError
from . import layout as L
from .delimited import MOST
from .encoding import NotUtf8, says_not_utf8
from .options import ScanOptions
from .text import sample_lines
from .values import MISSING_FIELD

FIELDS = "#Fields:"
DIRECTIVE = L.W3C_DIRECTIVE
VALUE_FIELD = "time-taken"
"""The draft's field for the time a transaction took (seconds; IIS: milliseconds)."""
IIS = "Microsoft Internet Information Services"
"""What IIS writes in its ``#Software:`` directive."""
TIME_NAMES = ("time", "date", "timestamp")
"""``--time-field`` names that mean the entry's own ``date`` and ``time``."""
_QUOTED = r'"(?:[^"]|"")*"'
"""The draft's quoted string: ``"..."`` with ``""`` for a quote inside."""


def directive_fields(line: str) -> tuple[str, ...] | None:
    """The field names of a ``#Fields:`` directive; None for any other line."""
    if not line.startswith(FIELDS):
        return None
    return tuple(line[len(FIELDS) :].split())


def _leading_directives(lines: list[str]) -> list[str]:
    out = []
    for ln in lines:
        if not ln.startswith("#"):
            break
        out.append(ln)
    return out


def looks_like(lines: list[str]) -> bool:
    """The sample opens with a directive block that holds a ``#Fields:`` line."""
    return any(directive_fields(ln) for ln in _leading_directives(lines))


def line_regex(count: int, wanted: dict[int, str], *, tabs: bool) -> str:
    """An entry of ``count`` fields as an anchored regex; field ``i`` captures as group
    ``wanted[i]`` unless it is ``-`` (no value: the group is then null, the draft's
    meaning). Fields not wanted do not capture (captures cost time).

    One separator between fields and no empty field (the draft writes ``-`` for no
    value), as the CSV reader of the fast path (:meth:`W3cLayout.parse`) sees entries:
    a line is the same entry, or the same bad record, whichever path reads it.
    """
    sep = "\t" if tabs else " "
    field = f"(?:{_QUOTED}|[^{sep}]+)"
    parts = [f"(?:-|(?P<{wanted[i]}>{field}))" if i in wanted else field for i in range(count)]
    return "^" + sep.join(parts) + f"{sep}*$"  # separators may trail (the CSV reader's empty fields)


def unquote(col: pl.Series) -> pl.Series:
    """The draft's quoted strings as their text (quotes off, a doubled quote inside made
    single); the rest as they are. A cheap test first: IIS and CDN logs never quote."""
    quoted = col.str.starts_with('"').fill_null(False)
    if not quoted.any():
        return col
    inner = col.str.slice(1, col.str.len_chars() - 2).str.replace_all('""', '"', literal=True)
    return pl.select(pl.when(quoted).then(inner).otherwise(col)).to_series().alias(col.name)


@dataclass(frozen=True)
class W3cLayout(L.Layout):
    fields: tuple[str, ...] = ()
    """The field names of the ``#Fields:`` directive the layout was planned from."""
    regex: str = ""
    plain: str = ""
    """``regex`` without captures: the match test for rows that gave no value."""
    columns: tuple[tuple[str, tuple[int, ...]], ...] = ()
    """(output name, field positions): two fields (``date``, ``time``) are joined by a
    space. A field may feed two columns (``--by date`` beside the time); the regex
    captures field ``i`` as group ``f{i}``."""
    separator: str = " "

    def parse(
        self, data: bytes, *, numeric: bool = False, literal_quotes: object = None, strict_utf8: bool = False
    ) -> tuple[pl.DataFrame, bool]:
        """Chunks of plain entries are read by polars' CSV reader (a 300 MB IIS log:
        280 MB/s against 35 by the line regex alone); a chunk with a directive, a blank
        line or a quote, each rare in these logs, is read line by line with the regex,
        which reads any entry the same way. ``numeric``: the value field is first tried
        as numbers."""
        if b'"' not in data:  # quoted strings hold separators: the regex reads them
            for as_numbers in (True, False) if numeric else (False,):
                try:
                    df = self._entries(data, numeric=as_numbers, strict_utf8=strict_utf8)
                except pl.exceptions.PolarsError as exc:
                    if strict_utf8 and says_not_utf8(exc):
                        raise NotUtf8 from None
                    continue
                if df is not None:
                    return df, as_numbers
                break
        # Whether the value reads as numbers is not known from this chunk: keep trying.
        return super().parse(data, strict_utf8=strict_utf8)[0], numeric

    def _entries(self, data: bytes, *, numeric: bool, strict_utf8: bool) -> pl.DataFrame | None:
        """The frame of a chunk of entries; None when it holds a directive or a blank line
        (the first field starts with ``#``; a row of nulls), which the regex reads.

        Looked for in the parsed frame, not the bytes: searching 4 MB for line starts
        took 16 ms with the GIL held, a fifth of the scan. Without quotes polars' reader
        gives one row per line. Two fields past the ones read tell a whole entry: the
        last field present and none after it (an entry cut short, or with a field too
        many, is a bad record, as for the regex).
        """
        n = len(self.fields)
        used = {i for _, at in self.columns for i in at}
        vi = dict(self.columns)["v"][0]
        numeric = numeric and sum(vi in at for _, at in self.columns) == 1  # no text column shares it
        read = sorted({0, *used, n - 1, n})
        schema: dict[str, pl.DataType] = {f"c{i}": pl.String() for i in range(n + 1)}
        if numeric:
            schema[f"c{vi}"] = pl.Float64()
        df = pl.read_csv(
            data,
            has_header=False,
            separator=self.separator,
            quote_char=None,
            columns=read,
            schema=schema,
            missing_columns="insert",
            truncate_ragged_lines=True,
            raise_if_empty=False,
            encoding="utf8" if strict_utf8 else "utf8-lossy",
        )
        fields = [pl.col(f"c{i}") for i in read if i < n]
        whole = pl.all_horizontal(f.is_not_null() for f in fields) & pl.col(f"c{n}").is_null()
        odd = pl.col("c0").str.starts_with("#") | pl.all_horizontal(pl.col(f"c{i}").is_null() for i in read)

        def field(i: int) -> pl.Expr:
            col = pl.col(f"c{i}")
            kept = col if numeric and i == vi else pl.when(col != "-").then(col)
            return pl.when(whole).then(kept)

        out = []
        for name, at in self.columns:
            parts = [field(i) for i in at]
            out.append((parts[0] if len(parts) == 1 else pl.concat_str(parts, separator=" ")).alias(name))
        frame = df.select(*out, whole.alias("whole"), odd.any().alias("odd"))
        if frame.height and frame.item(0, "odd"):
            return None
        if frame.get_column("v").null_count() == 0:
            return frame.select(self.names)
        reason = (
            pl.when(~pl.col("whole"))
            .then(pl.lit(L.BAD_RECORD))
            .when(pl.col("v").is_null())
            .then(pl.lit(MISSING_FIELD))
        )
        return frame.select(*self.names, reason.alias("r"))

    def frame(self, lines: pl.Series) -> pl.DataFrame:
        directive = lines.str.starts_with("#").fill_null(False)
        directives = L.rows_where(directive)
        if directives.size:
            self._check_fields(lines.gather(directives))
        found = lines.str.extract_groups(self.regex)
        cols = []
        for name, at in self.columns:
            parts = [found.struct.field(f"f{i}") for i in at]
            col = parts[0] if len(parts) == 1 else pl.select(pl.concat_str(parts, separator=" ")).to_series()
            cols.append(unquote(col).alias(name))
        df = pl.DataFrame(cols).select(self.names)
        missing = L.rows_where(df.get_column("v").is_null())
        if not missing.size:
            return df
        left = lines.gather(missing)
        unmatched = missing[L.rows_where(~left.str.contains(self.plain).fill_null(False))]
        empty = unmatched[L.rows_where(L.blank(lines.gather(unmatched)))] if unmatched.size else unmatched
        r = L.reason_column(
            len(lines),
            [
                (empty, L.BLANK_LINE),
                (directives, DIRECTIVE),
                (unmatched, L.BAD_RECORD),
                (missing, MISSING_FIELD),
            ],
        )
        return df if r is None else df.with_columns(r)

    def _check_fields(self, directives: pl.Series) -> None:
        """Stop at a ``#Fields:`` directive that lists other fields than the plan's."""
        for line in directives.filter(directives.str.starts_with(FIELDS)).unique().to_list():
            names = directive_fields(line.rstrip())
            if names is not None and names != self.fields:
                raise OgiveError(
                    f"a later #Fields: directive lists other fields ({' '.join(names)}) than the first "
                    f"({' '.join(self.fields)}); ogive reads one field list per scan: scan the files, or "
                    "the parts, written under each list separately."
                )


def _find(name: str, fields: tuple[str, ...], option: str) -> int:
    """The position of field ``name``; an error naming the fields (and the one meant, when
    only its case differs: the name labels the sketches, so it is not guessed)."""
    if name in fields:
        return fields.index(name)
    folded = [f for f in fields if f.lower() == name.lower()]
    meant = f"; did you mean {folded[0]}?" if len(folded) == 1 else ""
    raise OgiveError(
        f"{option} {name!r}: the #Fields: directive has no such field (it has: {' '.join(fields)}){meant}"
    )


def plan(data: bytes, options: ScanOptions) -> W3cLayout:
    lines = sample_lines(data)
    head = _leading_directives(lines)
    fields = next((f for f in map(directive_fields, head) if f), None)
    if not fields:
        raise OgiveError("the W3C extended log has no #Fields: directive before its first entry.")
    if len(set(fields)) != len(fields):
        raise OgiveError(f"the #Fields: directive names a field twice ({' '.join(fields)}).")
    if options.pattern:
        raise OgiveError(
            "--pattern reads free text; in a W3C extended log name the field with --field "
            "(or give --format text to run the regex over whole lines)."
        )
    entries = [ln for ln in lines if not ln.startswith("#")]
    tabs = bool(entries) and sum("\t" in ln for ln in entries) >= MOST * len(entries)
    notes: list[str] = []
    columns: list[tuple[str, tuple[int, ...]]] = []
    spec = options.field or options.column
    if spec is None:
        if VALUE_FIELD not in fields:
            raise OgiveError(
                f"the W3C extended log has no {VALUE_FIELD} field; choose the value with --field "
                f"(the fields: {' '.join(fields)})."
            )
        spec = VALUE_FIELD
    vi = _find(spec, fields, "--field")
    columns.append(("v", (vi,)))
    input_unit = None
    if fields[vi] == VALUE_FIELD and options.input_unit is None:
        iis = any(ln.startswith("#Software:") and IIS in ln for ln in head)
        input_unit = "ms" if iis else "s"
        how = (
            "in milliseconds, as IIS writes it (its #Software: directive)"
            if iis
            else "in seconds, as the W3C draft defines it"
        )
        notes.append(f"value: {VALUE_FIELD}, read {how}; say otherwise with --input-unit.")
    if options.by is not None:
        gi = _find(options.by, fields, "--by")
        if gi == vi:
            raise OgiveError(f"--by {options.by!r} is the value's own field.")
        columns.append(("g", (gi,)))
    tf = options.time_field
    if tf is not None and tf.lower() not in TIME_NAMES:
        raise OgiveError(
            f"--time-field {tf!r}: a W3C extended log carries its time in the date and time fields; "
            "they are used without --time-field."
        )
    time_source = ""
    if "date" in fields and "time" in fields:
        columns.append(("t", (fields.index("date"), fields.index("time"))))
        time_source = "the date and time fields (UTC)"
    elif tf is not None:
        raise OgiveError("--time-field: the W3C extended log has no date and time fields to give times.")
    names = tuple(n for n in ("v", "g", "t") if any(n == c for c, _ in columns))
    regex = line_regex(len(fields), {i: f"f{i}" for _, at in columns for i in at}, tabs=tabs)
    sep = "tab" if tabs else "space"
    return W3cLayout(
        format="w3c",
        names=names,
        fields=fields,
        regex=regex,
        plain=L.uncaptured(regex),
        columns=tuple(columns),
        separator="\t" if tabs else " ",
        description=f"field {fields[vi]} (W3C extended log, {sep}-separated)",
        time_format="iso" if time_source else None,
        time_source=time_source,
        input_unit=input_unit,
        notes=tuple(notes),
    )
