"""Ion-exchange planning (zwitter.purification) and `zwitter plan`."""

from __future__ import annotations

import csv
import json
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from typer.testing import CliRunner

import zwitter
from zwitter.buffers import get_buffer
from zwitter.cli import app
from zwitter.conditions import Conditions
from zwitter.errors import ParameterError
from zwitter.molecule import Molecule
from zwitter.purification import elution_order, plan_ion_exchange, separation_ph
from zwitter.sites import Site, SiteSet

REFERENCE = Path(__file__).resolve().parent.parent / "data" / "reference"
runner = CliRunner()


def _proteins() -> dict[str, dict[str, str]]:
    with (REFERENCE / "measured_pi.csv").open(encoding="utf-8") as handle:
        rows = csv.DictReader(line for line in handle if not line.startswith("#"))
        return {r["id"]: r for r in rows}


PROTEINS = _proteins()
# Hen egg-white lysozyme, measured pI 11.35 (Wetter & Deutsch 1951, J. Biol. Chem. 192:237, in
# measured_pi.csv); all 8 Cys in disulfides. Textbooks bind it to a cation exchanger at pH 7-9.
LYSOZYME = PROTEINS["lyz_hen"]["sequence"]
# Human serum albumin, pI about 4.7-4.9 (measured_pi.csv): bound to an anion exchanger at pH 7-8.
ALBUMIN = PROTEINS["hsa"]["sequence"]


def _site_molecule(name: str, pka: float, charge: int = 1) -> Molecule:
    return Molecule(SiteSet.from_sites([Site(name, (pka,), charge)]), name=name)


def _buffer_forms_ok(names: list[str], sign: int, ph: float) -> bool:
    for name in names:
        buf = get_buffer(name)
        pkas = buf.pkas()
        logw = np.concatenate([[0.0], np.cumsum(ph - np.asarray(pkas))])
        pops = np.exp((logw - logw.max()) * np.log(10))
        pops /= pops.sum()
        charges = buf.charge_protonated - np.arange(len(pkas) + 1)
        if any(sign * q < 0 for q, p in zip(charges, pops) if p >= 0.02):
            return False
    return True


def test_lysozyme_goes_on_a_cation_exchanger() -> None:
    plan = plan_ion_exchange(LYSOZYME, cys="bonded")
    assert plan.pi is not None and plan.pi > 10.0
    assert plan.exchanger == "cation"
    for ph in (7.0, 8.0, 9.0):
        assert ph in plan.usable["cation"]
    assert plan.usable["anion"].empty
    assert plan.target.charge(plan.working_ph) >= plan.threshold
    names = list(plan.buffers["buffer"])
    assert names and "Tris" not in names  # cationic buffer ions would bind the resin
    assert _buffer_forms_ok(names, -1, plan.working_ph)


def test_albumin_goes_on_an_anion_exchanger() -> None:
    plan = plan_ion_exchange(ALBUMIN, cys="bonded")
    assert plan.exchanger == "anion"
    for ph in (7.5, 8.0):
        assert ph in plan.usable["anion"]
        assert ph not in plan.usable["cation"]
    assert plan.threshold == pytest.approx(5.85)  # 585 residues / 100
    names = list(plan.buffers["buffer"])
    assert names and "phosphate" not in names and "HEPES" not in names
    assert _buffer_forms_ok(names, +1, plan.working_ph)
    at8 = plan_ion_exchange(ALBUMIN, cys="bonded", stability=(7.8, 8.2))
    assert at8.exchanger == "anion" and "Tris" in list(at8.buffers["buffer"])


def test_windows_respect_margin_threshold_and_stability() -> None:
    plan = plan_ion_exchange(LYSOZYME, cys="bonded", stability=(2.0, 12.0), margin=1.0)
    assert plan.pi is not None
    cation = plan.windows["cation"]
    assert cation.hi <= plan.pi - 1.0 + 1e-9
    assert plan.target.charge(cation.hi) >= plan.threshold - 1e-6
    strict = plan_ion_exchange(LYSOZYME, cys="bonded", stability=(2.0, 12.0), threshold=8.0)
    assert strict.windows["cation"].hi < cation.hi
    assert strict.target.charge(strict.windows["cation"].hi) == pytest.approx(8.0, abs=0.05)
    narrow = plan_ion_exchange(LYSOZYME, cys="bonded", stability=(5.0, 6.0))
    assert narrow.ph_range.lo == 5.0 and narrow.ph_range.hi == 6.0


def test_no_usable_window_is_explained() -> None:
    # constructed zwitterion, 3 carboxyls (pKa 4) and 3 amines (pKa 9): pI 6.5, and a stability
    # window around it that keeps the pH within 1 unit of the pI: neither exchanger fits
    sites = SiteSet.from_sites([Site("COOH", (4.0,), 0, count=3), Site("NH3+", (9.0,), 1, count=3)])
    plan = plan_ion_exchange(Molecule(sites, name="zwitterion"), stability=(6.0, 7.0))
    assert plan.pi == pytest.approx(6.5, abs=1e-6)
    assert plan.exchanger is None and np.isnan(plan.working_ph)
    assert any("neither exchanger" in n for n in plan.notes)
    assert plan.buffers.empty
    assert not plan.to_frame()["recommended"].any()
    # with threshold 0 only the margin limits the windows: pI -/+ 1
    wide = plan_ion_exchange(Molecule(sites, name="zwitterion"), stability=(4.0, 9.0), threshold=0)
    assert wide.usable["cation"].hi == pytest.approx(5.5)
    assert wide.usable["anion"].lo == pytest.approx(7.5)
    # with the default threshold (1 charge) the cation window ends where Z = +1
    one = plan_ion_exchange(Molecule(sites, name="zwitterion"), stability=(4.0, 9.0))
    assert one.target.charge(one.usable["cation"].hi) == pytest.approx(1.0, abs=0.01)


# -- elution order and separation -----------------------------------------------------------------
@settings(max_examples=25, deadline=None)
@given(
    counts=st.lists(st.integers(min_value=0, max_value=8), min_size=2, max_size=6),
    ph=st.floats(min_value=4.0, max_value=9.0),
    exchanger=st.sampled_from(["cation", "anion"]),
)
def test_elution_order_is_monotone_in_charge(counts: list[int], ph: float, exchanger: str) -> None:
    mols = [
        zwitter.from_sequence("G" + "K" * k + "DDDE" + "G", name=f"K{k}#{i}")
        for i, k in enumerate(counts)
    ]
    frame = elution_order(mols, ph, exchanger)
    bound = frame[frame["elution_order"] > 0].sort_values("elution_order")
    sign = 1.0 if exchanger == "cation" else -1.0
    strength = (sign * bound["charge"]).to_numpy()
    assert np.all(np.diff(strength) >= -1e-12)  # weakest bound first
    assert (sign * bound["charge"] > 0).all()
    assert (sign * frame[frame["elution_order"] == 0]["charge"] <= 0).all()
    assert sorted(bound["elution_order"]) == list(range(1, len(bound) + 1))


def test_separation_ph_maximises_the_charge_gap() -> None:
    # constructed: two single bases, pKa 6 and 8 (charge +1 -> 0). The charge difference
    # 1/(1 + 10^(pH-6)) - 1/(1 + 10^(pH-8)) is largest midway, at pH 7, by symmetry.
    target = _site_molecule("pKa6", 6.0)
    other = _site_molecule("pKa8", 8.0)
    ph, gap, curve = separation_ph(target, [other])
    assert ph == pytest.approx(7.0, abs=0.005)
    expected = 1 / (1 + 10 ** (7.0 - 8.0)) - 1 / (1 + 10 ** (7.0 - 6.0))
    assert gap == pytest.approx(expected, abs=1e-4)
    assert gap == pytest.approx(curve.max())
    plan = plan_ion_exchange(target, [other], stability=(2.0, 12.0), threshold=0.0, margin=0.0)
    assert plan.separation_ph == pytest.approx(7.0, abs=0.005)
    # the target never goes negative (no pI): with threshold 0 it binds the cation exchanger
    assert plan.pi is None and plan.exchanger == "cation"
    assert {"ph", "pKa6", "pKa8", "gap"} <= set(plan.curves.columns)
    assert plan.curves["gap"].max() == pytest.approx(plan.separation_gap)


def test_separation_against_two_contaminants_maximises_the_smaller_gap() -> None:
    # target pKa 7 between contaminants at pKa 5 and 9: the min gap is largest where the target's
    # charge is halfway between the two contaminants' charges, at pH 7 by symmetry
    target = _site_molecule("t7", 7.0, charge=0)
    others = [_site_molecule("c5", 5.0, charge=0), _site_molecule("c9", 9.0, charge=0)]
    ph, gap, _ = separation_ph(target, others)
    assert ph == pytest.approx(7.0, abs=0.005)
    plan = plan_ion_exchange(target, others, stability=(2.0, 12.0), threshold=0.0, margin=0.0)
    order = plan.elution_order(ph=7.0, exchanger="anion")
    assert list(order["molecule"]) == ["c9", "t7", "c5"]  # least negative first
    assert list(order["elution_order"]) == [1, 2, 3]


def test_plan_with_protein_contaminants() -> None:
    cytc = PROTEINS["cytc_horse"]["sequence"]
    mb = PROTEINS["mb_horse"]["sequence"]
    plan = plan_ion_exchange(
        LYSOZYME,
        [cytc, mb],
        cys="bonded",
        conditions=Conditions(temperature=4.0, ionic_strength=0.02),
    )
    assert plan.exchanger == "cation"
    assert plan.working_ph in plan.usable["cation"]
    gaps = plan.curves.set_index("ph")["gap"]
    inside = gaps[
        (gaps.index >= plan.usable["cation"].lo) & (gaps.index <= plan.usable["cation"].hi)
    ]
    assert plan.separation_gap == pytest.approx(inside.max())
    order = plan.elution_order()
    charges = plan.charges(plan.working_ph)
    assert list(order["molecule"]) == sorted(charges, key=charges.__getitem__)  # weakest first
    frame = plan.to_frame()
    assert list(frame["exchanger"]) == ["cation", "anion"]
    assert frame["recommended"].tolist() == [True, False]
    assert plan.target.conditions == Conditions(temperature=4.0, ionic_strength=0.02)


def test_molecules_are_moved_to_the_plan_conditions() -> None:
    m = zwitter.from_sequence("GKKKKG")
    cond = Conditions(temperature=37.0)
    plan = plan_ion_exchange(m, conditions=cond)
    assert plan.target.conditions == cond and plan.target is not m
    assert plan.target.charge(9.0) < m.charge(9.0)  # amines lose protons at 37 C
    assert plan_ion_exchange(m).target is m


@pytest.mark.parametrize(
    ("kwargs", "parameter"),
    [
        ({"stability": (9.0, 3.0)}, "stability"),
        ({"stability": (3.0,)}, "stability"),
        ({"stability": "acid"}, "stability"),
        ({"threshold": -1.0}, "threshold"),
        ({"margin": -0.5}, "margin"),
    ],
)
def test_bad_plan_parameters(kwargs: dict[str, object], parameter: str) -> None:
    with pytest.raises(ParameterError, match=f"The '{parameter}' parameter of plan_ion_exchange"):
        plan_ion_exchange("GKKKKG", **kwargs)  # type: ignore[arg-type]


def test_bad_targets() -> None:
    with pytest.raises(ParameterError, match="'target' parameter of plan_ion_exchange"):
        plan_ion_exchange(42)  # type: ignore[arg-type]
    with pytest.raises(zwitter.SequenceError):
        plan_ion_exchange("GKK", ["GK1"], kind="sequence")
    with pytest.raises(ParameterError, match="'exchanger' parameter of elution_order"):
        elution_order([zwitter.from_sequence("GK")], 7.0, "mixed")


# -- command line ---------------------------------------------------------------------------------
def test_cli_plan_json_matches_the_library() -> None:
    res = runner.invoke(app, ["plan", LYSOZYME, "--cys", "bonded", "-c", "GDDDEEG", "-f", "json"])
    assert res.exit_code == 0, res.output
    doc = json.loads(res.stdout)
    plan = plan_ion_exchange(LYSOZYME, ["GDDDEEG"], cys="bonded")
    assert doc["exchanger"] == plan.exchanger == "cation"
    assert doc["working_ph"] == pytest.approx(plan.working_ph, abs=1e-3)
    assert [r["molecule"] for r in doc["elution_order"]] == list(plan.elution_order()["molecule"])
    assert "pilot run" in doc["caution"]


def test_cli_plan_table_and_errors() -> None:
    res = runner.invoke(app, ["plan", "GKKKKKKG", "--temp", "4", "--ionic-strength", "0.05"])
    words = " ".join(res.stdout.split())
    assert res.exit_code == 0 and "cation" in words and "pilot run" in words
    bad = runner.invoke(app, ["plan", "GKK", "--stability", "9", "3"])
    assert bad.exit_code == 2 and "'stability' parameter" in bad.output
    bad = runner.invoke(app, ["plan", "GKK", "--temp", "-5"])
    assert bad.exit_code == 2 and "'temperature' condition" in bad.output
    assert "Traceback" not in bad.output
