"""The ``zwitter`` command line: a thin typer app over the library.

Each command group lives in its own module and registers itself on :data:`app`; this module only
builds the app and maps errors to exit codes (2 for bad input, 1 for failures).
"""

from __future__ import annotations

from ._app import app, main
from . import sequence_cmds  # noqa: F401  (registers pi, charge, scales, demo)
from . import batch_cmd  # noqa: F401
from . import buffer_cmds  # noqa: F401
from . import report_cmds  # noqa: F401

__all__ = ["app", "main"]
