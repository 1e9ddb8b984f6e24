"""What one part of a split scan leaves behind, and how parts merge, in order.

A part is a sketch set (the ``.ogive`` codec's bytes) and a tally of everything else a
scan counts: lines, rows, bytes, skipped rows by reason with their first places, the
lines whose bytes were cleaned, notes, the unit-suffix and epoch counts, the groups of
``--by`` in the order they were met. Both travel as bytes (JSON), never as pickled
objects, so a worker can only hand the client data.

Merging is in source order (``a`` before ``b``): counts add, and the first places of a
reason stay the first. Groups of ``--by``: the single-process router gives the first
``max_groups`` values met a sketch each and folds later ones into ``FIELD=(other)``.
A part cannot know which values came before it, so parts and merges keep up to
``WIDE`` times as many groups (in the order met), and only the root is cut to
``max_groups`` (:func:`cap_groups`): exact whenever no part or merge met more than
that many values by itself. One that did folds its latest ones early and is marked
``crowded``; the scan then says which groups got a sketch may differ.

Places inside a part are written ``<token>:LINE``, the line counted from the part's
first line; the client rewrites them once the lines of the parts before are known
(:func:`relocate`).
"""

from __future__ import annotations

import json
import re
from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Any, cast

from ..read.route import OTHER, OVERFLOW_KEPT
from ..sketch import Sketch, SketchSet, SkipTally, dumps, loads

Blob = tuple[bytes, bytes]
"""A part on the wire: (the codec's bytes of its sketch set, its tally as JSON)."""


def token(leaf: int) -> str:
    """The stand-in for a source's name in the places a part writes (``\\0LEAF\\0``)."""
    return f"\0{leaf}\0"


TOKEN = re.compile(r"\x00(\d+)\x00( row)?(?::(\d+))?")


@dataclass
class Tally:
    """A part's counts beside its sketches (see the module notes)."""

    leaves: list[int] = field(default_factory=list)
    """The map tasks merged into this part, in source order."""
    lines: int = 0
    rows: int = 0
    nbytes: int = 0
    values: int = 0
    skipped: dict[str, SkipTally] = field(default_factory=dict)
    fixed: dict[str, SkipTally] = field(default_factory=dict)
    notes: list[str] = field(default_factory=list)
    warnings: list[str] = field(default_factory=list)
    suffixed: int = 0
    unsuffixed: int = 0
    other_epoch: int = 0
    years: list[int] = field(default_factory=list)
    order: list[Any] = field(default_factory=lambda: [0, 0.0, ""])
    """Rows whose time stepped back within a part: count, largest step (us), first place."""
    quote_chunks: int = 0
    groups: list[str] = field(default_factory=list)
    """Group labels (``host=web-1``) in the order first met."""
    overflow: list[str] = field(default_factory=list)
    """Group values that got no sketch of their own (at most ``OVERFLOW_KEPT``)."""
    crowded: bool = False
    unit: str | None = None
    time_format: str | None = None
    errors: list[str] = field(default_factory=list)
    """Why parts stopped early (damaged input, an unreadable file, --strict)."""
    reach: list[int] = field(default_factory=list)
    """A map task's own: where its first record began, where it stopped, and 1 when its
    quotes did not balance (see :mod:`.ranges`); empty once merged."""

    def to_json(self) -> bytes:
        doc = dict(self.__dict__)
        for key in ("skipped", "fixed"):
            doc[key] = {r: [t.count, t.examples] for r, t in doc[key].items()}
        return json.dumps(doc, separators=(",", ":")).encode()

    @classmethod
    def from_json(cls, data: bytes) -> Tally:
        doc = json.loads(data)
        for key in ("skipped", "fixed"):
            doc[key] = {r: SkipTally(int(c), list(ex)) for r, (c, ex) in doc[key].items()}
        return cls(**doc)


@dataclass
class Part:
    sketches: SketchSet
    tally: Tally

    def dump(self) -> Blob:
        return dumps(self.sketches), self.tally.to_json()

    @classmethod
    def load(cls, blob: Blob) -> Part:
        return cls(loads(blob[0]), Tally.from_json(blob[1]))


def _add_tallies(into: dict[str, SkipTally], more: dict[str, SkipTally]) -> None:
    for reason, tally in more.items():
        into.setdefault(reason, SkipTally()).add(tally.count, tally.examples)


def _once(into: list[str], more: list[str]) -> None:
    into.extend(x for x in more if x not in into)


WIDE = 2
"""Parts and merges keep up to WIDE x ``max_groups`` groups (see the module notes)."""


def merge(parts: list[Part], *, by: str | None, max_groups: int) -> Part:
    """``parts`` (in source order) as one part, keeping up to ``WIDE * max_groups`` groups;
    the inputs are consumed."""
    out = parts[0]
    more: dict[str, list[Sketch]] = {}
    for part in parts[1:]:
        for name, sketch in raw_sketches(part.sketches).items():
            if name in out.sketches.sketches:
                more.setdefault(name, []).append(sketch)
            else:
                out.sketches.sketches[name] = sketch
        _merge_two(out, part)
    for name, sketches in more.items():
        # one regroup of all the inputs' centroids, not a fold (see ``ogive.sketch.merge_all``)
        raw_sketches(out.sketches)[name].merge_many(sketches)
    if by and len(out.tally.groups) > WIDE * max_groups:
        cap_groups(out, by, WIDE * max_groups)
        out.tally.crowded = True
    return out


def raw_sketches(sset: SketchSet) -> dict[str, Sketch]:
    """The set's sketches, typed as what a part holds: sketches of raw values (telemetry
    histograms are refused before a cluster scan starts). The dict is the set's own."""
    if not all(isinstance(s, Sketch) for s in sset.sketches.values()):
        raise TypeError("a cluster part holds sketches of raw values only.")
    return cast(dict[str, Sketch], sset.sketches)  # checked above, element by element


def _merge_two(a: Part, b: Part) -> None:
    ta, tb = a.tally, b.tally
    if ta.unit is not None and tb.unit is not None and ta.unit != tb.unit and b.sketches.sketches:
        raise ValueError(f"parts read in different units ({ta.unit!r} and {tb.unit!r})")
    _add_tallies(a.sketches.unassigned, b.sketches.unassigned)
    ta.leaves += tb.leaves
    for key in ("lines", "rows", "nbytes", "values", "suffixed", "unsuffixed", "other_epoch", "quote_chunks"):
        setattr(ta, key, getattr(ta, key) + getattr(tb, key))
    _add_tallies(ta.skipped, tb.skipped)
    _add_tallies(ta.fixed, tb.fixed)
    _once(ta.notes, tb.notes)
    _once(ta.warnings, tb.warnings)
    ta.years = sorted(set(ta.years) | set(tb.years))
    count, most, first = ta.order
    ta.order = [count + tb.order[0], max(most, tb.order[1]), first or tb.order[2]]
    _once(ta.groups, tb.groups)
    _once(ta.overflow, tb.overflow[: max(0, OVERFLOW_KEPT - len(ta.overflow))])
    ta.crowded = ta.crowded or tb.crowded
    ta.unit = ta.unit if ta.unit is not None else tb.unit
    ta.time_format = ta.time_format or tb.time_format
    ta.errors += tb.errors


def cap_groups(part: Part, by: str, max_groups: int) -> None:
    """Fold the groups met after the first ``max_groups`` into ``BY=(other)``."""
    t = part.tally
    if len(t.groups) <= max_groups:
        return
    late = set(t.groups[max_groups:])
    other = f"{by}={OTHER}"
    sketches = raw_sketches(part.sketches)
    folded: dict[str, list[Sketch]] = {}
    for name in list(sketches):
        half = next((h for h in ("before/", "after/") if name.startswith(h + by + "=")), "")
        if name[len(half) :] in late:
            folded.setdefault(half + other, []).append(sketches.pop(name))
    for target, group in folded.items():
        if target not in sketches:
            sketches[target] = group.pop(0)
        if group:
            sketches[target].merge_many(group)
    room = max(0, OVERFLOW_KEPT - len(t.overflow))
    _once(t.overflow, [g[len(by) + 1 :] for g in t.groups[max_groups:]][:room])
    t.groups = t.groups[:max_groups]


def relocate(part: Part, place: Callable[[int, str, int | None], str]) -> None:
    """Rewrite every place a part wrote (``<token>:LINE``) with ``place(leaf, row, line)``,
    where ``row`` is ``" row"`` for Parquet rows and ``line`` is None for a bare name."""

    def fix(text: str) -> str:
        return TOKEN.sub(lambda m: place(int(m[1]), m[2] or "", int(m[3]) if m[3] else None), text)

    def fix_all(tallies: dict[str, SkipTally]) -> None:
        for tally in tallies.values():
            tally.examples = [fix(e) for e in tally.examples]

    for sketch in part.sketches.sketches.values():
        fix_all(sketch.provenance.skipped)
    fix_all(part.sketches.unassigned)
    t = part.tally
    fix_all(t.skipped)
    fix_all(t.fixed)
    t.order[2] = fix(t.order[2])
    t.notes = [fix(n) for n in t.notes]
    t.warnings = [fix(w) for w in t.warnings]
    t.errors = [fix(e) for e in t.errors]
