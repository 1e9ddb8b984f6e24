"""Keep the C heap from handing chunk-sized blocks back to the kernel between chunks.

A scan allocates and frees the same few buffers over and over: each 4-8 MB chunk of
the source, and the arrays decoded from it. glibc's ``malloc`` serves a block above its
mmap threshold (128 KB at first, raised to the size of the largest block freed, at most
32 MB) with a fresh ``mmap``, and gives freed memory at the top of the heap back once
more than the trim threshold is free. Either way the next chunk lands on new pages, and
the kernel zero-fills every 4 KB page of it on first touch: measured on a 1 GB CSV,
~100,000 page faults and 0.3-0.45 CPU-s of system time just to read the file (0.08 s
for the same reads into a recycled buffer).

:func:`keep_chunks` raises both thresholds once per process, through ``mallopt``
(glibc's documented tuning call, see mallopt(3)), so freed chunk memory is reused
instead. What is kept is memory the scan already had in use (a few chunks in flight);
peaks measured 0-10 MB higher, never more than ``TRIM_KEEP``.
Elsewhere (musl, macOS) nothing is done.
"""

from __future__ import annotations

import ctypes
import sys
import threading

M_TRIM_THRESHOLD = -1
M_MMAP_THRESHOLD = -3
"""Parameter numbers from glibc's ``<malloc.h>``."""
MMAP_THRESHOLD = 32 << 20
"""The largest value glibc accepts on 64-bit (``DEFAULT_MMAP_THRESHOLD_MAX``): chunks
of up to 32 MB come from the heap and are reused."""
TRIM_KEEP = 32 << 20
"""Free memory at the heap's top kept for reuse before any is returned to the kernel.
Measured on 1 GB of CSV: 0/16/32/64 MB kept gave ~88k/55k/65k/39k page faults; 64 MB
raised the peak of text scans by up to 10 MB, so 32."""

_done: bool | None = None
"""None until tried; then whether glibc took the thresholds."""
_lock = threading.Lock()


def keep_chunks() -> bool:
    """Set the thresholds once; True when glibc took them (False elsewhere, harmlessly)."""
    global _done
    with _lock:
        if _done is None:
            _done = _tune()
        return _done


def _tune() -> bool:
    if not sys.platform.startswith("linux"):
        return False
    try:
        libc = ctypes.CDLL(None)  # the process's own symbols: libc is linked in
        mallopt = libc.mallopt
    except (OSError, AttributeError):
        return False  # not glibc (musl has no mallopt to speak of): nothing to tune
    mallopt.argtypes = (ctypes.c_int, ctypes.c_int)
    mallopt.restype = ctypes.c_int
    return bool(mallopt(M_MMAP_THRESHOLD, MMAP_THRESHOLD)) and bool(mallopt(M_TRIM_THRESHOLD, TRIM_KEEP))
