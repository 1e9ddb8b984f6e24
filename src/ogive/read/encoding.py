"""Text encodings and byte hygiene: every later stage sees clean UTF-8 with ``\\n`` line ends.

Two levels, both cheap when there is nothing to do:

- **Per source** (``Transcoder``): the first bytes say whether the text is UTF-16 (a
  byte-order mark, or NULs in every other byte) or uses CR alone as the line end
  (classic Mac). Such a stream is transcoded to UTF-8 / ``\\n`` as it is read, and
  the caller is told once (``Recoded.note``).
- **Per chunk** (``clean``): bytes that are not UTF-8 are replaced with U+FFFD and
  NUL bytes are removed; the lines that held either are counted, with the first few
  line positions, so the scan can warn with locations. A chunk that is plain ASCII
  (the usual log) is checked with one ``bytes.isascii`` call and passed on untouched.

Nothing here prints raw input: notes and counts only.
"""

from __future__ import annotations

import codecs
import threading
from dataclasses import dataclass, field

import numpy as np

from ..errors import OgiveError

HEAD_BYTES = 4096
"""Bytes looked at to decide a source's encoding."""
EXAMPLES = 5
"""Line positions kept per condition (the first ones)."""
BINARY_SHARE = 0.10
"""A head with more than this share of control bytes (other than tab, CR, LF, FF and NUL
runs) is binary, not text."""

UTF8, UTF16LE, UTF16BE, CR_ONLY = "utf-8", "utf-16-le", "utf-16-be", "cr"


class NotUtf8(Exception):
    """Raised by a parser that validates UTF-8 itself (polars' CSV reader) when asked to
    leave bad bytes to the caller: the chunk is then cleaned (:func:`clean`) and parsed
    again. Cheaper than looking first: polars checks the bytes anyway, ~2x faster than
    ``bytes.isascii``, and most chunks are clean."""


def says_not_utf8(exc: Exception) -> bool:
    """Whether a parser's error is its complaint about bytes that are not UTF-8 (polars
    checks every byte of what it is given, not only the columns it reads)."""
    return "utf-8" in str(exc).lower()


@dataclass
class Cleaned:
    """A chunk made safe to parse, and what had to be done to it."""

    data: bytes
    bad_utf8: int = 0
    """Lines holding bytes that are not UTF-8 (each bad sequence became U+FFFD)."""
    bad_utf8_at: list[int] = field(default_factory=list)
    """0-based line indices (within the chunk) of the first such lines."""
    nul: int = 0
    """Lines holding NUL bytes (removed)."""
    nul_at: list[int] = field(default_factory=list)


_positions = threading.local()


def _record(exc: UnicodeError) -> tuple[str, int]:
    """A decode error handler that notes where each bad sequence starts."""
    assert isinstance(exc, UnicodeDecodeError)
    _positions.found.append(exc.start)
    return "\ufffd", exc.end


codecs.register_error("ogive-note", _record)


def clean(data: bytes) -> Cleaned:
    """``data`` as valid UTF-8 without NUL bytes, with the lines that needed it counted."""
    if data.isascii() and b"\0" not in data:
        return Cleaned(data)
    out = Cleaned(data)
    if b"\0" in data:
        nul_lines = _lines_of(data, np.flatnonzero(np.frombuffer(data, dtype=np.uint8) == 0))
        out.nul, out.nul_at = len(nul_lines), nul_lines[:EXAMPLES].tolist()
        data = data.replace(b"\0", b"")
    if not data.isascii():
        try:
            data.decode("utf-8")
        except UnicodeDecodeError:
            _positions.found = []
            try:
                text = data.decode("utf-8", errors="ogive-note")
                bad = np.asarray(_positions.found, dtype=np.int64)
            finally:
                _positions.found = []
            bad_lines = _lines_of(data, bad)  # positions in the bytes before replacement
            out.bad_utf8, out.bad_utf8_at = len(bad_lines), bad_lines[:EXAMPLES].tolist()
            data = text.encode("utf-8")
    out.data = data
    return out


def _lines_of(data: bytes, positions: np.ndarray) -> np.ndarray:
    """Distinct 0-based line indices of byte ``positions`` in ``data``."""
    newlines = np.flatnonzero(np.frombuffer(data, dtype=np.uint8) == 0x0A)
    return np.unique(np.searchsorted(newlines, positions))


def transcoded(named: str | None) -> bool:
    """Whether sources in the encoding the user named are decoded as they are read (and
    so are read whole, never from a byte offset: a part must start on a character)."""
    return named is not None and named != UTF8


def is_binary(head: bytes) -> bool:
    """Whether the head looks like binary data rather than text in any encoding we read."""
    if not head or sniff(head)[0] in (UTF16LE, UTF16BE):
        return False
    a = np.frombuffer(head, dtype=np.uint8)
    control = (a < 0x20) & ~np.isin(a, (0x09, 0x0A, 0x0C, 0x0D, 0x00))
    # Runs of NUL bytes (a preallocated log after a crash) are not a sign of binary data,
    # but NULs scattered among other bytes are.
    nul = a == 0
    scattered = int(nul.sum()) - int((nul[1:] & nul[:-1]).sum())
    return (int(control.sum()) + max(0, scattered - 1)) > BINARY_SHARE * a.size


def sniff(head: bytes) -> tuple[str, str | None]:
    """(encoding, note) from a source's first bytes; the note says what will be done."""
    if head.startswith(codecs.BOM_UTF16_LE):
        return UTF16LE, "the file is UTF-16 (little-endian, with a byte-order mark); read as such."
    if head.startswith(codecs.BOM_UTF16_BE):
        return UTF16BE, "the file is UTF-16 (big-endian, with a byte-order mark); read as such."
    sample = head[: HEAD_BYTES - HEAD_BYTES % 2]
    if len(sample) >= 8:
        a = np.frombuffer(sample, dtype=np.uint8)
        even, odd = a[0::2] == 0, a[1::2] == 0
        # ASCII-range text in UTF-16 has a NUL in nearly every other byte, on one side.
        if odd.mean() > 0.6 and even.mean() < 0.05:
            return (
                UTF16LE,
                "the file looks like UTF-16 little-endian without a byte-order mark; read as such.",
            )
        if even.mean() > 0.6 and odd.mean() < 0.05:
            return UTF16BE, "the file looks like UTF-16 big-endian without a byte-order mark; read as such."
    if b"\r" in head and b"\n" not in head and len(head) > 1:
        return CR_ONLY, "lines end with CR alone (no LF); each CR was read as a line end."
    return UTF8, None


_BOMS = {
    "utf-16": (codecs.BOM_UTF16_LE, codecs.BOM_UTF16_BE),
    "utf-32": (codecs.BOM_UTF32_LE, codecs.BOM_UTF32_BE),
}


class Transcoder:
    """Bytes of one source pushed in as they are read, handed on as UTF-8 with ``\\n``
    line ends.

    The encoding is decided from the first bytes: once ``HEAD_BYTES`` are in, or as
    soon as a newline and a few bytes are (a followed log must not wait for 4 KB), or
    at the end. UTF-8 with LF or CRLF line ends then passes through untouched (no
    copies), so ordinary files cost nothing here.
    """

    def __init__(self, named: str | None = None) -> None:
        self.named = named
        """The encoding the user named (``--encoding``, a codec's canonical name), or None."""
        self.encoding: str | None = None
        self.note: str | None = None
        """What was done to the stream, to tell the user once; None when nothing."""
        self._head = b""
        self._decoder: codecs.IncrementalDecoder | None = None
        self._bom_seen = False
        self._raw = 0
        self._out = 0

    @property
    def ratio(self) -> float:
        """Source bytes per byte handed on (1 for UTF-8; about 2 for UTF-16)."""
        return self._raw / self._out if self._out and self._decoder is not None else 1.0

    def push(self, raw: bytes) -> bytes:
        if self.encoding is None:
            self._head += raw
            if len(self._head) < HEAD_BYTES and not (b"\n" in self._head and len(self._head) >= 16):
                return b""
            raw, self._head = self._head, b""
            self._decide(raw)
        return self._convert(raw, final=False)

    def end(self) -> bytes:
        """What is still held at the end of the input."""
        raw = b""
        if self.encoding is None:
            raw, self._head = self._head, b""
            self._decide(raw)
        return self._convert(raw, final=True)

    def _decide(self, head: bytes) -> None:
        if self.named is not None and transcoded(self.named):
            # Named by the user: decoded as such (bytes it cannot read become U+FFFD).
            chosen, self.note = self.named, None
            if chosen in ("utf-16", "utf-32") and not head.startswith(_BOMS[chosen]):
                # Python's decoder refuses these without a byte-order mark: the order is
                # read from the bytes as when nothing is named, little-endian by default.
                guess = sniff(head)[0]
                chosen = f"{chosen}-be" if guess == UTF16BE else f"{chosen}-le"
        else:
            chosen, self.note = sniff(head)
        self.encoding = chosen
        if chosen not in (UTF8, CR_ONLY):
            self._decoder = codecs.getincrementaldecoder(chosen)(errors="replace")

    def _convert(self, raw: bytes, *, final: bool) -> bytes:
        if self.encoding == UTF8:
            return raw
        if self.encoding == CR_ONLY:
            return raw.replace(b"\r", b"\n")
        assert self._decoder is not None
        try:
            text = self._decoder.decode(raw, final)
        except UnicodeError as exc:  # a codec that refuses rather than replaces
            raise OgiveError(f"the bytes cannot be read as {self.encoding}: {exc}.") from None
        if not self._bom_seen and text:
            self._bom_seen = True
            text = text.removeprefix("\ufeff")
        out = text.encode("utf-8", errors="replace")
        self._raw += len(raw)
        self._out += len(out)
        return out
