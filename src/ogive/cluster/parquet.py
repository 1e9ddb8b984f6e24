"""The row groups of a Parquet file, from its footer: one map task per few row groups.

A Parquet file ends with its metadata (``FileMetaData``), its length as a 4-byte
little-endian integer, and the magic ``PAR1`` (Apache Parquet format specification,
"File format"). The metadata is a Thrift struct in the compact protocol (Apache Thrift,
"Thrift Compact protocol encoding", doc/specs/thrift-compact-protocol.md); this module
reads just enough of it to list each row group's ``num_rows`` (field 3) and
``total_byte_size`` (field 2) from ``FileMetaData.row_groups`` (field 4), skipping
everything else by its wire type. Two small reads per file, no Parquet library needed.
"""

from __future__ import annotations

import struct
from dataclasses import dataclass
from typing import Any, BinaryIO

from ..errors import OgiveError

MAGIC = b"PAR1"
MAX_FOOTER = 64 << 20
"""A footer beyond this is taken for damage, not metadata."""

# Compact protocol wire types.
_TRUE, _FALSE, _BYTE, _I16, _I32, _I64, _DOUBLE, _BINARY, _LIST, _SET, _MAP, _STRUCT = range(1, 13)


@dataclass(frozen=True)
class RowGroup:
    rows: int
    nbytes: int
    """Uncompressed bytes of the group's column data (``total_byte_size``)."""


def row_groups(raw: BinaryIO, size: int, name: str) -> list[RowGroup]:
    """The row groups of the Parquet file open in ``raw`` (``size`` bytes), in file order."""
    if size < 12:
        raise OgiveError(f"{name} is too short to be a Parquet file.")
    raw.seek(size - 8)
    tail = raw.read(8)
    length = struct.unpack("<I", tail[:4])[0]
    if tail[4:] != MAGIC or not 0 < length <= min(MAX_FOOTER, size - 12):
        raise OgiveError(f"{name}: the Parquet footer is missing or damaged.")
    raw.seek(size - 8 - length)
    try:
        meta = _Reader(raw.read(length)).struct()
        groups = meta.get(4, [])
        return [RowGroup(int(g.get(3, 0)), int(g.get(2, 0))) for g in groups]
    except (IndexError, ValueError, AttributeError, struct.error) as exc:
        raise OgiveError(f"{name}: the Parquet footer cannot be read ({exc}).") from None


class _Reader:
    """A Thrift compact-protocol decoder into plain values: structs as {field id: value}."""

    def __init__(self, data: bytes) -> None:
        self.data = data
        self.pos = 0

    def byte(self) -> int:
        b = self.data[self.pos]
        self.pos += 1
        return b

    def varint(self) -> int:
        out = shift = 0
        while True:
            b = self.byte()
            out |= (b & 0x7F) << shift
            if not b & 0x80:
                return out
            shift += 7
            if shift > 70:
                raise ValueError("varint too long")

    def zigzag(self) -> int:
        n = self.varint()
        return (n >> 1) ^ -(n & 1)

    def value(self, kind: int) -> Any:
        if kind in (_TRUE, _FALSE):  # a bool field carries its value in the type; in a list, a byte
            return kind == _TRUE
        if kind == _BYTE:
            return self.byte()
        if kind in (_I16, _I32, _I64):
            return self.zigzag()
        if kind == _DOUBLE:
            self.pos += 8
            return struct.unpack("<d", self.data[self.pos - 8 : self.pos])[0]
        if kind == _BINARY:
            n = self.varint()
            self.pos += n
            return self.data[self.pos - n : self.pos]
        if kind in (_LIST, _SET):
            head = self.byte()
            n = head >> 4 if head >> 4 != 15 else self.varint()
            elem = head & 0x0F
            if elem in (_TRUE, _FALSE):
                return [self.byte() == 1 for _ in range(n)]
            return [self.value(elem) for _ in range(n)]
        if kind == _MAP:
            n = self.varint()
            if not n:
                return {}
            types = self.byte()
            return {self.value(types >> 4): self.value(types & 0x0F) for _ in range(n)}
        if kind == _STRUCT:
            return self.struct()
        raise ValueError(f"unknown compact type {kind}")

    def struct(self) -> dict[int, Any]:
        out: dict[int, Any] = {}
        field = 0
        while True:
            head = self.byte()
            if head == 0:
                return out
            delta, kind = head >> 4, head & 0x0F
            field = field + delta if delta else self.zigzag()
            out[field] = self.value(kind)
