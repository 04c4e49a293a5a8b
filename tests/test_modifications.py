"""The packaged modification table: schema, chemistry it must cover, masses against pyteomics."""

from __future__ import annotations

import re

import pytest
from pyteomics.mass import nist_mass

from zwitter.errors import ScaleError
from zwitter.modifications import (
    GROUP_CODES,
    Modification,
    ModificationTable,
    list_modifications,
    load_modifications,
    scale_pka,
)
from zwitter.scales import GROUPS, get_scale
from zwitter.tables import packaged_text

ROWS = list_modifications()


def test_table_loads_and_every_row_is_valid() -> None:
    # Loading validates each row in Modification.__post_init__; check the schema facts again here
    # from the outside so that a loosened validator cannot hide a bad row.
    assert len(ROWS) >= 80
    assert len({m.name for m in ROWS}) >= 20  # the issue asks for at least 20 modifications
    header = next(
        line for line in packaged_text("modifications.csv").splitlines() if line and line[0] != "#"
    )
    assert header.split(",") == [
        "name", "unimod", "aliases", "target", "removes", "add_label", "add_pka", "add_charge",
        "mono_delta", "avg_delta", "pka_source", "source",
    ]  # fmt: skip
    pairs = set()
    for m in ROWS:
        assert (m.name, m.target) not in pairs, f"duplicate row {m.name} {m.target} (line {m.line})"
        pairs.add((m.name, m.target))
        assert m.source.startswith(f"Unimod UNIMOD:{m.unimod} ("), m.line
        assert all(code in GROUP_CODES for code in m.removes)
        if m.add_label:
            assert m.pka_source, m.line
            assert m.add_charge is not None
        assert list(m.add_pka) == sorted(m.add_pka)
    # one accession and one set of masses per name
    by_name: dict[str, set[tuple[int, float, float]]] = {}
    for m in ROWS:
        by_name.setdefault(m.name, set()).add((m.unimod, m.mono_delta, m.avg_delta))
    assert all(len(v) == 1 for v in by_name.values())


@pytest.mark.parametrize(
    ("name", "target", "removes", "adds"),
    [
        # what the issue lists; the effects are textbook chemistry (amide, ester, thioether
        # formation removes the group; a phosphate monoester is a diprotic acid)
        ("Acetyl", "N-term", ("Nterm",), False),
        ("Amidated", "C-term", ("Cterm",), False),
        ("Carbamidomethyl", "C", ("C",), False),
        ("Deamidated", "R", ("R",), False),  # citrullination
        ("Gln->pyro-Glu", "Q@N-term", ("Nterm",), False),
        ("Glu->pyro-Glu", "E@N-term", ("Nterm", "E"), False),
        ("Methyl", "D", ("D",), False),  # Asp methyl ester
        ("Acetyl", "K", ("K",), False),  # lysine acylation
        ("Phospho", "S", (), True),
        ("Phospho", "T", (), True),
        ("Phospho", "Y", ("Y",), True),
        ("Phospho", "H", ("H",), True),
        ("Sulfo", "Y", ("Y",), True),
        ("Deamidated", "N", (), True),
        ("Deamidated", "Q", (), True),
        ("Nitro", "Y", ("Y",), True),
        ("Iodo", "Y", ("Y",), True),
        ("Trimethyl", "K", ("K",), True),
    ],
)
def test_issue_chemistry_is_covered(
    name: str, target: str, removes: tuple[str, ...], adds: bool
) -> None:
    row = next((m for m in ROWS if m.name == name and m.target == target), None)
    assert row is not None, f"{name} on {target} missing"
    assert row.removes == removes
    assert bool(row.add_label) == adds


def test_kinds_of_effect() -> None:
    table = load_modifications()
    sulfo = table.match("Sulfo", "Y")
    assert sulfo is not None and sulfo.is_permanent and sulfo.add_charge == -1
    tri = table.match("Trimethyl", "K")
    assert tri is not None and tri.is_permanent and tri.add_charge == +1
    deam = table.match("Deamidated", "N")
    assert deam is not None and deam.add_scale_group == "D" and deam.add_charge == 0
    nitro = table.match("Nitro", "Y")
    # 3-nitrotyrosine phenol pKa about 7.2 (Riordan, Sokolovsky & Vallee 1967, Biochemistry;
    # from memory), against about 10 for tyrosine
    assert nitro is not None and 6.8 <= nitro.add_pka[0] <= 7.6


def _composition(source: str) -> list[tuple[str, int]]:
    start = source.index("(") + 1
    depth, j = 1, start
    while depth:
        depth += {"(": 1, ")": -1}.get(source[j], 0)
        j += 1
    body = source[start : j - 1]
    # HexNAc is written as a sugar unit: N-acetylhexosamine residue C8H13NO5 (common practice)
    body = body.replace("HexNAc", "C(8) H(13) N O(5)")
    return [(el, int(n or 1)) for el, n in re.findall(r"(\S+?)(?:\((-?\d+)\))?(?:\s|$)", body)]


def _average(element: str) -> float:
    return sum(mass * abundance for iso, (mass, abundance) in nist_mass[element].items() if iso)


@pytest.mark.parametrize("row", ROWS, ids=[f"{m.name}@{m.target}" for m in ROWS])
def test_masses_match_composition(row: Modification) -> None:
    # Outside reference: pyteomics' NIST element masses and isotope abundances. Unimod's
    # average masses use slightly different atomic weights, hence 0.002 Da for the average.
    comp = _composition(row.source)
    assert all(el in nist_mass for el, _ in comp), comp
    mono = sum(nist_mass[el][0][0] * n for el, n in comp)
    avg = sum(_average(el) * n for el, n in comp)
    assert mono == pytest.approx(row.mono_delta, abs=1e-5)
    assert avg == pytest.approx(row.avg_delta, abs=2e-3)


def test_lookup_by_alias_accession_and_case() -> None:
    table = load_modifications()
    assert table.match("phosphorylation", "S") is table.match("Phospho", "S")
    assert table.match("UNIMOD:21", "T") is table.match("PHOSPHO", "T")
    assert table.match(21, "Y") is table.match("Phospho", "Y")
    assert table.match("Phospho", "K") is None
    assert table.match("Gln->pyro-Glu", "Q") is None  # needs the N-terminal Q
    assert table.match("Gln->pyro-Glu", "Q", first=True) is not None
    assert table.match("Gln->pyro-Glu", "Q", position="N-term") is not None
    assert table.targets("Phospho") == ("S", "T", "Y", "H")
    assert table.suggestions("Phosho") == ["Phospho"]
    assert table.rows_for("no such thing") == ()


def test_scale_values_follow_context() -> None:
    bj = get_scale("bjellqvist")
    # Bjellqvist et al. 1994, Electrophoresis 15:529 (from memory): N-terminal Ala 7.59, default 7.5
    assert scale_pka(bj, "Nterm", "A", True, False)[0] == pytest.approx(7.59)
    assert scale_pka(bj, "Nterm", "G", True, False)[0] == pytest.approx(7.5)
    assert scale_pka(bj, "K", "K", False, False)[0] == bj.pka["K"]


@pytest.mark.parametrize(
    ("changes", "match"),
    [
        ({"target": "Q@middle"}, "target"),
        ({"removes": ("Nterm",)}, "only an N-terminal target"),
        ({"removes": ("K",)}, "cannot remove the K side chain"),
        (
            {"add_label": "x", "add_charge": 0, "add_pka": (6.0, 1.2), "pka_source": "s"},
            "ascending",
        ),
        ({"add_label": "x", "add_charge": 0, "pka_source": "s"}, "permanent charge"),
        (
            {"add_label": "x", "add_charge": 1, "add_scale_group": "D", "pka_source": "s"},
            "add_charge 0",
        ),
        ({"add_label": "x"}, "add_charge must be given"),
        ({"add_label": "x", "add_charge": -1}, "pka_source"),
        ({"unimod": 0}, "positive"),
    ],
)
def test_bad_rows_fail_with_line(changes: dict[str, object], match: str) -> None:
    base: dict[str, object] = {"name": "Test", "unimod": 9999, "target": "S", "line": 7}
    base.update(changes)
    with pytest.raises(ScaleError, match=match) as info:
        Modification(**base)  # type: ignore[arg-type]
    assert "line 7" in str(info.value)


def test_alias_clash_is_refused() -> None:
    a = Modification("A1", 1, "K", removes=("K",), aliases=("same",))
    b = Modification("B1", 2, "K", removes=("K",), aliases=("same",), line=3)
    with pytest.raises(ScaleError, match="already means A1"):
        ModificationTable([a, b])


def test_every_removed_group_is_a_known_group() -> None:
    assert set(GROUP_CODES) == set(GROUPS)
