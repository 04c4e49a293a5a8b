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


# -- compose_spans: compose of sequences read where they lie in a buffer --------------------------
# The reference is compose() itself on the decoded spans: compose_spans is its faster twin for
# FASTA blocks, and every field of the Composition must match (errors with their positions).
def _assert_same_composition(got, want) -> None:  # type: ignore[no-untyped-def]
    assert got.layout is want.layout
    for name in ("counts", "lengths", "unknown", "letters"):
        a, b = getattr(got, name), getattr(want, name)
        assert a.dtype == b.dtype and a.shape == b.shape, name
        assert np.array_equal(a, b), name
    assert [None if e is None else (str(e), e.position, e.character) for e in got.errors] == [
        None if e is None else (str(e), e.position, e.character) for e in want.errors
    ]


def _spans_and_texts(pieces: list[tuple[bytes, bytes]]) -> tuple[bytes, list[int], list[int]]:
    data, lo, hi = b"", [], []
    for gap, seq in pieces:
        data += gap
        lo.append(len(data))
        data += seq
        hi.append(len(data))
    return data, lo, hi


SPAN_CASES = [
    # (gap before, sequence bytes): FASTA-like lines, blank space at both ends, CR LF, a final
    # stop and one inside, lower case, empty and blank records, ambiguous letters, bad bytes
    [(b">a x\n", b"MKWVTFISLL\nFLFSSAYS\n"), (b">b\n", b"DEKRHCY\n")],
    [(b">c\r\n", b"mkdE\r\nkr*\r\n"), (b">d\n", b"  \n\n"), (b">e\n", b"")],
    [(b"", b"K"), (b"", b"D"), (b"hdr", b"*"), (b"", b"MK*DE"), (b"", b"M K\tW\x0bV\x0cT")],
    [
        (b">f\n", b"BZJOUX\n"),
        (b">g\n", b"MK1DE\n"),
        (b">h\xc3\xa9\n", b"MK\xe9DE\n"),
        (b"", b"\xc3\xa9"),
    ],
    [(b">i\n", b"M\x00K"), (b">j\n", b"GG\n")],  # a NUL: compose names the original character
    [(b">j\n", b" " * 30 + b"GK" + b"\n" * 30), (b">k\n", b"GGKK**"), (b">l\n", b"E*\n ")],
]


@pytest.mark.parametrize("pieces", SPAN_CASES)
@pytest.mark.parametrize("scale", [None, "bjellqvist"])
def test_compose_spans_equals_compose(pieces: list[tuple[bytes, bytes]], scale: str | None) -> None:
    from zwitter.sequence import compose_spans

    sc = zwitter.get_scale(scale)
    data, lo, hi = _spans_and_texts(pieces)
    texts = [data[a:b].decode("utf-8", errors="replace") for a, b in zip(lo, hi)]
    ids = [f"r{i}" for i in range(len(lo))]
    _assert_same_composition(compose_spans(data, lo, hi, sc, ids), compose(texts, sc, ids))
    _assert_same_composition(compose_spans(data, lo, hi, sc), compose(texts, sc))


def test_compose_spans_on_a_scale_without_selenocysteine(tmp_path) -> None:
    from zwitter.sequence import compose_spans

    path = tmp_path / "nou.csv"
    path.write_text(
        "group,context,pka\nNterm,,9\nCterm,,2\nD,,4\nE,,4\nC,,8\nY,,10\nH,,6\nK,,10\nR,,12\n"
    )
    sc = zwitter.get_scale(path)
    data, lo, hi = _spans_and_texts([(b">a\n", b"GUG\n"), (b">b\n", b"gug"), (b">c\n", b"GG")])
    texts = [data[a:b].decode() for a, b in zip(lo, hi)]
    got = compose_spans(data, lo, hi, sc, ["a", "b", "c"])
    _assert_same_composition(got, compose(texts, sc, ["a", "b", "c"]))
    assert got.errors[1] is not None and got.errors[1].position == 2 and got.errors[2] is None


def test_compose_spans_across_internal_blocks() -> None:
    """More residues than one internal run (BLOCK_RESIDUES) and more rows than 16-bit keys hold."""
    from zwitter.sequence import BLOCK_RESIDUES, compose_spans

    rng = np.random.default_rng(11)
    letters = np.frombuffer(b"ACDEFGHIKLMNPQRSTVWYacdeky", dtype=np.uint8)
    pieces = []
    for i in range(3000):
        n = int(rng.integers(0, 200)) if i % 1000 else BLOCK_RESIDUES - 1000
        seq = rng.choice(letters, size=n).tobytes()
        pieces.append((b">r%d\n" % i, b"\n".join(seq[j : j + 60] for j in range(0, n, 60)) + b"\n"))
    data, lo, hi = _spans_and_texts(pieces)
    sc = zwitter.get_scale(None)
    texts = [data[a:b].decode() for a, b in zip(lo, hi)]
    _assert_same_composition(compose_spans(data, lo, hi, sc), compose(texts, sc))


@settings(max_examples=150, deadline=None)
@given(
    st.lists(
        st.tuples(
            st.binary(max_size=4),
            st.lists(
                st.sampled_from(
                    [
                        b"A",
                        b"K",
                        b"d",
                        b"E",
                        b"C",
                        b"U",
                        b"X",
                        b"B",
                        b"*",
                        b" ",
                        b"\n",
                        b"\r",
                        b"\t",
                        b"1",
                        b"\x00",
                        b"\xe9",
                        b"\xc3\xa9",
                        b">",
                    ]
                ),
                max_size=30,
            ).map(b"".join),
        ),
        max_size=12,
    )
)
def test_compose_spans_equals_compose_on_any_bytes(pieces: list[tuple[bytes, bytes]]) -> None:
    from zwitter.sequence import compose_spans

    sc = zwitter.get_scale(None)
    data, lo, hi = _spans_and_texts(pieces)
    texts = [data[a:b].decode("utf-8", errors="replace") for a, b in zip(lo, hi)]
    ids = [f"r{i}" for i in range(len(lo))]
    _assert_same_composition(compose_spans(data, lo, hi, sc, ids), compose(texts, sc, ids))


def test_compose_spans_checks_its_spans() -> None:
    from zwitter.sequence import compose_spans

    sc = zwitter.get_scale(None)
    with pytest.raises(ValueError, match="in order, without overlapping"):
        compose_spans(b"MKDEMK", [0, 2], [4, 6], sc)
    with pytest.raises(ValueError, match="in order, without overlapping"):
        compose_spans(b"MK", [0], [3], sc)
    with pytest.raises(ValueError, match="2 span starts but 1 span ends"):
        compose_spans(b"MK", [0, 1], [1], sc)
    assert compose_spans(b"", [], [], sc).counts.shape == (0, sc_cols(sc))


def sc_cols(sc) -> int:  # type: ignore[no-untyped-def]
    from zwitter.sequence import layout_for

    return layout_for(sc).sites.n_types
