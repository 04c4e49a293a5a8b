"""Temperature and ionic-strength corrections (zwitter.conditions) and the smeared-charge model."""

from __future__ import annotations

import csv
import math
import pickle
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import zwitter
from zwitter.conditions import (
    Conditions,
    SphereModel,
    bjerrum_length,
    davies_log_gamma,
    davies_pka_shift,
    davies_species_terms,
    debye_huckel_a,
    debye_kappa,
    ionization_enthalpy,
    molecule_mass,
    pkw,
    residue_count,
    van_t_hoff,
    water_permittivity,
)
from zwitter.errors import ConditionsError, ZwitterWarning
from zwitter.molecule import Molecule
from zwitter.sequence import compose
from zwitter.sites import Site, SiteSet

ROOT = Path(__file__).resolve().parent.parent
REFERENCE = ROOT / "data" / "reference"
DATA = ROOT / "src" / "zwitter" / "data"


def _rows(path: Path) -> list[dict[str, str]]:
    with path.open(encoding="utf-8") as handle:
        return list(csv.DictReader(line for line in handle if not line.startswith("#")))


# Hen egg-white lysozyme, mature chain (UniProt P00698 19-147), from data/reference/measured_pi.csv.
LYSOZYME = next(r for r in _rows(REFERENCE / "measured_pi.csv") if r["id"] == "lyz_hen")["sequence"]


# -- constants of water ---------------------------------------------------------------------------
@pytest.mark.parametrize(
    ("temperature", "expected", "tol"),
    [
        # Robinson & Stokes 1959, Electrolyte Solutions 2nd ed., Appendix 7.1, Debye-Hueckel A
        # (molal, log10) at 0 and 25 C (from memory).
        (0.0, 0.4918, 0.003),
        (25.0, 0.5091, 0.003),
    ],
)
def test_debye_huckel_a_against_handbook(temperature: float, expected: float, tol: float) -> None:
    assert debye_huckel_a(temperature) == pytest.approx(expected, abs=tol)


def test_debye_huckel_a_is_the_value_of_the_reference_file() -> None:
    # data/reference/ionic_strength.csv computes with A = 0.5108 at 25 C (Alberty's value).
    assert debye_huckel_a(25.0) == pytest.approx(0.5108, abs=2e-4)


def test_water_constants() -> None:
    # Malmberg & Maryott 1956, J. Res. Natl. Bur. Stand. 56:1: eps_r = 78.30 at 25 C (from memory)
    assert water_permittivity(25.0) == pytest.approx(78.30, abs=0.02)
    # Bjerrum length of water at 25 C is 0.71 nm (Israelachvili, Intermolecular and Surface
    # Forces, 3rd ed., ch. 3; from memory)
    assert bjerrum_length(25.0) == pytest.approx(7.1, abs=0.1)
    # Debye length of a 1:1 electrolyte at 25 C: 0.304 nm / sqrt(I) (Israelachvili, ch. 14;
    # from memory)
    for ionic in (0.01, 0.1, 0.15):
        assert 1.0 / debye_kappa(ionic) == pytest.approx(3.04 / math.sqrt(ionic), rel=0.01)
    # pKw: 13.995 at 25 C, 14.94 at 0 C, 13.62 at 37 C (Harned & Robinson 1940, Trans. Faraday
    # Soc. 36:973; from memory)
    assert pkw(25.0) == pytest.approx(13.995, abs=0.005)
    assert pkw(0.0) == pytest.approx(14.94, abs=0.02)
    assert pkw(37.0) == pytest.approx(13.62, abs=0.02)


# -- van 't Hoff ----------------------------------------------------------------------------------
def test_van_t_hoff_reproduces_bates_and_hetzer_tris() -> None:
    # Bates & Hetzer 1961, J. Phys. Chem. 65:667 (data/reference/buffer_temperature.csv): Tris pK
    # 8.677 at 5 C and 7.674 at 40 C, from Goldberg 2002's 25 C pK 8.072, dH 47.45, dCp -59.
    assert van_t_hoff(8.072, 47.45, -59.0, 5.0) == pytest.approx(8.677, abs=0.005)
    assert van_t_hoff(8.072, 47.45, -59.0, 40.0) == pytest.approx(7.674, abs=0.01)


def test_van_t_hoff_is_identity_at_reference_and_vectorised() -> None:
    assert van_t_hoff(4.2, 30.0, -100.0, 25.0) == 4.2
    out = van_t_hoff(np.array([4.0, 9.0]), np.array([0.0, 50.0]), 0.0, 37.0)
    assert out.shape == (2,) and out[0] == pytest.approx(4.0) and out[1] < 9.0


def test_site_temperature_shift_matches_the_formula() -> None:
    ss = SiteSet.from_sites([Site("K", (10.5,), 1), Site("D", (3.9,), 0)])
    shifted = Conditions(temperature=37.0).apply(ss)
    expected_k = van_t_hoff(10.5, ionization_enthalpy("K", 1, 1, 10.5).dh, 0.0, 37.0)
    assert shifted.pkas[0, 0] == pytest.approx(expected_k)
    # amines lose about 0.3 pH unit from 25 to 37 C, carboxyls almost nothing (common practice)
    assert -0.4 < shifted.pkas[0, 0] - 10.5 < -0.25
    assert abs(shifted.pkas[1, 0] - 3.9) < 0.02


# -- Davies ---------------------------------------------------------------------------------------
IONIC_ROWS = _rows(REFERENCE / "ionic_strength.csv")


def _davies_rows(source_word: str) -> list[dict[str, str]]:
    return [r for r in IONIC_ROWS if r["method"] == "calculated" and source_word in r["source"]]


@pytest.mark.parametrize(
    "row", _davies_rows("Davies"), ids=lambda r: f"{r['buffer']}-{r['ionic_strength']}-{r['kind']}"
)
def test_davies_against_worked_values(row: dict[str, str]) -> None:
    # Davies equation worked values (Davies 1962, Ion Association) in ionic_strength.csv
    za = {"acetate": 0, "phosphate": -1}[row["buffer"]]
    pk0 = {"acetate": 4.756, "phosphate": 7.198}[row["buffer"]]
    scale = "concentration" if row["kind"] == "concentration" else "activity"
    got = pk0 + davies_pka_shift(za, float(row["ionic_strength"]), 25.0, scale)
    assert got == pytest.approx(float(row["pka_apparent"]), abs=0.002)


@pytest.mark.parametrize(
    "row", _davies_rows("Debye"), ids=lambda r: f"{r['buffer']}-{r['ionic_strength']}-{r['kind']}"
)
def test_davies_close_to_extended_debye_huckel(row: dict[str, str]) -> None:
    # extended Debye-Hueckel (B = 1.6) as used by Alberty 2003 and Goldberg 2002: the two
    # activity models agree within about 0.015 up to I = 0.15 M
    za = {"acetate": 0, "phosphate": -1}[row["buffer"]]
    pk0 = {"acetate": 4.756, "phosphate": 7.198}[row["buffer"]]
    scale = "concentration" if row["kind"] == "concentration" else "activity"
    got = pk0 + davies_pka_shift(za, float(row["ionic_strength"]), 25.0, scale)
    assert got == pytest.approx(float(row["pka_apparent"]), abs=0.015)


def test_davies_applied_to_sites_equals_the_step_formula() -> None:
    ss = SiteSet.from_sites([Site("phosphate", (2.15, 7.198), 0, group="phosphoserine")])
    out = Conditions(ionic_strength=0.15).apply(ss)
    # step 1: acid charge 0; step 2: acid charge -1
    assert out.pkas[0, 0] == pytest.approx(2.15 + davies_pka_shift(0, 0.15))
    assert out.pkas[0, 1] == pytest.approx(7.198 + davies_pka_shift(-1, 0.15))
    assert out.pkas[0, 1] == pytest.approx(6.839, abs=0.002)  # ionic_strength.csv, Davies mixed


@settings(max_examples=60, deadline=None)
@given(
    za=st.integers(min_value=-2, max_value=2),
    ionic=st.floats(min_value=1e-4, max_value=0.5),
    temperature=st.floats(min_value=0.0, max_value=100.0),
)
def test_sign_of_the_davies_shift(za: int, ionic: float, temperature: float) -> None:
    # HA(za) = A(za - 1) + H+: on the glass-electrode (activity) scale the pKa falls when the base
    # form carries more charge (za <= 0) and rises when the acid form does (za >= 1); on the
    # concentration scale cationic acids of charge +1 do not move.
    mixed = davies_pka_shift(za, ionic, temperature, "activity")
    conc = davies_pka_shift(za, ionic, temperature, "concentration")
    if za <= 0:
        assert mixed < 0 and conc < 0
    else:
        assert mixed > 0
    if za == 1:
        assert conc == pytest.approx(0.0, abs=1e-12)
    if za == 2:
        assert conc > 0
    site = SiteSet.from_sites([Site("x", (7.0,), za, group="x")])
    moved = Conditions(temperature=25.0, ionic_strength=ionic).apply(site).pkas[0, 0] - 7.0
    assert np.sign(moved) == np.sign(davies_pka_shift(za, ionic, 25.0))


def test_davies_log_gamma_grows_with_charge_squared() -> None:
    assert davies_log_gamma(2, 0.1) == pytest.approx(4 * davies_log_gamma(1, 0.1))
    assert davies_log_gamma(0, 0.1) == 0.0


@settings(max_examples=60, deadline=None)
@given(
    za=st.integers(min_value=-4, max_value=3),
    ionic=st.floats(min_value=1e-4, max_value=0.5),
    temperature=st.floats(min_value=0.0, max_value=100.0),
    scale=st.sampled_from(["activity", "concentration"]),
)
def test_species_terms_give_the_step_formula_for_one_step(
    za: int, ionic: float, temperature: float, scale: str
) -> None:
    # Exact identity: a step HA(za) -> A(za - 1) between two whole forms moves by
    # [a za^2 - 0] - [a (za - 1)^2 - h] = log10 g(A) - log10 g(HA) (+ log10 g(H+)), the
    # per-step formula of davies_pka_shift (and of ionic_strength.csv's header).
    a, h = davies_species_terms(ionic, temperature, scale)
    assert a == pytest.approx(-davies_log_gamma(1, ionic, temperature), abs=1e-12)
    assert h == (davies_log_gamma(1, ionic, temperature) if scale == "concentration" else 0.0)
    shift = a * za**2 - a * (za - 1) ** 2 + h
    assert shift == pytest.approx(davies_pka_shift(za, ionic, temperature, scale), abs=1e-12)


def test_species_terms_reject_an_unknown_ph_scale() -> None:
    with pytest.raises(ConditionsError, match="ph_scale"):
        davies_species_terms(0.1, 25.0, "nbs")


def test_sequences_keep_the_per_site_correction() -> None:
    # Proteins and peptides from sequences: independent sites, each shifted by the charges of its
    # own two forms (unchanged by the whole-form treatment of structures).
    cond = Conditions(ionic_strength=0.15)
    m = zwitter.from_sequence("ACDEHKRY", conditions=cond)
    expected = cond.apply(m.reference_sites)
    assert np.array_equal(m.sites.pkas, expected.pkas, equal_nan=True)
    dt, di = cond.pka_shifts(m.reference_sites)
    assert np.any(np.abs(di) > 0.05)


# -- validation -----------------------------------------------------------------------------------
@pytest.mark.parametrize(
    ("kwargs", "message"),
    [
        ({"temperature": -1.0}, "The 'temperature' condition must be degrees Celsius in [0, 100] "
         "(liquid water). Got -1.0 instead."),
        ({"temperature": 100.5}, "Got 100.5 instead."),
        ({"temperature": float("nan")}, "Got nan instead."),
        ({"temperature": "hot"}, "Got 'hot' instead."),
        (
            {"ionic_strength": -0.1},
            "The 'ionic_strength' condition must be mol/L in [0, 5]. Got -0.1 instead. Ionic "
            "strength is half the sum of c z^2 over all ions: it cannot be negative.",
        ),
        ({"ionic_strength": 150.0}, "Check the units: the value is in mol/L (150 mM NaCl is 0.15)"),
        ({"ionic_strength": float("inf")}, "Got inf instead."),
        ({"electrostatics": "cube"}, "The 'electrostatics' condition must be False or 'sphere'."),
        ({"ph_scale": "nbs"}, "The 'ph_scale' condition must be one of activity, concentration."),
    ],
)  # fmt: skip
def test_bad_conditions(kwargs: dict[str, object], message: str) -> None:
    with pytest.raises(ConditionsError) as info:
        Conditions(**kwargs)  # type: ignore[arg-type]
    assert message in str(info.value)
    assert isinstance(info.value, ValueError)
    again = pickle.loads(pickle.dumps(info.value))
    assert str(again) == str(info.value)


def test_davies_beyond_its_range_warns() -> None:
    with pytest.warns(ZwitterWarning, match="beyond the range of the Davies equation"):
        Conditions(ionic_strength=0.8)


def test_electrostatics_spellings() -> None:
    assert Conditions(electrostatics=True).electrostatics == "sphere"
    assert Conditions(electrostatics="none").electrostatics is False
    assert Conditions(electrostatics=None).electrostatics is False  # type: ignore[arg-type]


# -- apply on molecules and batches ---------------------------------------------------------------
def test_reference_conditions_change_nothing() -> None:
    plain = zwitter.from_sequence("ACDEHKRY")
    same = zwitter.from_sequence("ACDEHKRY", conditions=Conditions())
    grid = np.linspace(0, 14, 57)
    assert np.array_equal(plain.charge(grid), same.charge(grid))
    assert plain.isoelectric_point() == same.isoelectric_point()
    assert same.sites is same.reference_sites


def test_batch_and_single_shift_alike() -> None:
    scale = zwitter.get_scale(None)
    comp = compose(["ACDK", "HHRY", "EEEK"], scale)
    cond = Conditions(temperature=4.0, ionic_strength=0.1)
    batch = cond.apply(comp.sites)
    assert batch.is_batch and batch.pkas.shape == comp.sites.pkas.shape
    for i, seq in enumerate(["ACDK", "HHRY", "EEEK"]):
        single = zwitter.from_sequence(seq, conditions=cond)
        row = batch.row(i)
        assert sorted(row.pkas[:, 0].tolist()) == pytest.approx(
            sorted(single.sites.pkas[:, 0].tolist())
        )
    # one (K, S) shift for every molecule of the batch
    dt, di = cond.pka_shifts(comp.sites)
    assert np.allclose(batch.pkas, comp.sites.pkas + dt + di, equal_nan=True)


def test_temperature_moves_the_pi_of_a_basic_peptide_down() -> None:
    # amine pKa values fall with temperature (large positive dH), carboxyls barely move: a basic
    # peptide's pI falls as the solution warms (common practice: Tris-like behaviour)
    seq = "GKKRKHG"
    pis = [
        zwitter.from_sequence(seq, conditions=Conditions(temperature=t)).isoelectric_point()
        for t in (5.0, 25.0, 37.0)
    ]
    assert pis[0] > pis[1] > pis[2]


def test_corrections_table_names_every_step_and_its_source() -> None:
    m = zwitter.from_sequence("ACDEHKRYU")
    table = Conditions(temperature=10.0, ionic_strength=0.05).corrections(m.sites)
    assert len(table) == int(m.sites.nsteps.sum())
    assert table["enthalpy_source"].str.len().min() > 10
    assert np.allclose(table["pka"], table["pka_reference"] + table["shift_temperature"]
                       + table["shift_ionic_strength"])  # fmt: skip


# -- enthalpy table coverage ----------------------------------------------------------------------
def test_every_polypeptide_group_has_its_own_row() -> None:
    for group, charge, pka in [("Nterm", 1, 8.0), ("Cterm", 0, 3.5), ("D", 0, 3.9), ("E", 0, 4.3),
                               ("C", 0, 8.3), ("Y", 0, 10.1), ("H", 1, 6.5), ("K", 1, 10.5),
                               ("R", 1, 12.5), ("U", 0, 5.2)]:  # fmt: skip
        row = ionization_enthalpy(group, 1, charge, pka)
        assert row.key == group and row.source


def test_every_modification_group_is_covered() -> None:
    labels = {
        (r["add_label"], len(r["add_pka"].split(";")))
        for r in _rows(DATA / "modifications.csv")
        if r["add_label"] and r["add_pka"] and not r["add_pka"].startswith("scale:")
    }
    for label, steps in labels:
        for step in range(1, steps + 1):
            row = ionization_enthalpy(f"mod@{label}", step, 0, 5.0, label)
            assert not row.key.startswith("fallback:"), (label, step)


def test_small_molecule_groups_are_covered_or_fall_back_by_class() -> None:
    path = DATA / "ionizable_groups.csv"
    if path.exists():  # the structure reader's group table: every step of every key is covered
        rows = {r["key"]: r for r in _rows(path)}
        for key, r in rows.items():
            pkas = [float(x) for x in r["pkas"].split(";")]
            for j, pka in enumerate(pkas):
                assert ionization_enthalpy(key, j + 1, int(r["charge"]) - j, pka).source
        for key in ("carboxylic_acid", "phosphoric_acid", "amine_primary", "imidazole", "phenol"):
            if key in rows:
                steps = len(rows[key]["pkas"].split(";"))
                for j in range(steps):
                    assert ionization_enthalpy(key, j + 1, 0, 5.0).key == key
    # the class fallbacks (acid-form charge, pKa range) as documented in the table header
    assert ionization_enthalpy("some amine", 1, 1, 10.0).key == "fallback:aliphatic ammonium"
    assert ionization_enthalpy("a pyridine", 1, 1, 5.2).key == "fallback:aromatic ammonium"
    assert ionization_enthalpy("an acid", 1, 0, 4.0).key == "fallback:strong or carboxylic acid"
    assert ionization_enthalpy("a phenol", 1, 0, 9.9).key == "fallback:weak neutral acid"
    assert ionization_enthalpy("a dianion", 2, -1, 7.0).key == "fallback:anionic acid"


# -- smeared-charge electrostatics ---------------------------------------------------------------
def test_sphere_radius_from_mass() -> None:
    # common practice: v = 0.73 mL/g; a 14.3 kDa protein is a sphere of about 16 A radius
    model = SphereModel.for_mass(14300.0, 0.1)
    assert model.radius == pytest.approx(16.05, abs=0.1)
    # screening: w falls as the ionic strength rises
    ws = [SphereModel.for_mass(14300.0, i).w for i in (0.0, 0.01, 0.1, 0.5)]
    assert ws == sorted(ws, reverse=True)
    # at I = 0, w = l_B / (2 b) (Tanford 1961, Physical Chemistry of Macromolecules; from memory)
    assert ws[0] == pytest.approx(bjerrum_length(25.0) / (2 * model.radius), rel=1e-9)


def test_sphere_keeps_the_pi_and_flattens_the_curve() -> None:
    plain = zwitter.from_sequence(LYSOZYME, cys="bonded", conditions=Conditions(ionic_strength=0.1))
    sphere = zwitter.from_sequence(
        LYSOZYME, cys="bonded", conditions=Conditions(ionic_strength=0.1, electrostatics="sphere")
    )
    assert sphere.isoelectric_point() == pytest.approx(plain.isoelectric_point(), abs=1e-9)
    pi = plain.isoelectric_point()
    assert sphere.charge(pi) == pytest.approx(0.0, abs=1e-6)
    for ph in (3.0, 6.0, 12.5):
        assert abs(sphere.charge(ph)) < abs(plain.charge(ph))
        assert np.sign(sphere.charge(ph)) == np.sign(plain.charge(ph))


def test_sphere_solution_is_self_consistent() -> None:
    m = zwitter.from_sequence(LYSOZYME, cys="bonded", conditions=Conditions(electrostatics=True))
    model = m._sphere
    assert model is not None
    grid = np.linspace(2, 13, 23)
    z = m.charge(grid)
    # Z = Z_int(pH + 0.868 w Z): the charge of the intrinsic sites at the shifted pH
    intrinsic = Molecule(m.sites, name="intrinsic")
    assert np.allclose(z, intrinsic.charge(grid + model.slope * z), atol=1e-7)
    assert np.all(np.diff(z) < 0)  # still falls strictly with pH
    curve = m.curve(grid)
    assert np.allclose(curve["charge"], z)
    table = m.site_table(5.0)
    assert table["charge"].sum() == pytest.approx(m.charge(5.0), abs=1e-7)
    assert m.dominant(5.0).mean_charge == pytest.approx(m.charge(5.0))
    assert abs(m.species(5.0)["population"].sum() - 1.0) < 1e-9


def test_sphere_needs_a_size() -> None:
    ss = SiteSet.from_sites([Site("NH3+", (9.0,), 1)])
    with pytest.raises(ConditionsError, match="give its mass in daltons"):
        Molecule(ss, name="amine", conditions=Conditions(electrostatics="sphere"))
    m = Molecule(
        ss, name="amine", info={"mass": 5000.0}, conditions=Conditions(electrostatics=True)
    )
    assert molecule_mass(m) == 5000.0 and m.charge(7.0) < 1.0


def test_size_from_the_readers() -> None:
    m = zwitter.from_sequence(LYSOZYME)
    assert residue_count(m) == 129
    # average mass of the reduced chain, 14313 Da (measured_pi.csv lists 14305 with 4 disulfides)
    assert molecule_mass(m) == pytest.approx(14313, abs=2)
    # a custom name does not hide the sequence: the mass still comes from the residues
    named = zwitter.from_sequence(LYSOZYME, name="lysozyme")
    assert residue_count(named) == 129 and molecule_mass(named) == pytest.approx(14313, abs=2)
