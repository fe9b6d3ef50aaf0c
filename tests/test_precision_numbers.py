"""Printed numbers carry no more digits than their interval supports (fescan.core.numbers).

Source: the usual rule for quoting a value with its uncertainty — round the value to the decimal place
of the uncertainty's first significant digit (common practice, no source); SI prefixes (common practice).
"""

from __future__ import annotations

import math

import pytest

from fescan.core.numbers import format_quantity, format_with_interval, round_sig, significant_digits


@pytest.mark.parametrize("value, low, high, digits", [
    (123.0, 122.0, 124.0, 3),   # uncertainty 1: units place
    (123.0, 113.0, 133.0, 2),   # uncertainty 10: tens place
    (123.0, 23.0, 900.0, 1),    # uncertainty 100: hundreds place
    (0.0249, 0.0248, 0.0250, 3),
    (5.0e-4, 4.0e-5, 3.0e-3, 1),
])
def test_significant_digits_follow_the_smaller_deviation(value, low, high, digits):
    assert significant_digits(value, low, high) == digits


def test_wide_interval_prints_one_digit():
    # a mean first-passage time of 24.9 ms whose 95 % interval spans 0.2 ms to 6 s: one digit is all it supports
    text = format_with_interval(0.0249, 2.1e-4, 6.3, "s")
    assert text.startswith("20 ms")
    assert "24.9" not in text and "25" not in text


def test_narrow_interval_keeps_digits_and_prefixes():
    assert format_with_interval(1.234e-4, 1.229e-4, 1.239e-4, "s").startswith("123 µs")
    assert format_with_interval(2.5e-9, 2.0e-9, 3.0e-9, "s").startswith("2.5 ns")
    assert format_quantity(1.5, "s") == "1.5 s"


def test_printed_value_never_finer_than_the_interval():
    # for a spread of intervals, the printed value is the value rounded to the decimal place of the
    # first significant digit of its smaller deviation from the interval's ends
    for value, low, high in [(7.31e-5, 1.1e-5, 4.0e-4), (0.731, 0.70, 0.79), (731.0, 600.0, 990.0),
                             (3.3e-6, 3.2e-6, 3.5e-6)]:
        text = format_with_interval(value, low, high, "s")
        num, unit = text.split()[:2]
        scale = {"s": 1.0, "ms": 1e-3, "µs": 1e-6, "ns": 1e-9}[unit]
        place = 10.0 ** math.floor(math.log10(min(value - low, high - value)))
        assert float(num) * scale == pytest.approx(round(value / place) * place, rel=1e-9)


def test_undetermined_and_missing_intervals():
    assert format_with_interval(None, 1.0, 2.0, "s") == "undetermined"
    assert format_with_interval(math.inf, 1.0, 2.0, "s") == "not reached"
    assert format_with_interval(1.2345e-3, None, None, "s") == "1.23 ms (no interval)"
    assert round_sig(0.0001234, 2) == pytest.approx(0.00012)
