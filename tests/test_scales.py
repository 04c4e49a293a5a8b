"""Packaged pKa scales and user scale files."""

from __future__ import annotations

from pathlib import Path

import pytest

import zwitter
from zwitter import ScaleError
from zwitter.scales import REQUIRED_GROUPS


def test_at_least_eight_scales_with_all_groups_and_sources() -> None:
    scales = zwitter.list_scales()
    assert len(scales) >= 8
    for sc in scales:
        assert set(REQUIRED_GROUPS) <= set(sc.pka), sc.key
        assert sc.citation, sc.key
        for group in sc.pka:
            assert sc.source_of(group), (sc.key, group)


def test_bjellqvist_terminus_specific_values() -> None:
    # Bjellqvist et al. 1994, Electrophoresis 15:529: N-terminal A 7.59, C-terminal D 4.55
    # (the values carried by the packaged table, from memory)
    sc = zwitter.get_scale("bjellqvist")
    assert sc.nterm["A"] == pytest.approx(7.59)
    assert sc.cterm["D"] == pytest.approx(4.55)
    m = zwitter.from_sequence("AKD", scale=sc)
    assert "Nterm(A)" in m.sites.labels and "Cterm(D)" in m.sites.labels


def test_unknown_scale_suggests() -> None:
    with pytest.raises(ScaleError, match="Did you mean bjellqvist"):
        zwitter.get_scale("bjelqvist")


GOOD_CSV = """# my titration
group,context,pka,source
Nterm,,8.0,lab
Nterm,A,7.6,lab
Cterm,,3.1,lab
D,,3.9,lab
E,,4.3,lab
C,,8.5,lab
Y,,10.0,lab
H,,6.5,lab
K,,10.5,lab
R,,12.5,lab
"""

GOOD_TOML = """title = "lab scale"
source = "our titrations"
[pka]
Nterm = 8.0
Cterm = 3.1
D = 3.9
E = 4.3
C = 8.5
Y = 10.0
H = 6.5
K = 10.5
R = 12.5
[nterm]
A = 7.6
"""


def test_user_csv_and_toml_agree(tmp_path: Path) -> None:
    csv_file = tmp_path / "lab.csv"
    csv_file.write_text(GOOD_CSV)
    toml_file = tmp_path / "lab.toml"
    toml_file.write_text(GOOD_TOML)
    a = zwitter.from_sequence("AKDEHYR", scale=str(csv_file))
    b = zwitter.from_sequence("AKDEHYR", scale=toml_file)
    assert a.isoelectric_point() == pytest.approx(b.isoelectric_point())
    assert "Nterm(A)" in a.sites.labels


@pytest.mark.parametrize(
    ("name", "text", "message"),
    [
        (
            "bad.csv",
            GOOD_CSV.replace("D,,3.9", "D,,three"),
            r"bad.csv, line 6, column 'pka': expected a number",
        ),
        (
            "bad.csv",
            GOOD_CSV.replace("H,,6.5,lab", "Q,,6.5,lab"),
            r"line 10, column 'group': unknown group 'Q'",
        ),
        (
            "bad.csv",
            GOOD_CSV.replace("K,,10.5,lab", "K,,10.5"),
            r"line 11, column 'source': expected 4 fields",
        ),
        ("bad.csv", GOOD_CSV.replace("Nterm,A,7.6", "Nterm,AB,7.6"), r"line 4, column 'context'"),
        (
            "bad.csv",
            GOOD_CSV.replace("group,context,pka", "group,ctx,pka"),
            r"line 2, column 'context': missing column",
        ),
        ("bad.csv", GOOD_CSV.replace("R,,12.5,lab\n", ""), r"has no pKa for R"),
        ("bad.toml", GOOD_TOML.replace("D = 3.9", "D = 3.9.1"), r"bad.toml, line 6.*invalid TOML"),
        (
            "bad.toml",
            GOOD_TOML.replace("D = 3.9", 'D = "low"'),
            r"line 6, column 'D': pKa of 'D' must be a number",
        ),
        ("bad.txt", GOOD_CSV, r"unknown scale file type '.txt'"),
    ],
)
def test_malformed_scale_files(tmp_path: Path, name: str, text: str, message: str) -> None:
    path = tmp_path / name
    path.write_text(text)
    with pytest.raises(ScaleError, match=message):
        zwitter.load_scale_file(path)


def test_missing_scale_file() -> None:
    with pytest.raises(ScaleError, match="cannot read scale file"):
        zwitter.load_scale_file("/nonexistent/scale.csv")
