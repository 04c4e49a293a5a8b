"""The typer app object and the error-to-exit-code policy shared by every command."""

from __future__ import annotations

import os
import sys
from typing import NoReturn

import typer

from ..errors import ZwitterError

app = typer.Typer(
    name="zwitter",
    help=(
        "Charge, protonation forms and isoelectric points of peptides, proteins and small "
        "molecules in water. Results are estimates: verify experimentally."
    ),
    no_args_is_help=True,
    add_completion=False,
    pretty_exceptions_enable=False,
)

EXIT_BAD_INPUT = 2
EXIT_FAILURE = 1
#: 128 + SIGINT, what shells report for a program stopped by Ctrl-C (common practice)
EXIT_INTERRUPTED = 130


def fail(message: str, code: int = EXIT_BAD_INPUT) -> NoReturn:
    """Print one line on stderr and exit."""
    sys.stderr.write(f"zwitter: error: {message}\n")
    raise typer.Exit(code)


def main() -> None:
    """Console-script entry point."""
    try:
        app()
    except ZwitterError as exc:  # bad input that reached us outside a command's own handling
        sys.stderr.write(f"zwitter: error: {exc}\n")
        sys.exit(EXIT_BAD_INPUT)
    except KeyboardInterrupt:
        sys.stderr.write("zwitter: interrupted\n")
        sys.exit(EXIT_INTERRUPTED)
    except Exception as exc:  # noqa: BLE001 - the last line of defence: one line, exit 1
        if os.environ.get("ZWITTER_DEBUG"):
            raise
        sys.stderr.write(f"zwitter: failed: {type(exc).__name__}: {exc}\n")
        sys.exit(EXIT_FAILURE)
