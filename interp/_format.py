"""Numbers as text for reports: fixed-point at the data's resolution, never rounded to a
few significant digits (survey coordinates such as 4180000.25 keep their centimetres).
"""

from __future__ import annotations

import math

import numpy as np

#: values sampled to find the resolution of a data set.
SAMPLE = 10_000

#: the most decimal places a resolution is looked for in.
MOST_DECIMALS = 6

#: significant digits a small result keeps beyond the data's resolution.
DIGITS = 6

SUPERSCRIPTS = {2: "\u00b2", 3: "\u00b3"}


def decimals(values: object) -> int:
    """Decimal places that hold the finite values exactly (their resolution), at most 6.

    Examples
    --------
    >>> decimals([4180000.25, 4180000.5, 12.0])
    2
    >>> decimals([1.0, 2.0]), decimals([0.1234567891])
    (0, 6)
    """
    v = np.asarray(values, dtype=np.float64).ravel()
    v = v[np.isfinite(v)]
    if v.size > SAMPLE:
        v = v[:: v.size // SAMPLE]
    for k in range(MOST_DECIMALS + 1):
        scaled = v * 10.0**k
        if np.all(np.abs(scaled - np.round(scaled)) <= np.maximum(1e-6, 1e-12 * np.abs(scaled))):
            return k
    return MOST_DECIMALS


def number(value: float | None, places: int = 0) -> str:
    """``value`` in fixed point with at least ``places`` decimals and 6 significant digits.

    Decimals beyond ``places`` that only the significant digits asked for
    are trimmed of trailing zeros.  A value that is zero to 6 decimals beyond
    ``places`` (a million times finer than the resolution: the round-off of a
    volume that is zero) prints as 0 at that resolution.  None and NaN print
    as ``-``.

    Examples
    --------
    >>> number(4180000.25, 2), number(11691234.5, 2), number(0.5), number(0.0031234567, 2)
    ('4180000.25', '11691234.50', '0.5', '0.00312346')
    >>> number(None), number(float("nan")), number(-2.0), number(2.0, 1)
    ('-', '-', '-2', '2.0')
    >>> number(2.2e-11, 3), number(-2.2e-11, 3), number(2.2e-8, 3)
    ('0.000', '0.000', '0.000000022')
    """
    if value is None or math.isnan(value):
        return "-"
    if math.isinf(value):
        return "inf" if value > 0 else "-inf"
    magnitude = math.floor(math.log10(abs(value))) if value else 0
    k = min(max(places, DIGITS - 1 - magnitude), 12)
    if abs(value) < 0.5 * 10.0 ** -(places + DIGITS):
        k = places  # zero at a million times the resolution: round-off of a zero
        value = 0.0
    text = f"{value:.{k}f}"
    if k > places:
        head, _, tail = text.partition(".")
        tail = tail.rstrip("0").ljust(places, "0")
        text = head + ("." + tail if tail else "")
    return text


def unit_power(units: str | None, power: int) -> str:
    """The unit of a length raised to ``power`` (``m``, ``m²``, ``m³``), or ``""``.

    Examples
    --------
    >>> unit_power("m", 3), unit_power("ft", 1), unit_power(None, 2)
    ('m³', 'ft', '')
    """
    if not units:
        return ""
    return units if power == 1 else units + SUPERSCRIPTS.get(power, f"^{power}")


def table(rows: list[tuple[str, str, str]]) -> list[str]:
    """Rows of (quantity, value, unit) as aligned lines: names left, values right.

    Examples
    --------
    >>> table([("material above", "12.50", "m³"), ("area covered", "1000.00", "m²")])
    ['  material above    12.50  m³', '  area covered    1000.00  m²']
    """
    name = max(len(r[0]) for r in rows)
    value = max(len(r[1]) for r in rows)
    return [f"  {a:<{name}}  {b:>{value}}  {c}".rstrip() for a, b, c in rows]
