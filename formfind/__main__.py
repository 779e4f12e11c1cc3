"""Entry point for ``python -m formfind`` and the ``formfind`` console script."""

from __future__ import annotations

import sys


def main(argv: list[str] | None = None) -> int:
    """Run the command line and return its exit code."""
    from formfind.cli import run_cli

    return run_cli(argv)


if __name__ == "__main__":
    sys.exit(main())
