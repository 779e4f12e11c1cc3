"""Checks of the arguments of formfind's public functions, so that a wrong call fails at once with a
message saying what was expected, instead of deep inside the mechanics (or, worse, doing something
else: ``buckling="no"`` is truthy).

Every check raises `formfind.errors.ArgumentError`. Imports of the checked types are deferred, so
this module stays as light as `formfind.errors`.
"""

from __future__ import annotations

import math
from typing import Any

from formfind.errors import ArgumentError


def _what(value: Any) -> str:
    if value is None:
        return "None"
    text = repr(value)
    return f"{type(value).__name__} {text[:40] + '...' if len(text) > 40 else text}"


def case(value: Any, function: str, name: str = "case"):
    """A validated `Case` (read one with `formfind.load_case`)."""
    from formfind.model.case import Case

    if not isinstance(value, Case):
        hint = " (read the file with formfind.load_case first)" if isinstance(value, str) or hasattr(value, "__fspath__") else ""
        raise ArgumentError(f"{function}: {name}: expected a Case, got {_what(value)}{hint}")
    return value


def flag(value: Any, function: str, name: str, optional: bool = False) -> bool | None:
    """A real boolean (or None where allowed): a string such as "no" is refused, not taken as true."""
    if value is None and optional:
        return None
    if not isinstance(value, bool):
        raise ArgumentError(f"{function}: {name}: expected True or False{' or None' if optional else ''}, got "
                            f"{_what(value)}")
    return value


def axis(value: Any, function: str, name: str = "axis", optional: bool = True):
    """An `Axis` (or None where the case's own is meant)."""
    from formfind.model.geometry import Axis

    if value is None and optional:
        return None
    if not isinstance(value, Axis):
        raise ArgumentError(f"{function}: {name}: expected an Axis{' or None' if optional else ''}, got {_what(value)}")
    return value


def instance(value: Any, kind: type, function: str, name: str):
    """An instance of ``kind``."""
    if not isinstance(value, kind):
        raise ArgumentError(f"{function}: {name}: expected a {kind.__name__}, got {_what(value)}")
    return value


def positive(value: Any, function: str, name: str, unit: str = "") -> float:
    """A finite positive number."""
    if isinstance(value, bool) or not isinstance(value, int | float) or not math.isfinite(value) or value <= 0:
        raise ArgumentError(f"{function}: {name}: expected a positive number{' in ' + unit if unit else ''}, got "
                            f"{_what(value)}")
    return float(value)


def numbers(value: Any, function: str, name: str, allow_none: bool = False) -> tuple:
    """A list or tuple of finite numbers (None entries where allowed)."""
    if isinstance(value, str | bytes) or not hasattr(value, "__iter__"):
        raise ArgumentError(f"{function}: {name}: expected a list or tuple of numbers, got {_what(value)}")
    out = tuple(value)
    for v in out:
        if v is None and allow_none:
            continue
        if isinstance(v, bool) or not isinstance(v, int | float) or not math.isfinite(v):
            raise ArgumentError(f"{function}: {name}: expected finite numbers, got {_what(v)} among them")
    return out
