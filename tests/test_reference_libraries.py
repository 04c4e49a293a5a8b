"""Cross-checks against general-purpose reference libraries: Biopython and pyteomics.

Biopython's isoelectric point (Bio.SeqUtils.ProtParam.ProteinAnalysis) uses the Bjellqvist pK
set with terminus-specific values; tests/data/biopython_scale.csv holds the same numbers in
zwitter's scale-file schema, so with that file both programs solve the same model and must agree.
Biopython searches only between pH 4.05 and 12 and stops at a bracket of 1e-4, so sequences whose
pI lies outside are skipped.
"""

from __future__ import annotations

import random
import warnings

import numpy as np
import pytest

import zwitter
from zwitter.scoring import score_sequences

protparam = pytest.importorskip("Bio.SeqUtils.ProtParam")
electrochem = pytest.importorskip("pyteomics.electrochem")

STANDARD = "ACDEFGHIKLMNPQRSTVWY"


def random_sequences(n: int, seed: int, lo: int = 2, hi: int = 400) -> list[str]:
    rng = random.Random(seed)
    return ["".join(rng.choice(STANDARD) for _ in range(rng.randint(lo, hi))) for _ in range(n)]


def test_pi_matches_biopython_on_500_random_sequences(test_data_dir) -> None:
    scale = zwitter.load_scale_file(test_data_dir / "biopython_scale.csv")
    seqs = random_sequences(700, seed=20261201)
    ours = score_sequences(seqs, [7.0], scale).pi
    compared = 0
    worst = 0.0
    for seq, pi in zip(seqs, ours):
        if not 4.1 < pi < 11.9:  # outside Biopython's search window
            continue
        theirs = protparam.ProteinAnalysis(seq).isoelectric_point()
        worst = max(worst, abs(theirs - pi))
        compared += 1
    assert compared >= 500
    assert worst < 0.01


def test_single_api_matches_biopython(test_data_dir) -> None:
    scale = zwitter.load_scale_file(test_data_dir / "biopython_scale.csv")
    for seq in ["MKWVTFISLLFLFSSAYS", "ACDEFGHIKLMNPQRSTVWY", "PHHHKD", "EEEKRRRT"]:
        ours = zwitter.from_sequence(seq, scale=scale).isoelectric_point()
        theirs = protparam.ProteinAnalysis(seq).isoelectric_point()
        assert ours == pytest.approx(theirs, abs=0.01)


# Our scales that carry the same published values as a pyteomics dict (checked group by group
# when the tables were written; our U row has no pyteomics counterpart and random sequences
# below contain no U).
PYTEOMICS_SAME = {
    "lehninger": {"pK": electrochem.pK_lehninger},
    "sillero": {"pK": electrochem.pK_sillero},
    "dawson": {"pK": electrochem.pK_dawson},
    "bjellqvist": {
        "pK": electrochem.pK_bjellqvist,
        "pK_nterm": electrochem.pK_nterm_bjellqvist,
        "pK_cterm": electrochem.pK_cterm_bjellqvist,
    },
}
GROUP_KEYS = {"Nterm": "H-", "Cterm": "-OH"}


@pytest.mark.parametrize("key", sorted(PYTEOMICS_SAME))
def test_scale_values_equal_pyteomics(key: str) -> None:
    scale = zwitter.get_scale(key)
    theirs = PYTEOMICS_SAME[key]["pK"]
    for group, value in scale.pka.items():
        if group == "U":
            continue
        assert theirs[GROUP_KEYS.get(group, group)][0][0] == pytest.approx(value), group


@pytest.mark.parametrize("key", sorted(PYTEOMICS_SAME))
def test_pi_and_charge_match_pyteomics(key: str) -> None:
    scale = zwitter.get_scale(key)
    kwargs = PYTEOMICS_SAME[key]
    seqs = random_sequences(60, seed=hash(key) % 1000, lo=3, hi=150)
    scores = score_sequences(seqs, [2.0, 7.0, 12.0], scale)
    for i, seq in enumerate(seqs):
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            pi = electrochem.pI(seq, pI_range=(0.0, 14.0), precision_pI=1e-6, **kwargs)
            charges = [electrochem.charge(seq, ph, **kwargs) for ph in (2.0, 7.0, 12.0)]
        if 0.05 < pi < 13.95:
            assert scores.pi[i] == pytest.approx(pi, abs=0.01), seq
        assert scores.charge[i] == pytest.approx(np.array(charges), abs=0.01), seq
