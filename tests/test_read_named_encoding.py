"""``--encoding NAME``: sources in an 8-bit or other encoding (Windows exports in cp1252,
Shift JIS) decoded to UTF-8 as they are read, instead of their bytes becoming U+FFFD.

References: Python's codecs (``bytes.decode``) for what each byte means,
``numpy.quantile`` for the values.
"""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import numpy as np
import pytest

from ogive.cli import main
from ogive.cluster import plan
from ogive.cluster.head import decide
from ogive.cluster.tasks import WHOLE
from ogive.read import ScanOptions


def _scan(capsys: pytest.CaptureFixture[str], *argv: str) -> tuple[int, dict[str, Any], str]:
    code = main(["scan", *argv, "--json"])
    out, err = capsys.readouterr()
    return code, json.loads(out) if out.strip() else {}, err


def _cp1252_export(path: Path, n: int = 200) -> tuple[np.ndarray, list[str]]:
    """A tab-separated export as a German Windows program writes it: cp1252 bytes, µs."""
    rng = np.random.default_rng(5)
    us = np.round(rng.lognormal(4.0, 0.5, n), 1)
    places = ["Kühlhaus", "Gerätehalle", "Büro"]
    where = [places[i % 3] for i in range(n)]
    text = "Ort\tDauer\r\n" + "".join(f"{w}\t{u}µs\r\n" for w, u in zip(where, us, strict=True))
    path.write_bytes(text.encode("cp1252"))
    assert b"\xb5s" in path.read_bytes()  # µ is one byte there, not UTF-8
    return us, where


def test_a_cp1252_export_is_read_with_encoding(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    path = tmp_path / "export.tsv"
    us, where = _cp1252_export(path)
    code, doc, err = _scan(capsys, str(path), "--encoding", "cp1252", "--by", "Ort")
    assert code == 0, err
    for place in ("Kühlhaus", "Gerätehalle", "Büro"):
        s = doc["sketches"][f"Ort={place}"]  # the names decoded, not U+FFFD
        want = np.array([u for u, w in zip(us, where, strict=True) if w == place]) / 1000.0  # in ms
        assert s["n"] == want.size and not s["skipped"]
        np.testing.assert_allclose(s["p50"], np.quantile(want, 0.5), rtol=1e-9)
    assert not [w for w in doc["warnings"] if "UTF-8" in w]


def test_without_it_the_error_names_the_option(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    path = tmp_path / "export.tsv"
    _cp1252_export(path)
    code, _, err = _scan(capsys, str(path))
    assert code == 3 and err.count("\n") == 1
    assert "not UTF-8" in err and "--encoding (cp1252" in err
    log = tmp_path / "app.log"  # readable all the same: the warning names the option
    log.write_bytes(b"".join(b"user=Jos\xe9 dur=%dms\n" % i for i in range(1, 41)))
    code, doc, err = _scan(capsys, str(log))
    assert code == 0, err
    (note,) = [w for w in doc["warnings"] if "not UTF-8" in w]
    assert note.startswith("40 lines held bytes that are not UTF-8") and "--encoding" in note


def test_shift_jis_keys_and_utf16_named(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    sjis = tmp_path / "app.log"
    lines = [f"2026-03-04T10:00:{i:02d}Z 注文 応答時間={i + 1}ms\n" for i in range(50)]
    sjis.write_bytes("".join(lines).encode("shift_jis"))
    code, doc, err = _scan(capsys, str(sjis), "--encoding", "shift_jis", "--field", "応答時間")
    assert code == 0, err
    s = doc["sketches"]["all"]
    assert s["n"] == 50 and s["p50"] == np.quantile(np.arange(1, 51), 0.5)
    assert s["time_first"] == "2026-03-04T10:00:00Z"
    u16 = tmp_path / "u16.csv"  # no byte-order mark, named: read as UTF-16 little-endian
    u16.write_bytes(("ms\n" + "".join(f"{i}\n" for i in range(1, 31))).encode("utf-16-le"))
    code, doc, err = _scan(capsys, str(u16), "--encoding", "utf-16-le")
    assert code == 0, err
    assert doc["sketches"]["all"]["n"] == 30


def test_utf8_named_is_what_is_read_anyway(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    path = tmp_path / "a.csv"
    path.write_text("host,ms\n" + "".join(f"café,{i}\n" for i in range(1, 101)))
    code, plain, _ = _scan(capsys, str(path), "--by", "host")
    code2, named, _ = _scan(capsys, str(path), "--by", "host", "--encoding", "UTF8")
    assert code == code2 == 0
    assert plain["sketches"] == named["sketches"]


def test_an_unknown_encoding_is_one_line(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    path = tmp_path / "a.csv"
    path.write_text("ms\n1\n")
    code, _, err = _scan(capsys, str(path), "--encoding", "klingon")
    assert code == 3 and err.count("\n") == 1 and "--encoding 'klingon': no such text encoding" in err


def test_a_decoded_file_is_read_whole_on_a_cluster(tmp_path: Path) -> None:
    """A part must start on a character: a file decoded from a named encoding is one part,
    as a UTF-16 file always was."""
    path = tmp_path / "export.tsv"
    _cp1252_export(path, n=5000)
    files = plan.list_sources([str(path)])
    options = ScanOptions(encoding="cp1252")
    decisions = decide([str(path)], options)
    assert decisions is not None
    assert [s.kind for s in plan.cut(files, decisions, 4096, named=options.encoding)] == [WHOLE]
    assert len(plan.cut(files, decisions, 4096)) > 1  # the same file as UTF-8 bytes is cut


def test_utf16_named_without_a_byte_order_mark(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    """Python's ``utf-16`` decoder refuses bytes without a byte-order mark (it ended in an
    internal error); the order is then read from the bytes. A wrong name gives garbage
    text, and the usual one-line error about it, never a traceback."""
    big = tmp_path / "be.csv"
    big.write_bytes(("ms\n" + "".join(f"{i}\n" for i in range(1, 21))).encode("utf-16-be"))
    code, doc, err = _scan(capsys, str(big), "--encoding", "utf-16")
    assert code == 0, err
    assert doc["sketches"]["all"]["n"] == 20 and doc["sketches"]["all"]["p50"] == 10.5
    plain = tmp_path / "a.log"
    plain.write_text("".join(f"2026-03-04T10:00:{i:02d}Z dur={i}ms\n" for i in range(40)))
    code, _, err = _scan(capsys, str(plain), "--encoding", "utf-16")
    assert code == 3 and err.count("\n") == 1 and "internal error" not in err
