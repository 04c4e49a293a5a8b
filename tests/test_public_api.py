"""The public API: every exported name resolves, and light start-up stays light."""

from __future__ import annotations

import subprocess
import sys

import zwitter


def test_every_exported_name_resolves() -> None:
    for name in zwitter.__all__:
        assert getattr(zwitter, name) is not None, name


def test_lazy_names_come_from_their_modules() -> None:
    assert zwitter.Conditions.__module__ == "zwitter.conditions"
    assert zwitter.from_smiles.__module__ == "zwitter.structure"
    assert zwitter.score_fasta.__module__ == "zwitter.batch"


def test_command_line_start_up_imports_no_heavy_module() -> None:
    code = (
        "import sys, zwitter.cli; "
        "heavy = [m for m in ('pandas', 'rdkit', 'matplotlib', 'pyarrow', 'dask', "
        "'zwitter.structure', 'zwitter.batch', 'zwitter.buffers') if m in sys.modules]; "
        "print(','.join(heavy))"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == ""
