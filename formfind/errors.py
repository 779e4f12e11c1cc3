"""The kinds of failure formfind reports, each with its command-line exit code.

Every error carries a complete one-line message; the command line prints it and exits with
``exit_code``. Library callers catch the specific class.
"""

from __future__ import annotations


def one_line(text: str) -> str:
    """Text safe for a one-line message: control characters (newlines included) escaped."""
    return "".join(c if c.isprintable() else c.encode("unicode_escape").decode("ascii") for c in str(text))


class FormfindError(Exception):
    """Base class of every error formfind raises on purpose."""

    exit_code = 1


class CaseError(FormfindError):
    """A case file is missing, unreadable or invalid.

    The message names the file, the key path (for example ``cases[2].loads[0].x_m``) and what was
    expected.
    """

    exit_code = 3

    def __init__(self, file: str, key: str, expected: str) -> None:
        self.file = file
        self.key = key
        self.expected = expected
        where = f"{one_line(file)}: {one_line(key)}" if key else one_line(file)
        super().__init__(f"{where}: {one_line(expected)}")


class AnalysisError(FormfindError):
    """An analysis could not produce a trustworthy result.

    Raised for mechanisms (an unstable support set), a failed verification after a solve (residual or
    equilibrium outside tolerance), or an engine asked for an arch it cannot treat.
    """

    exit_code = 4


class OutputError(FormfindError):
    """An output could not be written, or would overwrite existing files without permission."""

    exit_code = 5


class FormFindingError(FormfindError):
    """Form finding could not deliver an axis: conflicting constraints, a solver failure, or a loop
    that did not converge. The message names the constraints or gives the loop's last figures."""

    exit_code = 6


class ArgumentError(FormfindError, TypeError):
    """A public function was called with an argument of the wrong kind (None, a path where a case goes,
    a string where a flag goes). Also a `TypeError`, so callers may catch either. Exit code 2 (usage)."""

    exit_code = 2
