"""Reference values in 50-digit decimal arithmetic (Python's standard ``decimal`` module).

The extreme-input tests compare the service with the same published formula evaluated far beyond
double precision, from the exact values of the double inputs (``Decimal(float)`` is exact), so a
check can tell "right to rounding" from "wrong in the last few digits" or "wrong altogether". The
trigonometric functions are Taylor series with range reduction; ``ln``, ``exp``, ``sqrt`` and powers
are the decimal module's own, correctly rounded to the context's precision.
"""

from __future__ import annotations

from decimal import Decimal, localcontext

DIGITS = 50
#: pi to 60 digits (from memory; checked against Machin's formula by :func:`machin_pi` in the tests).
PI = Decimal("3.14159265358979323846264338327950288419716939937510582097494")


def D(x) -> Decimal:
    """The exact value of a double (or an int, or a decimal string)."""
    return x if isinstance(x, Decimal) else Decimal(x)


def _sin_series(x: Decimal) -> Decimal:
    term, total, n = x, x, 1
    while abs(term) > Decimal(10) ** -(DIGITS + 5) * (abs(total) or 1):
        term = -term * x * x / ((2 * n) * (2 * n + 1))
        total += term
        n += 1
    return total


def sin_deg(degrees) -> Decimal:
    """sin of an angle in degrees, for |angle| <= 180."""
    with localcontext() as ctx:
        ctx.prec = DIGITS + 10
        degrees = D(degrees)
        if abs(degrees) > 90:  # sin(180 - a) = sin(a)
            degrees = (180 if degrees > 0 else -180) - degrees
        result = _sin_series(degrees * PI / 180)
    return result


def cos_deg(degrees) -> Decimal:
    """cos of an angle in degrees, as sin of its complement (so 90 - 1e-12 keeps every digit)."""
    with localcontext() as ctx:
        ctx.prec = DIGITS + 10
        result = sin_deg(90 - abs(D(degrees)))
    return result


def tan_deg(degrees) -> Decimal:
    with localcontext() as ctx:
        ctx.prec = DIGITS + 10
        result = sin_deg(degrees) / cos_deg(degrees)
    return result


def power(base, exponent) -> Decimal:
    """base ** exponent for a positive base, through exp(exponent ln base)."""
    with localcontext() as ctx:
        ctx.prec = DIGITS + 10
        result = (D(exponent) * D(base).ln()).exp()
    return result


def machin_pi() -> Decimal:
    """pi from Machin's formula, pi = 16 arctan(1/5) - 4 arctan(1/239), to check :data:`PI`."""

    def arctan(x: Decimal) -> Decimal:
        term, total, n = x, x, 1
        while abs(term) > Decimal(10) ** -(DIGITS + 8):
            term = -term * x * x
            total += term / (2 * n + 1)
            n += 1
        return total

    with localcontext() as ctx:
        ctx.prec = DIGITS + 10
        return 16 * arctan(Decimal(1) / 5) - 4 * arctan(Decimal(1) / 239)


def rel(actual, expected) -> float:
    """Relative difference of a float from a decimal reference."""
    expected = D(expected)
    return float(abs(D(float(actual)) - expected) / abs(expected))


def compressibility_factor(mach, gamma) -> Decimal:
    """NACA Report 1135, eq. 44: f = (gamma M^2 / 2) / ((1 + (gamma - 1) M^2 / 2)^(gamma / (gamma - 1)) - 1).

    For x = (gamma - 1) M^2 / 2 below 1e-30 the series f = 1 - (c - 1) x / 2 + O(x^2), c = gamma / (gamma - 1),
    from the binomial expansion of the denominator, is exact to the context's precision (the O(x^2) term is
    below 1e-60), where 1 + x itself would round to 1.
    """
    with localcontext() as ctx:
        ctx.prec = DIGITS + 10
        m, g = D(mach), D(gamma)
        c = g / (g - 1)
        x = (g - 1) / 2 * m * m
        if x < Decimal("1e-30"):
            return 1 - (c - 1) * x / 2
        return c * x / ((c * (1 + x).ln()).exp() - 1)
