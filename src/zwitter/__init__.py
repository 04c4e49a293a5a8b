"""zwitter: how biomolecules carry charge in water.

For a peptide or protein sequence (plain, FASTA, ProForma) or a small molecule (SMILES), zwitter
finds the ionizable groups, assigns their pKa values from published data and computes at any pH
the populations of protonation forms, the dominant form, the average net charge, the macroscopic
pKa values and the isoelectric point, at the temperature and ionic strength of a real buffer.

>>> import zwitter
>>> m = zwitter.from_sequence("MKWVTFISLLFLFSSAYS")
>>> round(m.charge(7.4), 1)
0.6
"""

from __future__ import annotations

import importlib
from typing import Any

from .equilibrium import DominantForm
from .errors import (
    BufferLookupError,
    ConditionsError,
    InputFileError,
    ParameterError,
    ProFormaError,
    RecipeError,
    ScaleError,
    SequenceError,
    StructureError,
    ZwitterError,
    ZwitterWarning,
)
from .inputs import detect_kind, molecule_from_text
from .molecule import Molecule
from .scales import DEFAULT_SCALE, Scale, get_scale, list_scales, load_scale_file, scale_names
from .sequence import from_sequence
from .sites import Site, SiteSet, permanent_charge

#: Public names loaded on first use, by the module that defines them: the command line's
#: `zwitter pi` should not pay for buffers, structures, batch engines it does not touch.
_LAZY = {
    "BatchSummary": "batch", "iter_score_fasta": "batch", "score_fasta": "batch",
    "score_files": "batch", "score_list": "batch",
    "score_dask_bag": "distributed", "score_dask_dataframe": "distributed",
    "Recipe": "buffers", "buffer_pkas": "buffers", "buffer_recipe": "buffers",
    "buffer_table": "buffers", "get_buffer": "buffers", "mixture_ph": "buffers",
    "suitable_buffers": "buffers",
    "Conditions": "conditions",
    "list_modifications": "modifications",
    "from_proforma": "proforma", "parse_proforma": "proforma", "to_proforma": "proforma",
    "Plan": "purification", "elution_order": "purification", "plan_ion_exchange": "purification",
    "separation_ph": "purification",
    "SmilesRecord": "structure", "StructureForm": "structure", "StructureMolecule": "structure",
    "from_smiles": "structure", "iter_smiles_file": "structure",
}  # fmt: skip


def __getattr__(name: str) -> Any:
    if name in _LAZY:
        value = getattr(importlib.import_module(f".{_LAZY[name]}", __name__), name)
        globals()[name] = value
        return value
    if name == "__version__":
        # read from the installed metadata on first use (importlib.metadata costs ~20 ms)
        from importlib.metadata import PackageNotFoundError, version

        try:
            return version("zwitter")
        except PackageNotFoundError:  # pragma: no cover - running from a source tree
            return "0.0.0"
    if not name.startswith("_"):
        try:  # submodules such as zwitter.plots, zwitter.report, zwitter.fasta
            return importlib.import_module(f".{name}", __name__)
        except ModuleNotFoundError:
            pass
    raise AttributeError(f"module 'zwitter' has no attribute {name!r}")


__all__ = [
    "__version__",
    "DEFAULT_SCALE",
    "DominantForm",
    "Molecule",
    "Scale",
    "Site",
    "SiteSet",
    "detect_kind",
    "from_sequence",
    "get_scale",
    "list_scales",
    "load_scale_file",
    "molecule_from_text",
    "permanent_charge",
    "scale_names",
    "BufferLookupError",
    "ConditionsError",
    "InputFileError",
    "ParameterError",
    "ProFormaError",
    "RecipeError",
    "ScaleError",
    "SequenceError",
    "StructureError",
    "ZwitterError",
    "ZwitterWarning",
    *_LAZY,
]
