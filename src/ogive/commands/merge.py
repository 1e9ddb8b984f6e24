"""`ogive merge`: one sketch set from many (per host, per day, per rotated file).

Sketches are merged by name: every file's ``all`` goes into ``all``, every
``host=ck-web-01`` into ``host=ck-web-01``, ``before`` into ``before``. A t-digest merge
is as good as scanning the concatenated data (within the sketch's own error), which is
what makes "sketch on each host, merge at home" work.
"""

from __future__ import annotations

import argparse
import sys
from typing import TYPE_CHECKING

from ..errors import OgiveError

if TYPE_CHECKING:
    from ..sketch import Binned, Sketch, SketchSet

DESCRIPTION = """\
Merge saved sketch sets into one: sketches with the same name are combined (a file of
one sketch merges into that name), other names are carried over. Durations in different
units (s, ms, us, ns) are converted to the first file's unit. --as FILE=NAME puts a
file's sketch under a name of your choice first, so per-host sketches can be gathered
into one set side by side instead of merged. Sketches of unrelated units (ms and bytes)
or of different fields are refused, because their union would be meaningless, unless
--force says they measure the same thing."""

EPILOG = """\
examples:
  for h in web-1 web-2 web-3; do
    ssh $h ogive scan /var/log/app.log --pattern 'dur=(\\S+)' -o - > $h.ogive
  done
  ogive merge web-*.ogive -o fleet.ogive
  ogive merge mon.ogive tue.ogive wed.ogive -o week.ogive --json
  ogive merge web-1.ogive web-2.ogive --as web-1.ogive=web-1 --as web-2.ogive=web-2 -o hosts.ogive"""


def add_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument(
        "inputs", nargs="+", metavar="SKETCH.ogive", help="sketch files to merge (two or more)"
    )
    parser.add_argument(
        "-o", "--output", metavar="ALL.ogive", required=True, help="where to write ('-' for stdout)"
    )
    parser.add_argument(
        "--force",
        action="store_true",
        help="merge even when units or fields differ (you vouch that they measure the same thing)",
    )
    parser.add_argument(
        "--as",
        dest="names",
        action="append",
        default=[],
        metavar="FILE[:SKETCH]=NAME",
        help="give that sketch the name NAME before merging (repeat for more); a file of one "
        "sketch needs no :SKETCH",
    )
    parser.add_argument("--json", action="store_true", help="print the merged summary as JSON on stdout")
    parser.add_argument("--quiet", action="store_true", help="print nothing but errors")


def _clash(name: str, what: str, first: tuple[str, str], other: tuple[str, str]) -> str:
    return (
        f"cannot merge sketch '{name}': {first[0]} has {what} '{first[1] or '(none)'}' but {other[0]} has "
        f"'{other[1] or '(none)'}'; use --force if they measure the same thing."
    )


def _merge_binned(
    name: str, first: tuple[str, Sketch | Binned], other: tuple[str, Sketch | Binned]
) -> Binned:
    """Binned with binned only: counts of the same bucket layout add, other layouts stay parts."""
    from ..sketch import Binned, merge_binned

    (pa, a), (pb, b) = first, other
    if not (isinstance(a, Binned) and isinstance(b, Binned)):
        kind = {True: "a binned distribution (telemetry histograms)", False: "a sketch of raw values"}
        raise OgiveError(
            f"cannot merge '{name}': {pa} holds {kind[isinstance(a, Binned)]} and {pb} "
            f"{kind[isinstance(b, Binned)]}; they do not add up into one (compare them instead)."
        )
    if a.unit != b.unit:
        raise OgiveError(f"cannot merge '{name}': bucket edges in {a.unit!r} and {b.unit!r} do not add up.")
    return merge_binned([a, b])


def merge_sets(named: list[tuple[str, SketchSet]], *, force: bool) -> tuple[SketchSet, list[str]]:
    """Merge by sketch name; returns the set and the warnings a forced merge owes the user."""
    from ..sketch import Binned, SketchSet, SkipTally, merge
    from ..sketch.units import duration_factor, in_unit

    out: dict[str, Sketch | Binned] = {}
    origin: dict[str, str] = {}
    warnings: list[str] = []
    for path, sset in named:
        for name in sset.names():
            s = sset[name]
            if name not in out:
                out[name], origin[name] = s, path  # the loaded sets are ours to fold into
                continue
            have = out[name]
            if s.unit != have.unit and duration_factor(s.unit, have.unit) is not None:
                # Durations convert: the values are added in the first file's unit, never as raw numbers.
                warnings.append(f"'{name}': {path} is in {s.unit}, converted to {have.unit} to merge")
                s = in_unit(s, have.unit)
            for what, a, b in (
                ("unit", have.unit, s.unit),
                ("field", have.provenance.field, s.provenance.field),
            ):
                if a != b:
                    if not force:
                        raise OgiveError(_clash(name, what, (origin[name], a), (path, b)))
                    warnings.append(
                        f"'{name}': merged {what} '{b or '(none)'}' from {path} "
                        f"into '{a or '(none)'}' (--force)"
                    )
            if isinstance(have, Binned) or isinstance(s, Binned):
                out[name] = _merge_binned(name, (origin[name], have), (path, s))
            elif have.unit == s.unit:
                out[name] = merge(have, s)
            else:
                have.merge(s)  # forced, unrelated units: the first file's unit labels the result
    merged = SketchSet(out)
    for _, sset in named:  # rows that reached no sketch stay counted in the merged set
        for reason, tally in sset.unassigned.items():
            merged.unassigned.setdefault(reason, SkipTally()).add(tally.count, tally.examples)
    return merged, warnings


def renamed(named: list[tuple[str, SketchSet]], specs: list[str]) -> list[tuple[str, SketchSet]]:
    """The loaded sets with the ``--as FILE[:SKETCH]=NAME`` renamings applied (checked, in one line each)."""
    from ..sketch import SketchSet
    from ..store import few, split_group

    sets = {path: dict(sset.sketches) for path, sset in named}
    for spec in specs:
        target, eq, new = spec.rpartition("=")
        if not eq or not target or not new.strip():
            raise OgiveError(f"--as {spec!r} is not of the form FILE=NAME or FILE:SKETCH=NAME.")
        path, old = split_group(target)
        if path not in sets:
            raise OgiveError(f"--as {spec!r}: {path} is not one of the files being merged.")
        names = list(sets[path])
        if old is None:
            if len(names) != 1:
                raise OgiveError(
                    f"--as {spec!r}: {path} holds {len(names)} sketches; name one as {path}:SKETCH=NAME "
                    f"(one of: {few(names)})."
                )
            old = names[0]
        if old not in sets[path]:
            raise OgiveError(f"--as {spec!r}: {path} has no sketch named {old!r} (it has: {few(names)}).")
        if new in sets[path] and new != old:
            raise OgiveError(f"--as {spec!r}: {path} already holds a sketch named {new!r}.")
        sets[path] = {new if n == old else n: s for n, s in sets[path].items()}
    return [(path, SketchSet(sets[path], unassigned=sset.unassigned)) for path, sset in named]


def run(args: argparse.Namespace) -> int:
    import json

    from ..outputs import repeated
    from ..render.summary import summarise, summary_lines
    from ..store import check_target, load_sketches, save_sketches

    if len(args.inputs) < 2:
        raise OgiveError("merge needs two or more sketch files; to look at one, use 'ogive show'.")
    check_target(args.output)
    if args.output in args.inputs:
        # Allowed in principle (the write is atomic), but it is almost always a slip of a glob.
        raise OgiveError(f"-o {args.output} is also an input; write the merge to a new file.")
    if args.output == "-" and args.json:
        raise OgiveError(
            "-o - and --json both want standard output; write the sketch to a file or drop --json."
        )
    twice = repeated(args.inputs)
    if twice is not None:
        same = "is given more than once" if twice[0] == twice[1] else f"is the same file as {twice[0]}"
        raise OgiveError(f"{twice[1]} {same}; its values would be counted twice.")
    named = renamed([(path, load_sketches(path)) for path in args.inputs], args.names)
    merged, warnings = merge_sets(named, force=args.force)
    save_sketches(args.output, merged)
    summary = summarise(merged, warnings)
    if args.json:
        doc = summary.to_dict()
        doc["inputs"] = list(args.inputs)
        doc["output"] = args.output
        json.dump(doc, sys.stdout, indent=2, allow_nan=False)
        sys.stdout.write("\n")
        return 0
    out = sys.stderr if args.output == "-" else sys.stdout
    if args.quiet:
        for w in warnings:
            print(f"ogive: warning: {w}", file=sys.stderr)
        return 0
    for line in summary_lines(summary):
        print(line, file=out)
    n = len(merged.names())
    print(
        f"\nmerged {len(args.inputs)} files into {n} sketch{'es' if n != 1 else ''}: {args.output}", file=out
    )
    return 0
