"""How ogive writes numbers for people: one formatter for every table, label, sentence and screen.

The CLI's tables, the gate's sentences, the workspace's panels, the exported report and
the plot axes all write their numbers through these functions, so the same value reads
the same everywhere (a tail error is ``3.94%`` in ``ogive fit`` and on screen alike).
Formatting only: nothing here computes a statistic. The module imports nothing of
ogive but the time-unit table, so every layer may use it.

* :func:`number` — a plain number with a few significant figures (table cells whose
  unit is in the header).
* :func:`quantity` — a value with its unit, durations rescaled to the unit a person
  would say (``412 µs``, ``12.3 ms``, ``1.20 s``); ``compact`` gives axis labels
  (``250ms``, ``1.5s``, ``2.5M``).
* :func:`percent` — a share or a relative change (``3.94%``, ``+7.10%``).
* :func:`count`, :func:`size`, :func:`duration` — counts, bytes and elapsed time in
  narrow places (``12.3k``, ``1.5 GiB``, ``1m15s``).
"""

from __future__ import annotations

import math

from .sketch.units import SECONDS_PER_UNIT

MISSING = "–"
"""What an absent number (None, NaN) is written as."""

_SPACED_STEPS = (("ns", 1e-9), ("µs", 1e-6), ("ms", 1e-3), ("s", 1.0))
_SPOKEN = (("h", 3600.0), ("m", 60.0), ("s", 1.0), ("ms", 1e-3), ("µs", 1e-6))


def _fixed(x: float, digits: int, *, trim: bool) -> str:
    """``x`` with ``digits`` significant figures in fixed notation (no exponent)."""
    if x == 0:
        return "0"
    decimals = max(digits - 1 - math.floor(math.log10(abs(x))), 0)
    text = f"{x:.{decimals}f}"
    if trim and "." in text:
        text = text.rstrip("0").rstrip(".")
    return "0" if text in ("-0", "") else text


def _infinite(x: float, ascii_only: bool = False) -> str:
    if math.isnan(x):
        return MISSING
    sign = "-" if x < 0 else ""
    return sign + ("inf" if ascii_only else "∞")


def number(x: float | int | None, digits: int = 4) -> str:
    """``3.402``, ``0.0123``, ``1.235e+06``: ``digits`` significant figures, trailing zeros dropped.

    Exponent notation only below 0.001 and from a million up, where fixed notation
    would print a row of zeros. ``∞`` for a side the data cannot bound, ``–`` for none.
    """
    if x is None:
        return MISSING
    v = float(x)
    if not math.isfinite(v):
        return _infinite(v)
    if v == 0:
        return "0"
    a = abs(v)
    if a >= 1e6 or a < 1e-3:
        return f"{v:.{max(digits - 1, 0)}e}"
    return _fixed(v, digits, trim=True)


def signed(x: float | None, digits: int = 4) -> str:
    """:func:`number` with an explicit ``+`` on positive values (a change)."""
    text = number(x, digits)
    return text if x is None or text.startswith("-") or text in ("0", MISSING) else "+" + text


def quantity(
    x: float | None, unit: str, *, digits: int = 3, compact: bool = False, ascii_only: bool = False
) -> str:
    """A value in its unit, durations in the unit a person would say.

    Spaced (tables, sentences): ``3.40 ms``, ``210 µs``, ``4.50 min``, ``1,234 bytes``;
    ``digits`` significant figures, kept even when zero, because the sketch's own error
    is larger than the next figure anywhere but at the exact tails. Compact (axis
    labels): ``3.4ms``, ``250ms``, ``1.5s``, ``2m``, ``2.5M``.
    """
    if x is None:
        return MISSING
    v = float(x)
    if not math.isfinite(v):
        text = _infinite(v, ascii_only)
        return text if compact or text == MISSING else f"{text} {unit}".rstrip()
    if compact:
        return _compact(v, unit, digits, ascii_only)
    if unit in SECONDS_PER_UNIT:
        return _spaced_time(v, unit, digits)
    a = abs(v)
    if a < 1e7 and (v == int(v) or a >= 10 ** (digits - 1)):
        text = f"{v:,.0f}"
    elif a >= 1e7:
        text = f"{v:.{digits + 1}g}"
    else:
        text = _sig(v, digits)
    return f"{text} {unit}" if unit else text


def _spaced_time(v: float, unit: str, digits: int) -> str:
    if v == 0:
        return f"0 {unit}"
    # Round first, then choose the unit, so 999.7 µs reads 1.00 ms and not 1000 µs.
    seconds = float(f"{v * SECONDS_PER_UNIT[unit]:.{digits}g}")
    a = abs(seconds)
    if a >= 3 * 3600:
        return f"{_sig(seconds / 3600, digits)} h"
    if a >= 600:
        return f"{_sig(seconds / 60, digits)} min"
    name, scale = _SPACED_STEPS[0]
    for step, size in _SPACED_STEPS:
        if a >= size:
            name, scale = step, size
    return f"{_sig(seconds / scale, digits)} {name}"


def _sig(x: float, digits: int) -> str:
    """Fixed notation with trailing zeros kept from 1 up (``3.00``); a general format below
    1 (``0.5``) and for absurd sizes (a 1e308 in a log must not print 300 digits)."""
    a = abs(x)
    if a >= 1e6 or a < 1:
        return f"{x:.{digits}g}"
    return _fixed(x, digits, trim=False)


def _compact(v: float, unit: str, digits: int, ascii_only: bool) -> str:
    if v == 0:
        return "0"
    if unit in SECONDS_PER_UNIT:
        seconds = v * SECONDS_PER_UNIT[unit]
        a = abs(seconds)
        for name, size in _SPOKEN:
            if a >= size * 0.9995:
                label = "us" if (name == "µs" and ascii_only) else name
                return _fixed(seconds / size, digits, trim=True) + label
        return _fixed(seconds / 1e-9, digits, trim=True) + "ns"
    a = abs(v)
    for size, suffix in ((1e12, "T"), (1e9, "G"), (1e6, "M"), (1e3, "k")):
        if a >= size * 0.9995:
            return _fixed(v / size, digits, trim=True) + suffix
    if a < 1e-3:
        return f"{v:.{max(digits - 1, 0)}e}"
    return _fixed(v, digits, trim=True)


def percent(x: float | None, *, signed: bool = False, compact: bool = False, digits: int = 3) -> str:
    """A fraction as a percentage: ``0.0394`` -> ``3.94%``; with ``signed``, ``+7.10%``.

    ``digits`` significant figures (at most ``digits`` decimals: ``0.012%``), none
    after the point from 100 % up (``+448%``); a confidence level wants four
    (``99.17%``). ``compact`` drops trailing zeros (axis labels: ``+10%``).
    """
    if x is None or math.isnan(x):
        return MISSING
    v = x * 100
    if not math.isfinite(v):
        return _infinite(v) + "%"
    if v == 0:
        return "0" if compact else "0%"
    decimals = min(max(digits - 1 - math.floor(math.log10(abs(v))), 0), digits)
    text = f"{v:.{decimals}f}"
    if compact and "." in text:
        text = text.rstrip("0").rstrip(".")
    if text.lstrip("-").strip("0.") == "":
        text = "0"
    return ("+" if signed and v > 0 else "") + text + "%"


def count(value: int | float | None) -> str:
    """``1234567`` -> ``1.23M``: counts within six characters (lists, status lines)."""
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return MISSING
    v = float(value)
    for factor, suffix in ((1e9, "G"), (1e6, "M"), (1e3, "k")):
        if abs(v) >= factor:
            return f"{v / factor:.3g}{suffix}"
    return f"{int(v)}"


def size(nbytes: int | None) -> str:
    """Bytes in binary units (``1.5 GiB``)."""
    if nbytes is None:
        return "?"
    v = float(nbytes)
    for unit in ("B", "KiB", "MiB", "GiB"):
        if v < 1024:
            return f"{v:.0f} {unit}" if unit == "B" else f"{v:.1f} {unit}"
        v /= 1024
    return f"{v:.1f} TiB"


def duration(seconds: float | None) -> str:
    """``75`` -> ``1m15s``: elapsed or remaining time in a status line."""
    if seconds is None or math.isnan(seconds):
        return "?"
    s = round(seconds)
    if s < 60:
        return f"{s}s"
    if s < 3600:
        return f"{s // 60}m{s % 60:02d}s"
    return f"{s // 3600}h{(s % 3600) // 60:02d}m"


def span(low: float, high: float, unit: str, *, digits: int = 3) -> str:
    """A bucket or a bound as words: ``250 ms to 500 ms``, ``above 10 s``, ``at most 5 ms``,
    ``exactly 0 ms`` (an open end is said, never written as infinity)."""
    if low == high:
        return f"exactly {quantity(low, unit, digits=digits)}"
    if math.isinf(high) and math.isinf(low):
        return "anywhere (no bucket edge bounds it)"
    if math.isinf(high):
        return f"above {quantity(low, unit, digits=digits)}"
    if math.isinf(low):
        return f"at most {quantity(high, unit, digits=digits)}"
    return f"{quantity(low, unit, digits=digits)} to {quantity(high, unit, digits=digits)}"
