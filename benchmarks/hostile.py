# ruff: noqa: E501  (the hostile inputs are byte literals best read whole, one per line)
"""Hostile input, tried as a hostile user would: over a hundred kinds, each run as a real
``ogive`` process, and a tally of what must never happen (issue 12).

    PYTHONPATH=src python benchmarks/hostile.py [--jobs 2] [--only WORD] [--show]

For every kind the run is classified:

* internal error: ``internal error`` on stderr (a bug that reached the top);
* traceback: a Python traceback anywhere in the output;
* hang: no exit within the time limit;
* silent drop: a scan whose counts do not add up. From its ``--json``: every sketch's
  ``rows_read == n + skipped_total``, and the lines the scan read are the lines this
  script wrote (an outside count: ``bytes.count(b"\\n")`` of the file), each in a sketch
  or counted as unassigned (less the header line where the file has one);
* data loss: a write that left a half file, replaced a device or an old file on
  failure, or exited 0 without the file it promised; a failure that was not one line
  with exit 3.

The table at the end is what the README's section on hostile input quotes.
"""

from __future__ import annotations

import argparse
import gzip
import hashlib
import json
import lzma
import os
import shutil
import socket
import subprocess
import sys
import tempfile
import time
from collections.abc import Callable
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import zstandard

LIMIT_S = 40.0
FOREIGN = ("expected String", "zero-size array", "ComputeError", "SchemaError", "InvalidOperationError",
           "polars", "numpy", "dtype", "Series", "DataFrame", "PanicException", "ufunc", "TypeError:")  # fmt: skip
"""Words of the libraries underneath, which say nothing to the user about their file."""


@dataclass
class Kind:
    name: str
    argv: list[str]
    lines: int | None = None
    """Lines in the scanned file (an outside count), when the kind is a scan with --json."""
    header: int = 0
    stdout: str | None = None
    """'full' (/dev/full), 'closed' (a pipe closed at once), or None (captured)."""
    output: str | None = None
    """A file the run may write: checked after it."""
    keep: bytes | None = None
    """What ``output`` held before: it must still hold it when the run failed."""
    ok_codes: tuple[int, ...] = (0, 3)
    check: Callable[[subprocess.CompletedProcess[str]], str | None] | None = None


@dataclass
class Outcome:
    kind: Kind
    code: int | None
    seconds: float
    problems: list[str] = field(default_factory=list)
    err: str = ""


def _env() -> dict[str, str]:
    src = str(Path(__file__).resolve().parents[1] / "src")
    return {**os.environ, "PYTHONPATH": src, "COLUMNS": "120", "NO_COLOR": "1"}


def run(kind: Kind) -> Outcome:
    argv = [sys.executable, "-m", "ogive", *kind.argv]
    start = time.monotonic()
    try:
        if kind.stdout == "full":
            with open("/dev/full", "wb") as full:
                p = subprocess.run(
                    argv, stdout=full, stderr=subprocess.PIPE, text=True, env=_env(), timeout=LIMIT_S
                )
            out = ""
        elif kind.stdout == "closed":
            proc = subprocess.Popen(argv, stdout=subprocess.PIPE, stderr=subprocess.PIPE, env=_env())
            assert proc.stdout is not None and proc.stderr is not None
            proc.stdout.close()
            err_b = proc.stderr.read()
            code = proc.wait(timeout=LIMIT_S)
            p = subprocess.CompletedProcess(argv, code, "", err_b.decode("utf-8", "replace"))
            out = ""
        else:
            p = subprocess.run(
                argv, capture_output=True, text=True, env=_env(), timeout=LIMIT_S, errors="replace"
            )
            out = p.stdout
    except subprocess.TimeoutExpired:
        return Outcome(kind, None, time.monotonic() - start, ["hang"])
    res = Outcome(kind, p.returncode, time.monotonic() - start, err=p.stderr)
    text = out + p.stderr
    if "internal error" in text:
        res.problems.append("internal error")
    if "Traceback (most recent call last)" in text:
        res.problems.append("traceback")
    foreign = [w for w in FOREIGN if w in p.stderr]
    if foreign:
        res.problems.append(f"library words: {foreign}")
    if p.returncode not in kind.ok_codes:
        res.problems.append(f"data loss: exit {p.returncode}")
    failures = [ln for ln in p.stderr.splitlines() if ln.startswith("ogive: error:")]
    if p.returncode == 3 and len(failures) != 1 and "usage:" not in p.stderr:
        res.problems.append("data loss: a failure that is not one line")
    if kind.lines is not None and p.returncode == 0:
        res.problems += _accounting(kind, out)
    if kind.output is not None:
        res.problems += _written(kind, p.returncode)
    if kind.check is not None:
        note = kind.check(p)
        if note:
            res.problems.append(note)
    return res


def _accounting(kind: Kind, out: str) -> list[str]:
    try:
        doc = json.loads(out)
    except json.JSONDecodeError:
        return ["silent drop: no JSON summary"]
    problems = []
    rows = 0
    lines_read = 0
    for name, s in doc["sketches"].items():
        if s.get("kind") == "binned":
            continue
        if s["rows_read"] != s["n"] + s["skipped_total"]:
            problems.append(
                f"silent drop: {name} read {s['rows_read']} rows, holds {s['n']} + {s['skipped_total']}"
            )
        rows += s["rows_read"]
        lines_read = max(lines_read, s["lines_read"])
    unassigned = sum(t["count"] for t in doc.get("unassigned", {}).values())
    if doc["sketches"] and lines_read != kind.lines:
        problems.append(f"silent drop: {kind.lines} lines written, {lines_read} read")
    if doc["sketches"] and rows + unassigned + kind.header != lines_read:
        problems.append(f"silent drop: {lines_read} lines, {rows} rows + {unassigned} unassigned")
    return problems


def _written(kind: Kind, code: int) -> list[str]:
    assert kind.output is not None
    path = Path(kind.output)
    leftovers = [p.name for p in path.parent.glob(f".{path.name}.*.tmp")] if path.parent.exists() else []
    problems = [f"data loss: temporary file left: {leftovers}"] if leftovers else []
    if code == 0:
        if not path.is_file() or path.stat().st_size == 0:
            problems.append("data loss: exit 0 without the file")
    elif kind.keep is not None and (
        not path.exists() or not path.is_file() or path.read_bytes() != kind.keep
    ):
        problems.append("data loss: the old output changed on failure")
    return problems


# ----------------------------------------------------------------------- the kinds
def build(d: Path) -> list[Kind]:
    kinds: list[Kind] = []

    def f(name: str, data: bytes) -> str:
        p = d / name
        p.write_bytes(data)
        return str(p)

    def lines_of(data: bytes) -> int:
        return data.count(b"\n") + (0 if not data or data.endswith(b"\n") else 1)

    # Values that are not what they should be, in each line format.
    values = {
        "empty": "", "word": "abc", "nan": "NaN", "inf": "inf", "minus-inf": "-inf", "overflow": "1e309",
        "neg-overflow": "-1e309", "near-max": "1.7e308", "subnormal": "1e-320", "hex": "0x10",
        "underscore": "1_000", "arabic-digits": "١٢٣", "suffix": "12ms", "spaced-suffix": "12 ms",
        "comma-decimal": "1,5", "padded": "  7 ", "plus": "+5", "minus-zero": "-0", "bool": "true",
        "null": "null", "escape": "\x1b[31m5", "nul": "5\x00", "long-digits": "9" * 5000,
        "control-r": "5\r",
    }  # fmt: skip
    good = [f"{1 + (i * 37) % 200}" for i in range(200)]
    for vname, v in values.items():
        rows = [*good[:100], v, v, *good[100:]]
        csv = ("latency_ms\n" + "".join(f'"{r}"\n' if "," in r else f"{r}\n" for r in rows)).encode()
        kinds.append(
            Kind(
                f"csv value {vname}",
                [f(f"v-{vname}.csv", csv), "--column", "latency_ms", "--json", "--quiet"],
                lines_of(csv),
                1,
            )
        )
        nd = "".join(json.dumps({"t": {"ms": r}}) + "\n" for r in rows).encode()
        kinds.append(
            Kind(
                f"ndjson value {vname}",
                [f(f"v-{vname}.ndjson", nd), "--field", "t.ms", "--json", "--quiet"],
                lines_of(nd),
            )
        )
        tx = "".join(f"GET /x dur={r} ok\n" for r in rows).encode()
        kinds.append(
            Kind(
                f"text value {vname}",
                [f(f"v-{vname}.log", tx), "--pattern", r"dur=(\S*)", "--json", "--quiet"],
                lines_of(tx),
            )
        )

    body = ("latency_ms\n" + "".join(f"{x}\n" for x in good * 50)).encode()

    def scan(name: str, data: bytes, *extra: str, header: int = 1, count: bool = True) -> None:
        path = f(name, data)
        kinds.append(
            Kind(
                f"file {name}",
                ["scan", path, *extra, "--json", "--quiet"],
                lines_of(data) if count else None,
                header,
            )
        )

    scan("empty.csv", b"", "--column", "latency_ms", header=0)
    scan("header-only.csv", b"latency_ms\n", "--column", "latency_ms")
    scan("newlines.csv", b"\n" * 1000, "--column", "1", "--no-header", header=0)
    scan("no-final-newline.csv", body.rstrip(b"\n"), "--column", "latency_ms")
    scan("crlf.csv", body.replace(b"\n", b"\r\n"), "--column", "latency_ms")
    scan("cr-only.csv", body.replace(b"\n", b"\r"), "--column", "latency_ms", count=False)
    scan("utf16.csv", body.decode().encode("utf-16"), "--column", "latency_ms", count=False)
    scan("bom.csv", b"\xef\xbb\xbf" + body, "--column", "latency_ms")
    scan("binary.bin", np.random.default_rng(1).bytes(200_000), "--column", "1", count=False)
    scan("nul.csv", b"\x00" * 100_000, "--column", "1", count=False)
    scan("one-long-line.log", b"dur=" + b"7" * (20 << 20), "--pattern", r"dur=(\d+)", header=0, count=False)
    scan(
        "long-line-middle.log",
        b"dur=5\n" + b"x" * (70 << 20) + b"\ndur=6\n",
        "--pattern",
        r"dur=(\d+)",
        header=0,
    )
    scan(
        "wide.csv",
        (
            ",".join(f"c{i}" for i in range(10_000)) + "\n" + ",".join("1" for _ in range(10_000)) + "\n"
        ).encode(),
        "--column",
        "c9999",
    )
    scan(
        "unbalanced-quote.csv", b'latency_ms,note\n5,"open\n6,x\n7,y\n', "--column", "latency_ms", count=False
    )
    scan("ragged.csv", b"a,latency_ms\n1,2\n3\n4,5,6,7\n8,9\n", "--column", "latency_ms")
    scan("dup-header.csv", b"latency_ms,latency_ms\n1,2\n3,4\n", "--column", "latency_ms")
    nested = (
        b'{"t": {"ms": 5}}\n' + b'{"a": ' + b"[" * 100_000 + b"]" * 100_000 + b"}\n" + b'{"t": {"ms": 6}}\n'
    )
    scan("deep.ndjson", nested, "--field", "t.ms", header=0)
    scan("dup-keys.ndjson", b'{"ms": 1, "ms": 2}\n{"ms": 3}\n', "--field", "ms", header=0)
    scan(
        "bigint.ndjson",
        b'{"ms": 1180591620717411303424}\n{"ms": 3}\n{"ms": -99999999999999999999999}\n',
        "--field",
        "ms",
        header=0,
    )
    scan(
        "mixed-types.ndjson",
        b'{"ms": 1}\n{"ms": "2"}\n{"ms": true}\n{"ms": [3]}\n{"ms": {"x": 4}}\n{"ms": null}\n',
        "--field",
        "ms",
        header=0,
    )
    scan("not-objects.ndjson", b'[1,2]\n"ms"\n5\n{"ms": 4}\n', "--field", "ms", header=0)
    scan(
        "ts-range.ndjson",
        b'{"t": "9999-12-31T23:59:59Z", "ms": 1}\n{"t": "+10000-01-01", "ms": 2}\n{"t": "0000-01-01T00:00:00Z", "ms": 3}\n{"t": 1e20, "ms": 4}\n{"t": -1e19, "ms": 5}\n',
        "--field",
        "ms",
        "--time-field",
        "t",
        header=0,
    )
    scan(
        "ts-epoch-huge.ndjson",
        b'{"t": 253402300800, "ms": 1}\n{"t": 1.7e308, "ms": 2}\n{"t": 1700000000, "ms": 3}\n',
        "--field",
        "ms",
        "--time-field",
        "t",
        "--time-format",
        "epoch_s",
        header=0,
    )
    scan(
        "ts-split.ndjson",
        b'{"t": 1e30, "ms": 1}\n{"t": 1700000000000, "ms": 3}\n',
        "--field",
        "ms",
        "--time-field",
        "t",
        "--time-format",
        "epoch_ms",
        "--split-at",
        "2026-01-01T00:00:00Z",
        header=0,
    )
    scan("huge-sum.csv", b"v\n1.7e308\n1.7e308\n1.6e308\n5\n", "--column", "v")
    scan(
        "huge-unit.log",
        b"dur=1.7e308s\ndur=5ms\ndur=1e308h\n",
        "--pattern",
        r"dur=(\S+)",
        "--unit",
        "ns",
        header=0,
    )
    scan(
        "groups-escape.csv",
        b"host,v\n\x1b[31mevil\x1b]0;x\x07,1\nok,2\n",
        "--column",
        "v",
        "--by",
        "host",
        "--format",
        "csv",
    )
    scan(
        "groups-many.csv",
        ("host,v\n" + "".join(f"h{i},{i}\n" for i in range(5000))).encode(),
        "--column",
        "v",
        "--by",
        "host",
        "--max-groups",
        "10",
    )
    scan("groups-empty-key.csv", b"host,v\n,1\n,2\nx,3\n", "--column", "v", "--by", "host")
    scan("regex-nogroup.log", b"dur=5\n", "--pattern", r"dur=\d+", header=0)
    scan("regex-bad.log", b"dur=5\n", "--pattern", r"dur=(\d+", header=0)
    scan("regex-heavy.log", b"a" * 50_000 + b"\n", "--pattern", r"(a+)+b", header=0)
    scan("column-zero.csv", body, "--column", "0")
    scan("column-far.csv", body, "--column", "999")
    scan("column-missing.csv", body, "--column", "nope")
    scan("field-empty.ndjson", b'{"a": 1}\n', "--field", "", header=0)
    scan("compression-nan.csv", body, "--column", "latency_ms", "--compression", "nan")
    scan("compression-huge.csv", body, "--column", "latency_ms", "--compression", "1e11")
    scan("split-bad.csv", body, "--column", "latency_ms", "--split-at", "yesterday-ish")
    scan(
        "otlp-junk.json",
        b'{"resourceMetrics": [{"scopeMetrics": [{"metrics": [{"name": "x", "histogram": {"dataPoints": [{"bucketCounts": ["a"], "explicitBounds": [1]}]}}]}]}]}\n',
        "--format",
        "otlp-metrics",
        header=0,
        count=False,
    )
    scan(
        "openmetrics-junk.txt",
        b'# TYPE x histogram\nx_bucket{le="1"} NaN\nx_bucket{le="+Inf"} -3\nx_count 1e400\n',
        "--format",
        "openmetrics",
        header=0,
        count=False,
    )
    scan(
        "access-junk.log",
        b'1.2.3.4 - - [99/Foo/2026:99:99:99 +0000] "GET / HTTP/1.1" 200 abc\n',
        "--format",
        "access",
        "--field",
        "bytes",
        header=0,
    )
    scan(
        "syslog-junk.log",
        b"<999>Foo 99 99:99:99 host app: dur=5\n",
        "--format",
        "syslog",
        "--field",
        "dur",
        header=0,
    )
    scan("parquet-fake.parquet", b"PAR1garbagePAR1", "--column", "v", header=0, count=False)

    # Compressed inputs, damaged or odd.
    gz = gzip.compress(body)
    for name, blob in {
        "cut.gz": gz[: len(gz) // 2],
        "cut.zst": zstandard.ZstdCompressor().compress(body)[:200],
        "junk.bz2": b"BZh9" + b"\x00" * 200,
        "cut.xz": lzma.compress(body)[:100],
        "empty.gz": gzip.compress(b""),
        "members.gz": gzip.compress(body) + gzip.compress(body[len("latency_ms\n") :]),
        "trailing-junk.gz": gz + b"junk",
    }.items():
        kinds.append(
            Kind(
                f"compressed {name}",
                ["scan", f(name, blob), "--column", "latency_ms", "--quiet"],
                ok_codes=(0, 3),
            )
        )

    plain = f("plain.csv", body)
    # Sources that are not files.
    for name, src in {
        "missing": str(d / "missing.csv"),
        "directory": str(d),
        "dev-null": "/dev/null",
    }.items():
        kinds.append(Kind(f"source {name}", ["scan", src, "--column", "1", "--quiet"]))
    kinds.append(Kind("source listed twice", ["scan", plain, plain, "--column", "latency_ms"]))
    kinds.append(
        Kind(
            "source twice by two names", ["scan", plain, str(d / "." / "plain.csv"), "--column", "latency_ms"]
        )
    )
    link = d / "hard.csv"
    os.link(plain, link)
    kinds.append(Kind("source twice by a hard link", ["scan", plain, str(link), "--column", "latency_ms"]))
    esc_name = f("x\x1b[2Jname.csv", body)
    kinds.append(
        Kind("source name with escapes", ["scan", esc_name, "--column", "latency_ms"], check=_no_raw_escape)
    )

    # Outputs that must not be written, and writes that fail.
    fifo = d / "out.fifo"
    os.mkfifo(fifo)
    sock_path = str(d / "out.sock")
    sock = socket.socket(socket.AF_UNIX)
    sock.bind(sock_path)
    targets = {
        "dev-full": "/dev/full",
        "dev-null": "/dev/null",
        "directory": str(d),
        "fifo": str(fifo),
        "socket": sock_path,
    }
    sk = d / "good.ogive"
    subprocess.run(
        [sys.executable, "-m", "ogive", "scan", plain, "--column", "latency_ms", "-o", str(sk), "--quiet"],
        env=_env(),
        check=True,
    )
    sk2 = d / "good2.ogive"
    shutil.copy(sk, sk2)
    for tname, target in targets.items():
        kinds.append(
            Kind(
                f"scan -o {tname}",
                ["scan", plain, "--column", "latency_ms", "-o", target],
                ok_codes=(3,),
                check=_target_kept(target),
            )
        )
        kinds.append(
            Kind(
                f"merge -o {tname}",
                ["merge", str(sk), str(sk2), "-o", target],
                ok_codes=(3,),
                check=_target_kept(target),
            )
        )
        kinds.append(
            Kind(
                f"generate -o {tname}",
                ["generate", "-o", target, "--rows", "10"],
                ok_codes=(3,),
                check=_target_kept(target),
            )
        )
    kinds.append(
        Kind(
            "scan -o - onto a full disk",
            ["scan", plain, "--column", "latency_ms", "-o", "-"],
            stdout="full",
            ok_codes=(3,),
        )
    )
    kinds.append(
        Kind(
            "scan -o - into a closed pipe",
            ["scan", plain, "--column", "latency_ms", "-o", "-", "--quiet"],
            stdout="closed",
            ok_codes=(3,),
        )
    )
    kinds.append(
        Kind(
            "scan --json onto a full disk",
            ["scan", plain, "--column", "latency_ms", "--json"],
            stdout="full",
            ok_codes=(3,),
        )
    )
    kinds.append(
        Kind(
            "scan table onto a full disk",
            ["scan", plain, "--column", "latency_ms"],
            stdout="full",
            ok_codes=(3,),
        )
    )
    kinds.append(Kind("show onto a full disk", ["show", str(sk)], stdout="full", ok_codes=(3,)))
    kinds.append(
        Kind(
            "merge -o - onto a full disk",
            ["merge", str(sk), str(sk2), "-o", "-"],
            stdout="full",
            ok_codes=(3,),
        )
    )
    kinds.append(
        Kind(
            "generate -o - onto a full disk",
            ["generate", "-o", "-", "--rows", "1000"],
            stdout="full",
            ok_codes=(3,),
        )
    )
    kinds.append(
        Kind(
            "generate -o - into a closed pipe",
            ["generate", "-o", "-", "--rows", "100000"],
            stdout="closed",
            ok_codes=(3,),
        )
    )
    kinds.append(
        Kind("compare onto a full disk", ["compare", str(sk), str(sk2)], stdout="full", ok_codes=(3,))
    )
    old = d / "old.ogive"
    old.write_bytes(b"previous contents")
    kinds.append(
        Kind(
            "scan -o over an old file, source missing",
            ["scan", str(d / "nope.csv"), "-o", str(old)],
            output=str(old),
            keep=b"previous contents",
            ok_codes=(3,),
        )
    )
    kinds.append(
        Kind(
            "scan -o a new file",
            ["scan", plain, "--column", "latency_ms", "-o", str(d / "new.ogive")],
            output=str(d / "new.ogive"),
            ok_codes=(0,),
        )
    )
    kinds.append(
        Kind(
            "scan -o the source itself", ["scan", plain, "--column", "latency_ms", "-o", plain], ok_codes=(3,)
        )
    )

    # Sketch files that lie.
    doc = json.loads(sk.read_bytes())

    def resealed(edit: Callable[[dict], None], name: str) -> str:
        d2 = json.loads(json.dumps(doc))
        edit(d2["sketches"]["all"])
        body_doc = {k: v for k, v in d2.items() if k != "checksum"}
        canon = json.dumps(body_doc, sort_keys=True, separators=(",", ":"), allow_nan=False).encode()
        d2["checksum"] = "sha256:" + hashlib.sha256(canon).hexdigest()
        return f(name, json.dumps(d2).encode())

    lies: dict[str, Callable[[dict], None]] = {
        "unsorted-tail": lambda s: s["low"].reverse(),
        "tail-above-max": lambda s: s["low"].__setitem__(-1, 1e9),
        "weights-off": lambda s: s["centroids"]["weight"].__setitem__(0, s["centroids"]["weight"][0] + 5),
        "negative-count": lambda s: s.__setitem__("nan_count", -1),
        "sum-wild": lambda s: s.__setitem__("sum", 1e300),
        "count-huge": lambda s: s.__setitem__("count", 10**30),
        "compression-huge": lambda s: s.__setitem__("compression", 1e12),
        "tail-size-huge": lambda s: s.__setitem__("tail_size", 10**15),
        "mean-string": lambda s: s["centroids"]["mean"].__setitem__(0, "x"),
        "negatives-claimed": lambda s: s.__setitem__("negative_count", 5),
        "sum-exponent-bad": lambda s: s.__setitem__("sum_exponent", -4),
    }
    for lname, edit in lies.items():
        kinds.append(
            Kind(f"sketch file {lname}", ["show", resealed(edit, f"lie-{lname}.ogive")], ok_codes=(3,))
        )
    raw = sk.read_bytes()
    kinds.append(
        Kind(
            "sketch file flipped byte", ["show", f("flip.ogive", raw[:300] + b"X" + raw[301:])], ok_codes=(3,)
        )
    )
    kinds.append(
        Kind("sketch file cut in half", ["show", f("half.ogive", raw[: len(raw) // 2])], ok_codes=(3,))
    )
    kinds.append(
        Kind(
            "sketch file nested 100k deep",
            [
                "show",
                f(
                    "deep.ogive",
                    b'{"format": "ogive-sketch-set", "version": 2, "x": '
                    + b"[" * 100_000
                    + b"]" * 100_000
                    + b"}",
                ),
            ],
            ok_codes=(3,),
        )
    )
    kinds.append(
        Kind(
            "sketch file from the future",
            ["show", f("future.ogive", raw.replace(b'"version": 2', b'"version": 99'))],
            ok_codes=(3,),
        )
    )
    kinds.append(
        Kind(
            "merge a file with itself",
            ["merge", str(sk), str(sk), "-o", str(d / "twice.ogive")],
            ok_codes=(3,),
        )
    )
    huge = d / "huge.ogive"
    subprocess.run(
        [
            sys.executable,
            "-m",
            "ogive",
            "scan",
            str(d / "huge-sum.csv"),
            "--column",
            "v",
            "-o",
            str(huge),
            "--quiet",
        ],
        env=_env(),
        check=True,
    )
    huge2 = d / "huge2.ogive"
    shutil.copy(huge, huge2)
    kinds.append(
        Kind(
            "merge sketches with sums past 1.8e308",
            ["merge", str(huge), str(huge2), "-o", str(d / "huge-m.ogive")],
            output=str(d / "huge-m.ogive"),
            ok_codes=(0,),
        )
    )
    kinds.append(Kind("show a sum past 1.8e308", ["show", str(huge), "--json"], ok_codes=(0,)))
    kinds.append(Kind("fit values near 1.8e308", ["fit", str(huge)], ok_codes=(3,)))
    kinds.append(Kind("compare values near 1.8e308", ["compare", str(huge), str(huge2)], ok_codes=(0, 3)))
    kinds.append(Kind("plot values near 1.8e308", ["plot", str(huge), str(huge2)], ok_codes=(0, 3)))
    kinds.append(
        Kind(
            "timeline of out-of-range times",
            ["timeline", str(d / "ts-range.ndjson"), "--field", "ms", "--time-field", "t"],
            ok_codes=(0, 3),
        )
    )
    kinds.append(
        Kind(
            "gate on one-value sketches",
            ["gate", str(huge), str(huge2), "--max", "p99=+10%"],
            ok_codes=(0, 1, 2, 3),
        )
    )
    return kinds


def _no_raw_escape(p: subprocess.CompletedProcess[str]) -> str | None:
    return "escape printed raw" if "\x1b" in p.stdout or "\x1b" in p.stderr else None


def _target_kept(target: str) -> Callable[[subprocess.CompletedProcess[str]], str | None]:
    before = os.stat(target)

    def check(p: subprocess.CompletedProcess[str]) -> str | None:
        after = os.stat(target)
        if (after.st_mode, after.st_ino) != (before.st_mode, before.st_ino):
            return f"data loss: {target} was replaced"
        return None

    return check


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--jobs", type=int, default=2)
    ap.add_argument("--only", default=None)
    ap.add_argument("--show", action="store_true", help="print every kind's exit and first stderr line")
    args = ap.parse_args()
    with tempfile.TemporaryDirectory(prefix="ogive-hostile-") as tmp:
        kinds = build(Path(tmp))
        if args.only:
            kinds = [k for k in kinds if args.only in k.name]
        with ThreadPoolExecutor(args.jobs) as pool:
            outcomes = list(pool.map(run, kinds))
    tally = {
        "internal error": 0,
        "traceback": 0,
        "hang": 0,
        "silent drop": 0,
        "data loss": 0,
        "library words": 0,
    }
    for o in outcomes:
        for prob in o.problems:
            for key in tally:
                if prob.startswith(key):
                    tally[key] += 1
        if o.problems or args.show:
            first = next(
                (ln for ln in o.err.splitlines() if ln.startswith("ogive: error")), o.err.strip()[:160]
            )
            mark = "!!" if o.problems else "ok"
            print(f"{mark} {o.kind.name}: exit {o.code} in {o.seconds:.1f}s {o.problems} {first[:200]!r}")
    runs = len(outcomes)
    print()
    print(
        "| hostile kinds tried | internal errors | tracebacks | hangs | silent drops | data-loss cases "
        "| messages in library words |"
    )
    print("|---:|---:|---:|---:|---:|---:|---:|")
    print(
        f"| {runs} | {tally['internal error']} | {tally['traceback']} | {tally['hang']} | {tally['silent drop']} "
        f"| {tally['data loss']} | {tally['library words']} |"
    )
    return 0 if not any(tally.values()) else 1


if __name__ == "__main__":
    sys.exit(main())
