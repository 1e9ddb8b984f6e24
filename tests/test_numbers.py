"""The one number formatter (ogive.numbers): what every table, sentence, screen and axis prints.

Expected strings are written out by hand from the rules in the module's docstring
(significant figures, spoken time units); none is produced by the code under test.
"""

from __future__ import annotations

import pytest

from ogive.numbers import count, duration, number, percent, quantity, signed, size


@pytest.mark.parametrize(
    ("value", "unit", "text"),
    [
        (0.412, "ms", "412 µs"),
        (12.345, "ms", "12.3 ms"),
        (1204.0, "ms", "1.20 s"),
        (999.96, "ms", "1.00 s"),  # rounds up across the unit boundary
        (0.9997, "ms", "1.00 ms"),
        (4.2, "us", "4.20 µs"),
        (700_000.0, "ms", "11.7 min"),
        (0.0, "ms", "0 ms"),
        (-5.5, "ms", "-5.50 ms"),
        (1834.0, "bytes", "1,834 bytes"),
        (0.25, "", "0.25"),
        (float("nan"), "ms", "–"),
        (float("inf"), "ms", "∞ ms"),
    ],
)
def test_quantity_in_tables(value: float, unit: str, text: str) -> None:
    assert quantity(value, unit) == text


def test_quantity_with_more_figures() -> None:
    assert quantity(3.6424, "ms", digits=4) == "3.642 ms"
    assert quantity(3000.0, "ms", digits=4) == "3.000 s"


@pytest.mark.parametrize(
    ("value", "unit", "text"),
    [
        (250, "ms", "250ms"),
        (1500, "ms", "1.5s"),
        (120_000, "ms", "2m"),
        (0.25, "s", "250ms"),
        (750, "us", "750µs"),
        (2_500_000, "bytes", "2.5M"),
        (0, "ms", "0"),
    ],
)
def test_quantity_compact_for_axes(value: float, unit: str, text: str) -> None:
    assert quantity(value, unit, compact=True) == text


def test_quantity_compact_ascii() -> None:
    assert quantity(750, "us", compact=True, ascii_only=True) == "750us"


@pytest.mark.parametrize(
    ("value", "text"),
    [
        (3.40213, "3.402"),
        (90.1, "90.1"),
        (3004.2, "3004"),
        (12345.6, "12346"),
        (0.012345, "0.01235"),
        (2.0e-37, "2.000e-37"),
        (1.2345e6, "1.234e+06"),
        (0.0, "0"),
        (float("inf"), "∞"),
        (float("-inf"), "-∞"),
        (float("nan"), "–"),
        (None, "–"),
    ],
)
def test_number(value: float | None, text: str) -> None:
    assert number(value) == text


def test_signed_and_short_numbers() -> None:
    assert signed(0.24) == "+0.24"
    assert signed(-2122.0) == "-2122"
    assert signed(0.0) == "0"
    assert number(2.04e-37, 2) == "2.0e-37"


@pytest.mark.parametrize(
    ("value", "kwargs", "text"),
    [
        (0.03944, {}, "3.94%"),
        (0.5967, {}, "59.7%"),
        (4.476, {"signed": True}, "+448%"),
        (0.071, {"signed": True}, "+7.10%"),
        (-0.706, {"signed": True}, "-70.6%"),
        (0.001, {}, "0.100%"),
        (0.1, {"signed": True, "compact": True}, "+10%"),
        (0.025, {"signed": True, "compact": True}, "+2.5%"),
        (0.0, {}, "0%"),
        (float("nan"), {}, "–"),
    ],
)
def test_percent(value: float, kwargs: dict[str, bool], text: str) -> None:
    assert percent(value, **kwargs) == text


def test_counts_sizes_durations() -> None:
    assert count(1_234_567) == "1.23M"
    assert count(12_000) == "12k"
    assert count(999) == "999"
    assert size(1536) == "1.5 KiB"
    assert size(3 * 1024**4) == "3.0 TiB"
    assert duration(75) == "1m15s"
    assert duration(7300) == "2h01m"
