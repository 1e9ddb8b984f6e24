"""The loader and the printer under hostile input (issue 12): one group of a big file is
built alone, a truncated source flags its sketch partial, escape sequences from the
input are printed neutralised everywhere text leaves ogive.

Outside references: ECMA-48 (ESC = 0x1b introduces control sequences; C1 controls are
0x80-0x9f), the row counts this test writes, ``numpy.quantile`` for the one group.
"""

from __future__ import annotations

import os
from pathlib import Path

import numpy as np
import pytest

import ogive.sketch.codec as codec
from ogive.cli import main
from ogive.errors import excerpt, printable
from ogive.read import ScanOptions, ScanProgress, scan
from ogive.sketch import Sketch, SketchSet, dumps
from ogive.store import load_ref, save_sketches, sketch_ref


def test_one_group_is_built_alone(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    rng = np.random.default_rng(3)
    raws = {f"host=h{i}": rng.lognormal(2, 1, 50) for i in range(300)}
    sset = SketchSet()
    for name, raw in raws.items():
        s = Sketch("ms")
        s.add(raw)
        sset.sketches[name] = s
    path = tmp_path / "many.ogive"
    save_sketches(path, sset)
    built: list[object] = []
    real = codec.sketch_from_dict
    monkeypatch.setattr(codec, "sketch_from_dict", lambda body: built.append(1) or real(body))
    ref = sketch_ref(f"{path}:host=h123")
    assert ref is not None
    one = load_ref(ref)["host=h123"]
    assert len(built) == 1
    np.testing.assert_allclose(one.quantile([0.5, 0.9]), np.quantile(raws["host=h123"], [0.5, 0.9]))


def test_missing_group_names_the_ones_there(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    s = Sketch("ms")
    s.add([1.0, 2.0])
    path = tmp_path / "one.ogive"
    path.write_bytes(dumps(SketchSet({"host=a": s})))
    assert main(["show", f"{path}:host=b"]) == 3
    err = capsys.readouterr().err
    assert "has no sketch named 'host=b' (it has: host=a)" in err


def test_truncated_source_flags_the_sketch_partial(tmp_path: Path) -> None:
    path = tmp_path / "short.csv"
    path.write_bytes(("latency_ms\n" + "".join(f"{i % 300}.5\n" for i in range(50_000))).encode())
    done: list[bool] = []

    def progress(p: ScanProgress) -> None:
        if not done:
            done.append(True)
            os.truncate(path, 100_000)

    r = scan([str(path)], ScanOptions(column="latency_ms", chunk_bytes=1 << 16), progress=progress)
    s = r.sketches["all"]
    assert isinstance(s, Sketch) and s.count < 50_000
    assert r.partial is not None and "truncated" in r.partial
    assert s.provenance.partial is not None and "truncated" in s.provenance.partial


@pytest.mark.parametrize(
    ("raw", "shown"),
    [
        ("\x1b[2J", "\\x1b[2J"),  # ECMA-48 CSI: clear the screen
        ("\x1b]0;title\x07", "\\x1b]0;title\\x07"),  # OSC: retitle the terminal
        ("a\rb", "a\\rb"),
        ("\x9b31m", "\\x9b31m"),  # C1 CSI
        ("\u202eevil", "\\u202eevil"),  # right-to-left override
        ("bad\udcffbyte", "bad\\xffbyte"),  # a byte that was not UTF-8 (surrogateescape)
        ("plain é ✓", "plain é ✓"),
    ],
)
def test_printable_neutralises_terminal_controls(raw: str, shown: str) -> None:
    assert printable(raw) == shown
    assert printable(printable(raw)) == printable(raw)  # idempotent: safe to apply twice


def test_excerpt_is_short_and_escaped() -> None:
    quoted = excerpt(b"\x00\xff" * 1000 + b"\n", limit=20)
    assert len(quoted) <= 4 * 20 + 1 and "\x00" not in quoted and quoted.endswith("…")


def test_escapes_in_names_and_keys_are_neutralised_in_tables(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    src = tmp_path / "x\x1b[2Jname.csv"
    src.write_bytes(b"host,v\n\x1b[31mevil\x1b]0;x\x07,1\nok,2\nplain,3\n")
    out = tmp_path / "esc.ogive"
    assert main(["scan", str(src), "--column", "v", "--by", "host", "--format", "csv", "-o", str(out)]) == 0
    assert main(["show", str(out)]) == 0
    printed = capsys.readouterr()
    for text in (printed.out, printed.err):
        assert "\x1b" not in text and "\x07" not in text
    assert "host=\\x1b[31mevil\\x1b]0;x\\x07" in printed.out
    assert "x\\x1b[2Jname.csv" in printed.out
