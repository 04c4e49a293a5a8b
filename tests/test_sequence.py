"""Plain sequences: the one-letter policy, batch composition, the molecule API."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import zwitter
from zwitter import SequenceError, ZwitterWarning
from zwitter.scoring import score_sequences
from zwitter.sequence import compose


def test_case_whitespace_and_stop_are_ignored() -> None:
    a = zwitter.from_sequence("MKWVTFISLL")
    b = zwitter.from_sequence("mkw vtf\nisll*")
    assert a.charge(7.0) == pytest.approx(b.charge(7.0))
    assert a.isoelectric_point() == pytest.approx(b.isoelectric_point())


def test_ambiguous_residues_policy() -> None:
    scale = zwitter.get_scale("lehninger")
    b = zwitter.from_sequence("GBG", scale=scale)
    d = zwitter.from_sequence("GDG", scale=scale)
    g = zwitter.from_sequence("GGG", scale=scale)
    # B = half Asp: the charge at pH 7 is halfway between GDG and GGG
    assert b.charge(7.0) == pytest.approx((d.charge(7.0) + g.charge(7.0)) / 2)
    z = zwitter.from_sequence("GZG", scale=scale)
    e = zwitter.from_sequence("GEG", scale=scale)
    assert z.charge(7.0) == pytest.approx((e.charge(7.0) + g.charge(7.0)) / 2)
    j = zwitter.from_sequence("GJG", scale=scale)
    assert j.charge(7.0) == pytest.approx(g.charge(7.0))
    with pytest.warns(ZwitterWarning, match=r"1 unknown residue \(X\)"):
        x = zwitter.from_sequence("GXG", scale=scale)
    assert x.charge(7.0) == pytest.approx(g.charge(7.0))


@pytest.mark.parametrize(
    ("text", "message"),
    [
        ("", "empty sequence"),
        ("   \n", "empty sequence"),
        ("*", "empty sequence"),
        ("MK1W", "invalid residue: '1' at position 3"),
        ("MK W\n@", "invalid residue: '@' at position 4"),
        ("MK*W", r"'\*' \(stop\) is allowed only at the end: '\*' at position 3"),
        ("MKé", "invalid residue: 'é' at position 3"),
    ],
)
def test_bad_sequences(text: str, message: str) -> None:
    with pytest.raises(SequenceError, match=message):
        zwitter.from_sequence(text)


def test_selenocysteine_needs_a_scale_value(tmp_path) -> None:
    m = zwitter.from_sequence("GUG", scale="lehninger")
    assert "U" in m.sites.labels
    lines = [ln for ln in zwitter.get_scale("lehninger").sources]  # noqa: F841 - scale loads
    path = tmp_path / "nou.csv"
    path.write_text(
        "group,context,pka\nNterm,,9\nCterm,,2\nD,,4\nE,,4\nC,,8\nY,,10\nH,,6\nK,,10\nR,,12\n"
    )
    with pytest.raises(SequenceError, match=r"no selenocysteine \(U\) pKa.*position 2"):
        zwitter.from_sequence("GUG", scale=path)


def test_batch_equals_single_and_errors_stay_in_place() -> None:
    seqs = ["MKWVTFISLL", "", "PEPTIDE", "AC1D", "DDDD", "KKKK*"]
    scale = zwitter.get_scale("bjellqvist")
    res = score_sequences(seqs, [5.0, 7.4], scale, [f"r{i}" for i in range(6)])
    assert [bool(e) for e in res.errors] == [False, True, False, True, False, False]
    assert "record 'r3': invalid residue: '1' at position 3" == res.errors[3]
    for i in (0, 2, 4, 5):
        m = zwitter.from_sequence(seqs[i], scale=scale)
        assert res.pi[i] == pytest.approx(m.isoelectric_point(), abs=1e-9)
        assert res.charge[i] == pytest.approx(m.charge(np.array([5.0, 7.4])))
    assert math.isnan(res.pi[1]) and math.isnan(res.charge[3, 0])


def test_composition_counts_termini_once_per_chain() -> None:
    scale = zwitter.get_scale("lehninger")
    comp = compose(["K", "KK", "DKD"], scale)
    labels = comp.layout.sites.labels
    col = {lab: i for i, lab in enumerate(labels)}
    assert comp.counts[:, col["Nterm"]].tolist() == [1, 1, 1]
    assert comp.counts[:, col["K"]].tolist() == [1, 2, 1]
    assert comp.counts[:, col["D"]].tolist() == [0, 0, 2]


def test_site_table_species_curve_and_members() -> None:
    m = zwitter.from_sequence("DKHK", scale="lehninger")
    table = m.site_table(7.0)
    assert set(table["site"]) == {"Nterm", "Cterm", "D", "H", "K"}
    k = table[table["site"] == "K"].iloc[0]
    assert k["count"] == 2 and k["members"] == "K2 K4"
    assert table["charge"].sum() == pytest.approx(m.charge(7.0))
    sp = m.species(7.0)
    assert sp["population"].sum() == pytest.approx(1.0)
    assert sp["population"].is_monotonic_decreasing
    curve = m.curve()
    assert len(curve) == 281 and curve["charge"].is_monotonic_decreasing
    assert m.dominant(7.0).charge == sp["charge"][0]


@settings(max_examples=40, deadline=None)
@given(st.text(alphabet="ACDEFGHIKLMNPQRSTVWY", min_size=1, max_size=80), st.floats(0.0, 14.0))
def test_properties_for_sequences(seq: str, ph: float) -> None:
    m = zwitter.from_sequence(seq, scale="sillero")  # composition-only scale
    r = zwitter.from_sequence(seq[::-1], scale="sillero")
    assert m.charge(ph) == pytest.approx(r.charge(ph))  # reversing does not change the charge
    assert m.charge(ph + 0.5) < m.charge(ph)
    acids = sum(seq.count(c) for c in "DECY") + 1
    bases = sum(seq.count(c) for c in "HKR") + 1
    assert -acids <= m.charge(ph) <= bases
    pi = m.isoelectric_point()
    assert pi is not None and abs(m.charge(pi)) < 1e-6
