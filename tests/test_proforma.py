"""ProForma input: parsing, modifications, disulfides, complexes, readable dominant form."""

from __future__ import annotations

import csv
import itertools
import math
import pickle
from collections import Counter
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from pyteomics import mass as pyteomics_mass
from pyteomics import proforma as pyteomics_proforma

from zwitter.errors import ParameterError, ProFormaError, ZwitterWarning
from zwitter.inputs import molecule_from_text
from zwitter.modifications import load_modifications
from zwitter.proforma import from_proforma, parse_proforma, to_proforma
from zwitter.scales import DEFAULT_SCALE, scale_names
from zwitter.sequence import from_sequence
from zwitter.sites import SiteSet

REFERENCE = Path(__file__).resolve().parents[1] / "data" / "reference" / "measured_pi.csv"


def _labels(text: str, scale: str = "lehninger", **kw: str) -> dict[str, float]:
    m = from_proforma(text, scale=scale, **kw)
    return dict(
        Counter({lab: float(c) for lab, c in zip(m.sites.labels, m.sites.counts, strict=True)})
    )


# -- valid strings and the sites they must produce ------------------------------------------------
# Expected site types follow from the chemistry of each modification (amide/ester/thioether
# formation removes the group, phosphate and sulfate esters add their acid) and from ProForma 2.0
# (HUPO-PSI, 2022) semantics of each construct.
VALID = [
    ("PEPTIDE", {"Nterm": 1, "Cterm": 1, "D": 1, "E": 2}),
    ("peptide", {"Nterm": 1, "Cterm": 1, "D": 1, "E": 2}),
    ("PEP TIDE", {"Nterm": 1, "Cterm": 1, "D": 1, "E": 2}),
    ("[Acetyl]-PEPTIDE-[Amidated]", {"D": 1, "E": 2}),
    ("[acetyl]-PEPTIDE", {"Cterm": 1, "D": 1, "E": 2}),
    ("PEPS[Phospho]TIDE", {"Nterm": 1, "Cterm": 1, "D": 1, "E": 2, "phosphoserine": 1}),
    (
        "S[UNIMOD:21]T[U:Phospho]Y[Unimod:21]",
        {"Nterm": 1, "Cterm": 1, "phosphoserine": 1, "phosphothreonine": 1, "phosphotyrosine": 1},
    ),
    ("S[Phosphorylation]AS[Phospho]", {"Nterm": 1, "Cterm": 1, "phosphoserine": 2}),
    ("GK[Trimethyl]K", {"Nterm": 1, "Cterm": 1, "K": 1, "N6,N6,N6-trimethyllysine": 1}),
    ("GK[Acetyl]K", {"Nterm": 1, "Cterm": 1, "K": 1}),
    ("Q[Gln->pyro-Glu]AK", {"Cterm": 1, "K": 1}),
    ("[Gln->pyro-Glu]-QAK", {"Cterm": 1, "K": 1}),
    ("E[Glu->pyro-Glu]AE", {"Cterm": 1, "E": 1}),
    ("GN[Deamidated]K", {"Nterm": 1, "Cterm": 1, "K": 1, "aspartate from deamidation": 1}),
    ("GR[Deamidated]", {"Nterm": 1, "Cterm": 1}),  # citrulline
    ("GY[Nitro]", {"Nterm": 1, "Cterm": 1, "3-nitrotyrosine phenol": 1}),
    ("GY[Sulfo]", {"Nterm": 1, "Cterm": 1, "sulfotyrosine": 1}),
    ("GD[Methyl]E[Methyl]", {"Nterm": 1, "Cterm": 1}),
    ("<[Carbamidomethyl]@C>ACDC", {"Nterm": 1, "Cterm": 1, "D": 1}),
    ("<[Oxidation]@M,W>MWC", {"Nterm": 1, "Cterm": 1, "C": 1}),
    ("<[Acetyl]@N-term>AK//GD", {"Cterm": 2, "K": 1, "D": 1}),
    ("<[Carbamidomethyl]@C>C[#XL1]AC[#XL1]C", {"Nterm": 1, "Cterm": 1}),
    ("C[#XL1]AAC[#XL1]K", {"Nterm": 1, "Cterm": 1, "K": 1}),
    ("C[Dehydro#XL1]AAC[#XL1]K", {"Nterm": 1, "Cterm": 1, "K": 1}),
    ("C[MOD:00034#XL1]AAC[#XL1]K", {"Nterm": 1, "Cterm": 1, "K": 1}),
    ("AC[#XL1]//KC[#XL1]", {"Nterm": 2, "Cterm": 2, "K": 1}),
    ("AC//KC", {"Nterm": 2, "Cterm": 2, "K": 1, "C": 2}),
    ("2xAK", {"Nterm": 2, "Cterm": 2, "K": 2}),
    ("2xAC[#XL1]//2xKC[#XL1]", {"Nterm": 4, "Cterm": 4, "K": 2}),
    ("AU[#XL1]GC[#XL1]", {"Nterm": 1, "Cterm": 1}),  # selenylsulfide
]


@pytest.mark.parametrize(("text", "expected"), VALID)
def test_valid_strings_give_expected_sites(text: str, expected: dict[str, float]) -> None:
    assert _labels(text) == {k: float(v) for k, v in expected.items()}


SINGLE_CHAIN = [
    t for t, _ in VALID if "//" not in t and "x" not in t.split("[")[0] and " " not in t
]


@pytest.mark.parametrize("text", SINGLE_CHAIN)
def test_parse_agrees_with_pyteomics(text: str) -> None:
    # Outside reference: pyteomics' ProForma 2.0 parser (residues, which residues carry
    # modifications, terminal and fixed modifications).
    seq, meta = pyteomics_proforma.parse(text)
    pf = parse_proforma(text)
    (chain,) = pf.chains
    assert chain.sequence == "".join(aa for aa, _ in seq).upper()
    assert [bool(r.mods) for r in chain.residues] == [bool(mods) for _, mods in seq]
    assert [len(r.mods) for r in chain.residues] == [len(mods or ()) for _, mods in seq]
    assert len(chain.nterm) == len(meta["n_term"] or ())
    assert len(chain.cterm) == len(meta["c_term"] or ())
    assert len(pf.globals) == len(meta["fixed_modifications"] or ())


def test_members_name_each_group() -> None:
    m = from_proforma("[Acetyl]-PEPS[Phospho]TK[Trimethyl]IDE-[Amidated]", scale="lehninger")
    members = {lab: mem for lab, mem in zip(m.sites.labels, m.sites.members, strict=True)}
    assert members["phosphoserine"] == ("pS4",)
    assert members["N6,N6,N6-trimethyllysine"] == ("K6[Trimethyl]",)
    assert members["E"] == ("E2", "E9")
    assert [d["site"] for d in m.info["modifications"]] == [
        "N-term P1[Acetyl]", "pS4", "K6[Trimethyl]", "C-term E9[Amidated]"
    ]  # fmt: skip
    assert m.kind == "proforma"
    assert m.info["proforma"] == "[Acetyl]-PEPS[Phospho]TK[Trimethyl]IDE-[Amidated]"
    source = m.sites.sources[m.sites.labels.index("phosphoserine")]
    assert "Bienkiewicz" in source


# -- invalid strings: error, message, position ---------------------------------------------------
INVALID = [
    ("PEPS[+79.966]TIDE", "mass shifts are not supported, name the modification", 5),
    ("PEPS[U:+79.966]TIDE", "mass shifts are not supported", 5),
    ("PEPS[Obs:+79.978]TIDE", r"observed mass shifts \(\[Obs", 5),
    ("PEPS[Phosho]TIDE", r"unknown modification \[Phosho\].*Did you mean Phospho", 5),
    ("PEPK[Phospho]", r"\[Phospho\] cannot modify K \(K4\); Phospho applies to S, T, Y, H", 5),
    ("AQ[Gln->pyro-Glu]", r"cannot modify Q \(Q2\).*Q at the N-terminus", 3),
    ("[Amidated]-PEP", r"cannot modify the N-terminus \(P1\)", 1),
    ("AC[#XL1]K", r"cross-link label #XL1 is used once", 3),
    ("C[#XL1]C[#XL1]C[#XL1]", r"#XL1 is used 3 times", 16),
    ("AK[#XL1]C[#XL1]", r"cross-link #XL1 on K: .*disulfides", 3),
    ("C[#XL1][#XL1]", r"twice on the same residue", 8),
    ("C[Carbamidomethyl][#XL1]AC[#XL1]", r"C1: its side chain is already modified", 19),
    ("2xAC[#XL1]//KC[#XL1]", r"joins a chain of 2 copies to one of 1", 15),
    ("C[XLMOD:02001#XL1]AC[#XL1]", r"cross-link 'XLMOD:02001' .* disulfides only", 2),
    ("K[Acetyl][Methyl]", r"Methyl on K1: the Lys ammonium .* already removed", 10),
    ("EM[Oxidation]EVT[#g1]S[#g1]ES", r"ambiguity/localisation group labels", 17),
    ("PRT(ESFRMS)[+19.0523]ISK", r"sequence ambiguity .* ranges", 4),
    ("(?DQ)NGTWEMESNENFEGYMK", r"sequence ambiguity", 1),
    ("{Glycan:Hex}EM[Oxidation]EVNES", r"labile modifications", 1),
    ("[Phospho]?EMEVTSESPEK", r"unknown position", 10),
    ("EMEVTS[Phospho]^2PEK", r"multiplicities", 16),
    ("<13C>ATPEILTVNSIGQLK", r"isotope labels", 1),
    ("<[Carbamidomethyl]@C>AT<[Oxidation]@M>M", r"must come first", 24),
    ("<[Phospho]@K>PEK", r"global modification \[Phospho\] cannot modify K", 2),
    ("<[Nope]@K>PEK", r"unknown modification \[Nope\]", 2),
    ("EMEVTSESPEK/2", r"charge states", 12),
    ("EMEVNES+EMEVTK", r"chimeric", 8),
    ("ELVIS[Formula:HPO3]K", r"chemical formulas", 6),
    ("ELVIS[Glycan:Hex]K", r"glycan compositions", 6),
    ("ELVIS[MOD:00046]K", r"PSI-MOD accessions", 6),
    ("ELVIS[R:O-phospho-L-serine]K", r"RESID names", 6),
    ("ELVIS[INFO:hello]K", r"INFO tags", 6),
    ("ELVIS[Phospho|+79.966]K", r"alternative descriptors", 6),
    ("ELVIS[Phospho#BRANCH]K", r"branches", 6),
    ("ELVIS[UNIMOD:abc]K", r"Unimod accession is a number", 6),
    ("ELVIS[]K", r"empty modification", 6),
    ("ELVIS[PhosphoK", r"unclosed '\['", 6),
    ("PEP//", r"empty chain", 6),
    ("2PEP", r"stoichiometry is written like '2xPEPTIDE'", 1),
    ("0xPEP", r"stoichiometry must be at least 1", 1),
    ("PE2P", r"a number outside brackets", 3),
    ("[Acetyl]PEP", r"must be followed by '-'", 9),
    ("PEP-", r"'-' must be followed by a C-terminal modification", 5),
    ("PEP-[Amidated]K", r"nothing may follow a C-terminal modification", 15),
    ("PE*P", r"'\*' \(stop\)", 3),
    ("PE1P", r"a number outside brackets", 3),
    ("PEÜP", r"invalid residue 'Ü'", 3),
    ("", r"empty ProForma string", 0),
]


@pytest.mark.parametrize(("text", "match", "position"), INVALID)
def test_invalid_strings_raise_with_position(text: str, match: str, position: int) -> None:
    with pytest.raises(ProFormaError, match=match) as info:
        from_proforma(text)
    assert info.value.position == position
    assert isinstance(info.value, ValueError)
    if text:
        assert f"at position {position} of {text!r}" in str(info.value)


def test_error_pickles() -> None:
    with pytest.raises(ProFormaError) as info:
        from_proforma("PEPS[Phosho]TIDE")
    again = pickle.loads(pickle.dumps(info.value))
    assert str(again) == str(info.value) and again.position == 5


def test_bad_options() -> None:
    with pytest.raises(ParameterError, match="'cys' parameter of from_proforma"):
        from_proforma("PEP", cys="reduced")


# -- round trip ----------------------------------------------------------------------------------
def _same_sites(a: SiteSet, b: SiteSet) -> None:
    assert a.labels == b.labels
    np.testing.assert_array_equal(a.pkas, b.pkas)
    np.testing.assert_array_equal(a.counts, b.counts)
    np.testing.assert_array_equal(a.charges, b.charges)
    assert a.members == b.members
    assert a.sources == b.sources
    assert a.groups == b.groups


@settings(max_examples=60, deadline=None)
@given(
    seq=st.text(alphabet="ACDEFGHIKLMNPQRSTVWYUBZJ", min_size=1, max_size=40),
    scale=st.sampled_from(scale_names()),
    cys=st.sampled_from(["free", "bonded"]),
)
def test_round_trip_sequence_to_proforma(seq: str, scale: str, cys: str) -> None:
    text = to_proforma(seq.lower())
    assert text == seq
    a = from_sequence(seq, scale=scale, cys=cys)
    b = from_proforma(text, scale=scale, cys=cys)
    _same_sites(a.sites, b.sites)
    assert tuple(a.info.get("bonded_cysteines", ())) == b.info["bonded_cysteines"]


@pytest.mark.parametrize("text", [t for t, _ in VALID])
def test_canonical_text_parses_back_the_same(text: str) -> None:
    canonical = parse_proforma(text).to_text()
    assert parse_proforma(canonical).to_text() == canonical
    a, b = from_proforma(text), from_proforma(canonical)
    _same_sites(a.sites, b.sites)


def test_to_proforma_chains() -> None:
    assert to_proforma(["give qc", "FVNQ*"]) == "GIVEQC//FVNQ"
    assert to_proforma(parse_proforma("2x[acetyl]-ak")) == "2x[acetyl]-AK"


# -- chemistry -----------------------------------------------------------------------------------
@pytest.mark.parametrize("scale", ["bjellqvist", "lehninger", "thurlkill"])
def test_acetyl_amidated_remove_exactly_the_two_termini(scale: str) -> None:
    plain = from_sequence("APEPTIDEK", scale=scale).sites
    capped = from_proforma("[Acetyl]-APEPTIDEK-[Amidated]", scale=scale).sites

    def groups(s: SiteSet) -> Counter[str]:
        return Counter(m for ms in s.members for m in ms)

    assert groups(plain) - groups(capped) == Counter({"N-term A1": 1, "C-term K9": 1})
    assert groups(capped) - groups(plain) == Counter()
    assert float(plain.counts.sum()) - float(capped.counts.sum()) == 2.0


@pytest.mark.parametrize(("residue", "label"), [("S", "phosphoserine"), ("T", "phosphothreonine"),
                                                ("Y", "phosphotyrosine")])  # fmt: skip
def test_phosphosite_adds_two_acidic_steps(residue: str, label: str) -> None:
    m = from_proforma(f"GA{residue}[Phospho]AG", scale="lehninger")
    k = m.sites.labels.index(label)
    steps = m.sites.pkas[k, : m.sites.nsteps[k]]
    assert len(steps) == 2 and m.sites.charges[k] == 0  # neutral acid: 0 -> -1 -> -2
    # First step of a phosphate monoester below 2.5 (pKa1 about 1-2, common practice); second
    # step in peptides 5.6-6.1 for pSer/pThr/pTyr (Bienkiewicz & Lumb 1999, J. Biomol. NMR
    # 15:203, from memory), allowed 5.3-6.5 for the spread between studies.
    assert steps[0] < 2.5
    assert 5.3 <= steps[1] <= 6.5
    plain = from_sequence(f"GA{residue}AG", scale="lehninger")
    # two protons more lost at pH 8.5 (the Tyr phenol, pKa 10.07, is still mostly protonated)
    assert m.charge(8.5) - plain.charge(8.5) == pytest.approx(-2.0, abs=0.05)


def test_each_phosphosite_counts() -> None:
    one = from_proforma("GS[Phospho]GSG", scale="lehninger")
    two = from_proforma("GS[Phospho]GS[Phospho]G", scale="lehninger")
    assert two.charge(9.0) - one.charge(9.0) == pytest.approx(-2.0, abs=0.01)
    assert two.sites.members[two.sites.labels.index("phosphoserine")] == ("pS2", "pS4")


def test_trimethyllysine_stays_positive_at_ph_14() -> None:
    m = from_proforma("GK[Trimethyl]G", scale="lehninger")
    states = m.residue_states(14.0).set_index("member")
    assert states.loc["K2[Trimethyl]", "charge"] == 1.0
    assert states.loc["K2[Trimethyl]", "state"] == "permanent"
    assert states.loc["K2[Trimethyl]", "population"] == 1.0
    # quaternary ammonium +1, free amine 0, carboxylate -1 at pH 14
    assert m.charge(14.0) == pytest.approx(0.0, abs=1e-3)
    assert from_sequence("GKG", scale="lehninger").charge(14.0) == pytest.approx(-1.0, abs=0.05)


def test_scale_pka_follows_the_terminal_context() -> None:
    # Bjellqvist et al. 1994, Electrophoresis 15:529 (from memory): alpha-amino pKa of an
    # N-terminal Ala 7.59, Ser 6.93, other residues 7.5.
    m = from_proforma("AK//SK//GK//[Methyl]-SK", scale="bjellqvist")
    pka = {lab: float(m.sites.pkas[k, 0]) for k, lab in enumerate(m.sites.labels)}
    assert pka["Nterm(A)"] == pytest.approx(7.59)
    assert pka["Nterm(S)"] == pytest.approx(6.93)
    assert pka["Nterm"] == pytest.approx(7.5)
    assert pka["N-methyl alpha-amine"] == pytest.approx(6.93)
    assert m.sites.members[m.sites.labels.index("Nterm(S)")] == ("chain2:N-term S1",)


# -- disulfides ----------------------------------------------------------------------------------
# Hen egg-white lysozyme, UniProt P00698 residues 19-147 (mature chain; sequence from the entry as
# recalled, checked below by mass), disulfides C6-C127, C30-C115, C64-C80, C76-C94 (UniProt
# P00698 features, from memory).
LYSOZYME = (
    "KVFGRCELAAAMKRHGLDNYRGYSLGNWVCAAKFESNFNTQATNRNTDGSTDYGILQINSRWWCNDGRTPGSRNLCNIPCSALLSSDITASV"
    "NCAKKIVSDGNGMNAWVAWRNRCKGTDVQAWIRGCRL"
)
LYSOZYME_BONDS = ((6, 127), (30, 115), (64, 80), (76, 94))


def _with_bonds(seq: str, bonds: tuple[tuple[int, int], ...]) -> str:
    tags = {}
    for n, (a, b) in enumerate(bonds, start=1):
        tags[a] = tags[b] = f"[#XL{n}]"
    return "".join(r + tags.get(i, "") for i, r in enumerate(seq, start=1))


def _lysozyme_reference() -> tuple[float, str, str]:
    """(measured pI, ProForma, source): from data/reference/measured_pi.csv when present."""
    if REFERENCE.exists():
        lines = [ln for ln in REFERENCE.read_text().splitlines() if ln and not ln.startswith("#")]
        for row in csv.DictReader(lines):
            if row["id"] == "lyz_hen":
                return float(row["measured_pi"]), row["proforma"], row["pi_source"]
    # Wetter & Deutsch 1951, J. Biol. Chem. 192:237: pI about 11.0 (from memory)
    return 11.0, _with_bonds(LYSOZYME, LYSOZYME_BONDS), "Wetter & Deutsch 1951 (from memory)"


def test_lysozyme_sequence_matches_its_mass() -> None:
    # Outside reference: pyteomics average masses; native HEWL 14305 Da by ESI-MS (literature
    # value, from memory) with 4 disulfides (-2 H each).
    reduced = pyteomics_mass.calculate_mass(sequence=LYSOZYME, average=True)
    assert reduced - 8 * 1.00794 == pytest.approx(14305, abs=3)


def test_lysozyme_bonded_prediction_is_closer_than_free() -> None:
    measured, text, source = _lysozyme_reference()
    assert source
    assert parse_proforma(text).chains[0].sequence == LYSOZYME
    bonded = from_proforma(text)
    assert len(bonded.info["disulfides"]) == 4
    assert len(bonded.info["bonded_cysteines"]) == 8
    assert "C" not in bonded.sites.groups
    free = from_sequence(LYSOZYME)
    assert DEFAULT_SCALE == free.scale
    pi_bonded, pi_free = bonded.isoelectric_point(), free.isoelectric_point()
    assert pi_bonded is not None and pi_free is not None
    assert abs(pi_bonded - measured) < abs(pi_free - measured)
    # the database-only option gives the same molecule when every cysteine is bonded
    _same_sites(from_sequence(LYSOZYME, cys="bonded").sites, bonded.sites)
    pairs = {tuple(sorted(int(m[1:]) for m in pair)) for pair in bonded.info["disulfides"]}
    assert pairs == set(LYSOZYME_BONDS)


def test_cys_bonded_treats_unmodified_cysteines_only() -> None:
    m = from_proforma("ACKC[Carbamidomethyl]CC[#XL1]GC[#XL1]", scale="lehninger", cys="bonded")
    assert m.info["cys"] == "bonded"
    assert m.info["bonded_cysteines"] == ("C6", "C8", "C2", "C5")
    assert m.info["disulfides"] == (("C6", "C8"),)
    free = from_proforma("ACKC[Carbamidomethyl]CC[#XL1]GC[#XL1]", scale="lehninger")
    assert free.info["bonded_cysteines"] == ("C6", "C8")
    assert free.sites.members[free.sites.labels.index("C")] == ("C2", "C5")
    multi = from_proforma("AC//KC", cys="bonded")
    assert multi.info["bonded_cysteines"] == ("chain1:C2", "chain2:C2")


def test_disulfide_between_chains_of_insulin() -> None:
    # Human insulin disulfides A6-A11, A7-B7, A20-B19 (UniProt P01308 features, from memory)
    text = (
        "GIVEQC[#XL1]C[#XL2]TSIC[#XL1]SLYQLENYC[#XL3]N//FVNQHLC[#XL2]GSHLVEALYLVC[#XL3]GERGFFYTPKT"
    )
    m = from_proforma(text)
    assert m.info["disulfides"] == (
        ("chain1:C6", "chain1:C11"), ("chain1:C7", "chain2:C7"), ("chain1:C20", "chain2:C19")
    )  # fmt: skip
    assert [c["sequence"] for c in m.info["chains"]] == [INSULIN_A, INSULIN_B]
    free = from_proforma(text.replace("[#XL1]", "").replace("[#XL2]", "").replace("[#XL3]", ""))
    # six thiols fewer: above pH 11 the free form carries about 6 more negative charges
    assert m.charge(13.0) - free.charge(13.0) == pytest.approx(6.0, abs=0.1)


@pytest.mark.skipif(not REFERENCE.exists(), reason="data/reference/measured_pi.csv not present")
def test_every_reference_proforma_reads_as_its_sequence() -> None:
    lines = [ln for ln in REFERENCE.read_text().splitlines() if ln and not ln.startswith("#")]
    rows = list(csv.DictReader(lines))
    assert rows
    for row in rows:
        pf = parse_proforma(row["proforma"])
        assert "//".join(c.sequence for c in pf.chains) == row["sequence"], row["id"]
        m = from_proforma(row["proforma"])
        assert len(m.info["disulfides"]) == int(row["n_disulfides"]), row["id"]


def test_antibody_like_stoichiometry_pairs_copy_with_copy() -> None:
    m = from_proforma("2xAC[#XL1]KC[#XL2]//2xDC[#XL1]EC[#XL2]")
    assert len(m.info["chains"]) == 4
    assert m.info["disulfides"] == (
        ("chain1:C2", "chain3:C2"), ("chain2:C2", "chain4:C2"),
        ("chain1:C4", "chain3:C4"), ("chain2:C4", "chain4:C4"),
    )  # fmt: skip


# -- complexes -----------------------------------------------------------------------------------
INSULIN_A = "GIVEQCCTSICSLYQLENYCN"
INSULIN_B = "FVNQHLCGSHLVEALYLVCGERGFFYTPKT"


@pytest.mark.parametrize("scale", ["bjellqvist", "lehninger"])
def test_two_chain_charge_is_the_sum_of_the_chains(scale: str) -> None:
    ph = np.linspace(0.0, 14.0, 57)
    complex_ = from_proforma(f"{INSULIN_A}//{INSULIN_B}", scale=scale)
    a, b = from_sequence(INSULIN_A, scale=scale), from_sequence(INSULIN_B, scale=scale)
    np.testing.assert_allclose(complex_.charge(ph), a.charge(ph) + b.charge(ph), atol=1e-12)


def test_stoichiometry_equals_repeated_chains() -> None:
    hb = from_proforma("2xVLSPADK//2xVHLTPEEK")
    repeated = from_proforma("VLSPADK//VLSPADK//VHLTPEEK//VHLTPEEK")
    _same_sites(hb.sites, repeated.sites)
    single = from_sequence("VLSPADK").charge(7.0) + from_sequence("VHLTPEEK").charge(7.0)
    assert hb.charge(7.0) == pytest.approx(2 * single)
    assert hb.isoelectric_point() == pytest.approx(repeated.isoelectric_point())


chains_strategy = st.lists(
    st.text(alphabet="ACDEGHKRSTYW", min_size=1, max_size=15), min_size=2, max_size=4
)


@settings(max_examples=40, deadline=None)
@given(chains=chains_strategy, data=st.data())
def test_chain_order_does_not_matter(chains: list[str], data: st.DataObject) -> None:
    order = data.draw(st.permutations(chains))
    a = from_proforma("//".join(chains))
    b = from_proforma("//".join(order))
    ph = np.array([2.0, 5.0, 7.4, 9.0, 12.0])
    np.testing.assert_allclose(a.charge(ph), b.charge(ph), atol=1e-9)
    assert sorted(a.pkas()) == pytest.approx(sorted(b.pkas()), abs=1e-9)
    pa, pb = a.isoelectric_point(), b.isoelectric_point()
    assert pa == pytest.approx(pb, abs=1e-5)


# -- readable dominant form ----------------------------------------------------------------------
def test_residue_states_table() -> None:
    m = from_proforma("[Acetyl]-DHC[#XL1]KC[#XL1]S[Phospho]E", scale="lehninger")
    t = m.residue_states(7.0)
    assert list(t.columns) == [
        "member", "site", "group", "state", "charge", "population", "mean_charge", "count"
    ]  # fmt: skip
    by = t.set_index("member")
    assert by.loc["D1", "state"] == "deprotonated" and by.loc["D1", "charge"] == -1.0
    assert by.loc["K4", "state"] == "protonated" and by.loc["K4", "charge"] == 1.0
    assert by.loc["H2", "state"] == "deprotonated"  # Lehninger His 6.0 < 7
    assert by.loc["pS6", "state"] == "fully deprotonated" and by.loc["pS6", "charge"] == -2.0
    assert by.loc["C3", "state"] == "disulfide" and by.loc["C5", "state"] == "disulfide"
    assert "N-term D1" not in by.index
    assert float((t["mean_charge"] * t["count"]).sum()) == pytest.approx(m.charge(7.0))


def test_residue_states_with_ambiguous_residue() -> None:
    m = from_sequence("GBK", scale="lehninger")
    t = m.residue_states(7.0)
    rest = t[t["member"] == ""]
    assert list(rest["count"]) == [0.5]
    assert float((t["mean_charge"] * t["count"]).sum()) == pytest.approx(m.charge(7.0))


def _brute_force(m: object, ph: float) -> list[tuple[float, float]]:
    from zwitter.equilibrium import state_fractions

    s = m.sites  # type: ignore[attr-defined]
    fr = state_fractions(ph, s.pkas)
    groups = []
    for k in range(s.n_types):
        for _ in range(int(s.counts[k])):
            n = int(s.nsteps[k])
            groups.append([(float(fr[k, j]), float(s.charges[k] - j)) for j in range(n + 1)])
    out = []
    for combo in itertools.product(*groups):
        out.append((math.prod(p for p, _ in combo), sum(q for _, q in combo)))
    return sorted(out, reverse=True)


BRUTE = [("DHCKYE", 7.0), ("GS[Phospho]HKD", 6.0), ("EEEKKK", 4.4), ("CH", 7.5)]
BRUTE.append(("GC[Glutathione]KH", 3.0))  # a three-step group


@pytest.mark.parametrize(("text", "ph"), BRUTE)
def test_microstates_match_brute_force(text: str, ph: float) -> None:
    m = from_proforma(text, scale="lehninger")
    exact = _brute_force(m, ph)
    assert sum(p for p, _ in exact) == pytest.approx(1.0)
    top = m.microstates(ph, top=len(exact))
    assert len(top) == len(exact)
    np.testing.assert_allclose(top["population"], [p for p, _ in exact], rtol=1e-9, atol=1e-15)
    # equal populations may come in any order: compare the (population, charge) multisets
    got = sorted(zip(np.round(top["population"], 12), top["charge"], strict=True))
    want = sorted((round(p, 12), q) for p, q in exact)
    assert got == want
    assert list(top["rank"]) == list(range(1, len(exact) + 1))
    assert top["differs"].iloc[0] == ""


def test_microstates_of_a_long_peptide_are_fast_and_ordered() -> None:
    m = from_sequence("DEHKRCY" * 12, scale="lehninger")  # 84 residues, 2^86 microstates
    top = m.microstates(7.0, top=25)
    assert len(top) == 25
    assert np.all(np.diff(top["log10_population"]) <= 1e-12)
    assert top["population"].iloc[0] == pytest.approx(m.dominant(7.0).microstate_population)


def test_microstates_readable_columns() -> None:
    m = from_sequence("GH", scale="lehninger")
    top = m.microstates(6.0, top=3)
    assert top["charged"].iloc[0] == "N-term G1 +1, C-term H2 -1, H2 +1"
    assert top["differs"].iloc[1] == "H2 +1 -> 0"
    with pytest.raises(ParameterError, match="'top' parameter of microstates"):
        m.microstates(6.0, top=0)


def test_microstates_warn_on_fractional_counts() -> None:
    with pytest.warns(ZwitterWarning, match="rounded"):
        from_sequence("GBK", scale="lehninger").microstates(7.0, top=2)


# -- plumbing ------------------------------------------------------------------------------------
def test_text_input_dispatch() -> None:
    m = molecule_from_text(
        "[Acetyl]-PEPS[Phospho]TIDE", kind="proforma", scale="lehninger", cys="bonded"
    )
    assert m.kind == "proforma" and m.info["cys"] == "bonded"


def test_conditions_are_applied() -> None:
    class Shift:
        """A stand-in conditions object: lowers every pKa by 0.5."""

        def apply(self, sites: SiteSet) -> SiteSet:
            return sites.with_pkas(sites.pkas - 0.5)

    plain = from_sequence("GDKH", scale="lehninger", conditions=Shift())
    pf = from_proforma("GDKH", scale="lehninger", conditions=Shift())
    _same_sites(plain.sites, pf.sites)
    assert pf.charge(7.0) != from_proforma("GDKH", scale="lehninger").charge(7.0)


def test_unknown_residue_warns_with_chain() -> None:
    with pytest.warns(ZwitterWarning, match="chain2: 1 unknown residue"):
        from_proforma("GK//GXK")


def test_scale_without_selenocysteine_is_reported_in_the_text(tmp_path: Path) -> None:
    path = tmp_path / "nou.csv"
    rows = ["group,context,pka", "Nterm,,8", "Cterm,,3", "D,,4", "E,,4.4", "C,,8.5", "Y,,10",
            "H,,6.5", "K,,10.5", "R,,12.5"]  # fmt: skip
    path.write_text("\n".join(rows) + "\n")
    with pytest.raises(ProFormaError, match="selenocysteine") as info:
        from_proforma("[Acetyl]-GGU", scale=str(path))
    assert info.value.position == 12


def test_modification_table_is_shared() -> None:
    assert load_modifications() is load_modifications()
