"""commands/common.py (shared source flags, load_set/load_one) and the progress line."""

from __future__ import annotations

import argparse
import io
from pathlib import Path

import numpy as np
import polars as pl
import pytest

from ogive.commands.common import add_source_options, load_one, load_set, options_from_args
from ogive.commands.progress import ProgressLine, format_progress
from ogive.errors import OgiveError
from ogive.read import ScanProgress
from ogive.read.route import MISSING, NAMED_KEYS, code_keys
from ogive.sketch import Sketch, SketchSet
from ogive.store import save_sketches, sketch_ref


def _args(*argv: str) -> argparse.Namespace:
    p = argparse.ArgumentParser()
    add_source_options(p)
    return p.parse_args(list(argv))


def test_options_from_flags() -> None:
    o = options_from_args(
        _args("--column", "3", "--no-header", "--unit", "s", "--by", "host", "--max-groups", "7", "--strict")
    )
    assert (o.column, o.header, o.unit, o.by, o.max_groups, o.strict) == ("3", False, "s", "host", 7, True)
    # A command without these flags still gets valid defaults.
    assert options_from_args(argparse.Namespace()).max_groups == 1000


def test_sketch_file_is_sniffed_by_content(tmp_path: Path) -> None:
    a, b = Sketch("ms"), Sketch("ms")
    a.add(np.arange(10.0))
    b.add(np.arange(20.0))
    path = tmp_path / "renamed.json"  # not called .ogive: the bytes decide
    save_sketches(path, SketchSet({"before": a, "after": b}))
    assert sketch_ref(str(path)) is not None
    assert load_set([str(path)], _args()).names() == ["before", "after"]
    with pytest.raises(OgiveError, match="holds 2 sketches"):
        load_one(str(path), _args())
    ogive = tmp_path / "run.ogive"
    save_sketches(ogive, SketchSet({"before": a, "after": b}))
    name, sk = load_one(f"{ogive}:after", _args())
    assert name == "after" and sk.count == 20
    with pytest.raises(OgiveError, match="no sketch named 'nope'"):
        load_one(f"{ogive}:nope", _args())


def test_sources_are_scanned(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    raw = np.random.default_rng(3).exponential(5.0, 500).round(3)
    src = tmp_path / "a.ogive"  # a log that happens to be named like a sketch
    src.write_text("ms,zone\n" + "".join(f"{v},z{i % 4}\n" for i, v in enumerate(raw)))
    name, sk = load_one(str(src), _args("--column", "ms"))
    assert name == "all" and sk.count == 500
    # Reference: numpy.quantile on the raw values; 500 values are all held exactly.
    np.testing.assert_allclose(sk.quantile(0.9), np.quantile(raw, 0.9), rtol=1e-12)
    sset = load_set([str(src)], _args("--column", "ms", "--by", "zone", "--max-groups", "2"))
    assert len(sset.names()) == 3
    assert "--max-groups" in capsys.readouterr().err  # the cap warning, one line on stderr


def _progress(read: int, total: int | None) -> ScanProgress:
    return ScanProgress(read, total, 1_000_000, 990_000, 2.0, "app.log", SketchSet())


def test_progress_text_and_drawing() -> None:
    text = format_progress(_progress(250_000_000, 1_000_000_000))
    assert "25.0%" in text and "500.0k rows/s" in text and "125 MB/s" in text and "ETA 6s" in text
    assert "%" not in format_progress(_progress(5_000_000, None))

    class Tty(io.StringIO):
        def isatty(self) -> bool:
            return True

    tty = Tty()
    line = ProgressLine(tty, width=200)
    line.update(_progress(1, 10))
    line.update(_progress(2, 10))  # within 1/5 s of the last: not redrawn
    line.clear()
    out = tty.getvalue()
    assert out.count("scanning") == 1 and out.endswith("\r")
    quiet = io.StringIO()  # not a terminal: nothing at all
    ProgressLine(quiet).update(_progress(1, 10))
    assert quiet.getvalue() == ""


def test_group_keys_are_coded_in_order_of_first_appearance() -> None:
    """``route.code_keys`` (run in the parser threads): the distinct values in file order,
    a missing one named ``(missing)``, and per-row indices that give every row back;
    a chunk of more distinct values than ``NAMED_KEYS`` is left uncoded."""
    raw = ["web-2", None, "web-1", "web-2", "", "web-1", None, "wëb-3"]
    keys = code_keys(pl.Series(raw, dtype=pl.String))
    assert keys.names == ["web-2", MISSING, "web-1", "", "wëb-3"]
    assert keys.local is not None
    assert [keys.names[i] for i in keys.local] == [MISSING if k is None else k for k in raw]
    many = code_keys(pl.Series([f"c{i}" for i in range(NAMED_KEYS + 1)]))
    assert many.names is None and many.local is None and many.values.len() == NAMED_KEYS + 1
