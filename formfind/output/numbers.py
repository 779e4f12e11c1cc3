"""Numbers written for people: a stated precision, no binary float artefacts, never -0, never inf or nan.

Tables and reports round before they print: lengths that set out the arch to the millimetre (0.001 m),
angles to 0.001 degree, forces and moments to six significant digits (far finer than any load is
known, and free of the ``0.8999999999999999`` a float's shortest repr can give). JSON keeps full
precision; these helpers are for CSV, the terminal, the report and the drawing.

A value that is not finite prints as ``MISSING`` (an empty CSV cell) or, in prose and tables for
reading, as ``DASH``; the caller says why in a note.
"""

from __future__ import annotations

import math

import numpy as np

DASH = "\u2013"  # an en dash: "no value" in tables for reading
MISSING = ""  # an empty cell: "no value" in CSV

SIGNIFICANT = 6  # forces, moments, stresses, factors in tables
LENGTH_DECIMALS = 3  # metres to the millimetre
ANGLE_DECIMALS = 3  # degrees


def _clean(text: str) -> str:
    """No negative zero: '-0', '-0.000', '-0e+00' read as '0...'."""
    if text.startswith("-") and not any(c in "123456789" for c in text.split("e")[0]):
        return text[1:]
    return text


def significant(value: float | None, digits: int = SIGNIFICANT, missing: str = MISSING) -> str:
    """``value`` to ``digits`` significant figures, plain notation between 1e-4 and 1e15."""
    if value is None:
        return missing
    value = float(value)
    if not math.isfinite(value):
        return missing
    if value == 0.0:
        return "0"
    magnitude = math.floor(math.log10(abs(value)))
    if -4 <= magnitude < 15:
        decimals = max(digits - 1 - magnitude, 0)
        rounded = round(value, decimals)
        text = f"{rounded:.{decimals}f}"
        if "." in text:
            text = text.rstrip("0").rstrip(".")
        return _clean(text)
    mantissa, exponent = f"{value:.{digits - 1}e}".split("e")
    if "." in mantissa:
        mantissa = mantissa.rstrip("0").rstrip(".")
    return _clean(f"{mantissa}e{exponent}")


def fixed(value: float | None, decimals: int = LENGTH_DECIMALS, missing: str = MISSING) -> str:
    """``value`` with a fixed number of decimals (lengths in m to the mm, angles in degrees)."""
    if value is None:
        return missing
    value = float(value)
    if not math.isfinite(value):
        return missing
    return _clean(f"{value:.{decimals}f}")


def length(value: float | None, missing: str = MISSING) -> str:
    """A length in metres to the millimetre."""
    return fixed(value, LENGTH_DECIMALS, missing)


def angle(value_deg: float | None, missing: str = MISSING) -> str:
    """An angle in degrees to 0.001 degree."""
    return fixed(value_deg, ANGLE_DECIMALS, missing)


def column(values: np.ndarray, kind: str) -> list[str]:
    """A whole column formatted alike: ``kind`` is "length" (m to the mm), "angle" (0.001 degree) or
    "significant": ``SIGNIFICANT`` figures of the column's largest magnitude, the same decimals in every
    row (so a moment of 1e-9 kNm beside 455 kNm reads 0.000, not noise)."""
    values = np.asarray(values, dtype=float)
    if kind == "length":
        return [length(v) for v in values.tolist()]
    if kind == "angle":
        return [angle(v) for v in values.tolist()]
    finite = np.abs(values[np.isfinite(values)])
    top = float(finite.max()) if finite.size else 0.0
    if top == 0.0:
        return ["0" if math.isfinite(v) else MISSING for v in values.tolist()]
    if top >= 1e15 or top < 1e-12:
        return [significant(v) for v in values.tolist()]
    decimals = max(SIGNIFICANT - 1 - math.floor(math.log10(top)), 0)
    return [fixed(v, decimals) for v in values.tolist()]


def for_reading(value: float | None, digits: int = 4) -> str:
    """A value in prose or a table for reading: ``digits`` significant figures, a dash if none."""
    return significant(value, digits, DASH)
