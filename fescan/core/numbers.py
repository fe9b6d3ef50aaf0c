"""Numbers with as many digits as their interval supports.

:func:`format_with_interval` prints a value with its interval; the value is rounded
to the decimal place of the first significant digit of its smaller deviation from
the interval's ends (the usual rule for quoting a value with its uncertainty;
common practice, no source), never to fewer than one significant digit. Times in
seconds get an SI prefix (s, ms, µs, ns, ps); other units are printed with a power
of ten when very large or small.
"""

from __future__ import annotations

import math

__all__ = ["significant_digits", "round_sig", "format_with_interval", "format_quantity"]

_PREFIXES = ((1.0, ""), (1e-3, "m"), (1e-6, "µ"), (1e-9, "n"), (1e-12, "p"), (1e-15, "f"))


def _finite(*xs: float | None) -> bool:
    return all(x is not None and math.isfinite(x) for x in xs)


def significant_digits(value: float, low: float | None, high: float | None, *, max_digits: int = 3) -> int:
    """Significant digits of ``value`` that the interval [low, high] supports (1 to ``max_digits``).

    Examples
    --------
    >>> significant_digits(123.0, 120.0, 126.0)
    3
    >>> significant_digits(123.0, 60.0, 250.0)
    2
    >>> significant_digits(123.0, 20.0, 800.0)
    1
    >>> significant_digits(24.9, 20.0, 31.0)
    2
    """
    if not _finite(value, low, high) or value == 0:
        return max_digits
    dev = min(abs(value - low), abs(high - value))
    if dev == 0:
        dev = max(abs(value - low), abs(high - value))
    if dev == 0:
        return max_digits
    digits = math.floor(math.log10(abs(value))) - math.floor(math.log10(dev)) + 1
    return max(1, min(max_digits, digits))


def round_sig(value: float, digits: int) -> float:
    """``value`` rounded to ``digits`` significant digits.

    Examples
    --------
    >>> round_sig(0.0001234, 2)
    0.00012
    """
    if not _finite(value) or value == 0:
        return value
    return round(value, digits - 1 - math.floor(math.log10(abs(value))))


def _scaled(value: float, unit: str, ref: float) -> tuple[float, str]:
    """(factor, unit with prefix) chosen from ``ref`` for seconds; (1, unit) otherwise."""
    if unit != "s" or not _finite(ref) or ref == 0:
        return 1.0, unit
    for f, p in _PREFIXES:
        if abs(ref) >= f * 0.9995:
            return f, p + unit
    return _PREFIXES[-1][0], _PREFIXES[-1][1] + unit


def _plain(x: float, digits: int) -> str:
    """``x`` (already rounded) with exactly ``digits`` significant digits, powers of ten when extreme."""
    if x == 0:
        return "0"
    exp = math.floor(math.log10(abs(x)))
    if exp >= 4 or exp <= -4 or (exp == 3 and digits <= 3):
        mant = x / 10.0**exp
        return f"{mant:.{max(0, digits - 1)}f}×10^{exp}"
    decimals = max(0, digits - 1 - exp)
    return f"{x:.{decimals}f}"


def format_quantity(value: float | None, unit: str = "", digits: int = 2) -> str:
    """A value with ``digits`` significant digits and its unit (SI prefix for seconds).

    Examples
    --------
    >>> format_quantity(1.234e-4, "s")
    '120 µs'
    >>> format_quantity(float("inf"), "s")
    'not reached'
    """
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return "undetermined"
    if math.isinf(value):
        return "not reached"
    f, u = _scaled(value, unit, value)
    v = round_sig(value / f, digits)
    return f"{_plain(v, digits)} {u}".rstrip()


def format_with_interval(value: float | None, low: float | None, high: float | None, unit: str = "",
                         *, level: str = "95%", max_digits: int = 3) -> str:
    """A value and its interval, the value carrying no more digits than the interval supports.

    Parameters
    ----------
    value : float or None
        Point estimate (``None``/NaN: "undetermined"; inf: "not reached").
    low, high : float or None
        Interval ends; when missing the value gets ``max_digits`` digits and
        "(no interval)".
    unit : str, optional
        ``"s"`` gets an SI prefix chosen from the value; any other unit is appended.
    level : str, optional
        Coverage label printed with the interval (default ``"95%"``).
    max_digits : int, optional
        Most significant digits ever printed (default 3).

    Returns
    -------
    str

    Examples
    --------
    >>> format_with_interval(1.234e-4, 2.1e-5, 8.3e-4, "s")
    '100 µs (95%: 20 µs to 800 µs)'
    >>> format_with_interval(0.0249, 0.0201, 0.0312, "s")
    '25 ms (95%: 20 ms to 31 ms)'
    >>> format_with_interval(0.0249, 2.1e-4, 6.3, "s")
    '20 ms (95%: 200 µs to 6 s)'
    >>> format_with_interval(2.0e4, 3.1e3, 1.2e5, "s⁻¹")
    '2×10^4 s⁻¹ (95%: 3×10^3 s⁻¹ to 1×10^5 s⁻¹)'
    """
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return "undetermined"
    if math.isinf(value):
        return "not reached"
    if not _finite(low, high):
        return f"{format_quantity(value, unit, max_digits)} (no interval)"
    lo, hi = min(low, high), max(low, high)
    n = significant_digits(value, lo, hi, max_digits=max_digits)
    f, u = _scaled(value, unit, value)
    v = round_sig(value / f, n)
    # the ends need no more digits than the value (two at most), each with its own prefix
    m = min(n, 2)
    ends = []
    for x in (lo, hi):
        fx, ux = _scaled(x, unit, x) if x != 0 else (f, u)
        ends.append(f"{_plain(round_sig(x / fx, m), m)} {ux}".rstrip())
    sep = f" {u}" if u else ""
    return f"{_plain(v, n)}{sep} ({level}: {ends[0]} to {ends[1]})"
