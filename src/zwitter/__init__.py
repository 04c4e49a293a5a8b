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

from .batch import BatchSummary, iter_score_fasta, score_fasta, score_files, score_list
from .buffers import (
    Recipe,
    buffer_pkas,
    buffer_recipe,
    buffer_table,
    get_buffer,
    mixture_ph,
    suitable_buffers,
)
from .conditions import Conditions
from .distributed import score_dask_bag, score_dask_dataframe
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
from .modifications import list_modifications
from .molecule import Molecule
from .proforma import from_proforma, parse_proforma, to_proforma
from .purification import Plan, elution_order, plan_ion_exchange, separation_ph
from .scales import DEFAULT_SCALE, Scale, get_scale, list_scales, load_scale_file, scale_names
from .sequence import from_sequence
from .sites import Site, SiteSet, permanent_charge
from .structure import SmilesRecord, StructureForm, StructureMolecule, from_smiles, iter_smiles_file


def __getattr__(name: str) -> str:
    # __version__ is read from the installed metadata on first use: importlib.metadata costs
    # ~20 ms of start-up that `zwitter pi` does not need.
    if name == "__version__":
        from importlib.metadata import PackageNotFoundError, version

        try:
            return version("zwitter")
        except PackageNotFoundError:  # pragma: no cover - running from a source tree
            return "0.0.0"
    raise AttributeError(f"module 'zwitter' has no attribute {name!r}")


__all__ = [
    "__version__",
    "BatchSummary",
    "iter_score_fasta",
    "score_dask_bag",
    "score_dask_dataframe",
    "score_fasta",
    "score_files",
    "score_list",
    "Conditions",
    "Plan",
    "Recipe",
    "buffer_pkas",
    "buffer_recipe",
    "buffer_table",
    "elution_order",
    "get_buffer",
    "mixture_ph",
    "plan_ion_exchange",
    "separation_ph",
    "suitable_buffers",
    "DEFAULT_SCALE",
    "DominantForm",
    "Molecule",
    "Scale",
    "Site",
    "SiteSet",
    "detect_kind",
    "from_proforma",
    "from_sequence",
    "from_smiles",
    "iter_smiles_file",
    "SmilesRecord",
    "StructureForm",
    "StructureMolecule",
    "list_modifications",
    "molecule_from_text",
    "parse_proforma",
    "to_proforma",
    "get_scale",
    "list_scales",
    "load_scale_file",
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
]
