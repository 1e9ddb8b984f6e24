"""The C heap tuning a scan turns on (``ogive.read.heap``): taken once, harmless twice,
and scans read the same with it as without (the repeatability tests run with it on)."""

from __future__ import annotations

import platform
import sys

import pytest

from ogive.read import heap


def test_keep_chunks_is_taken_once_and_answers_the_same_after() -> None:
    first = heap.keep_chunks()
    assert heap.keep_chunks() is first
    if sys.platform.startswith("linux") and "glibc" in platform.libc_ver()[0]:
        assert first, "glibc's mallopt(3) accepts both thresholds (32 MB is its documented mmap maximum)"


@pytest.mark.skipif(not sys.platform.startswith("linux"), reason="glibc only")
def test_thresholds_are_within_what_glibc_documents() -> None:
    # mallopt(3): M_MMAP_THRESHOLD may not exceed DEFAULT_MMAP_THRESHOLD_MAX, 32 MB on 64-bit.
    assert heap.MMAP_THRESHOLD <= 32 << 20
    assert heap.TRIM_KEEP >= heap.MMAP_THRESHOLD
