"""The ``zwitter`` command line: a thin typer app over the library.

Each command group lives in its own module and registers itself on :data:`app`; this module only
builds the app and maps errors to exit codes (2 for bad input, 1 for failures).
"""

from __future__ import annotations

from . import (
    batch_cmd,  # noqa: F401
    buffer_cmds,  # noqa: F401
    report_cmds,  # noqa: F401
    sequence_cmds,  # noqa: F401  (registers pi, charge, scales, demo)
    structure_cmds,  # noqa: F401
)
from ._app import app, main

__all__ = ["app", "main"]
