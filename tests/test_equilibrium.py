"""The independent-site solver: populations, charge, pI, macroscopic pKa, dominant form."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from zwitter import ParameterError, Site, SiteSet, ZwitterWarning
from zwitter import equilibrium as eq


def glycine() -> SiteSet:
    # Glycine pK1 2.34, pK2 9.60: Nelson & Cox 2005, Lehninger Principles of Biochemistry
    # 4th ed., Table 3-1 (from memory)
    return SiteSet.from_sites([Site("COOH", (2.34,), 0), Site("NH3+", (9.60,), 1)])


def test_henderson_hasselbalch_half_at_pka() -> None:
    # acetic acid pKa 4.76 (CRC Handbook of Chemistry and Physics; from memory)
    f = eq.state_fractions(np.array([[4.76], [3.76]]), np.array([[4.76]]))
    assert f.shape == (2, 1, 2)  # (pH, site, state)
    assert f[0, 0, 0] == pytest.approx(0.5)
    assert f[1, 0, 0] == pytest.approx(10 / 11)
    # one unit above the pKa: 10/11 deprotonated (Henderson-Hasselbalch)
    f = eq.state_fractions(5.76, np.array([[4.76]]))
    assert f[0, 1] == pytest.approx(10 / 11)


def test_polyprotic_steps_fractions() -> None:
    # phosphoric acid 2.15, 7.20, 12.35 (CRC Handbook of Chemistry and Physics, dissociation
    # constants of inorganic acids; from memory): at pH 7.20 H2PO4- and HPO4-- are equal.
    f = eq.state_fractions(7.20, np.array([[2.15, 7.20, 12.35]]))[0]
    assert f.sum() == pytest.approx(1.0)
    assert f[1] == pytest.approx(f[2], rel=1e-3)
    assert f[0] < 1e-4 and f[3] < 1e-4


def test_glycine_pi_and_pkas() -> None:
    ss = glycine()
    res = eq.isoelectric_point(ss)
    # pI = (2.34 + 9.60) / 2 = 5.97 for a simple ampholyte (Lehninger Table 3-1 lists 5.97)
    assert res.values[0] == pytest.approx(5.97, abs=1e-4)
    assert eq.macroscopic_pkas(ss) == pytest.approx([2.34, 9.60], abs=1e-3)


def test_identical_sites_statistical_factor() -> None:
    # Two identical independent carboxyls: macroscopic pKa = pKa -/+ log10(2)
    # (statistical factor for identical independent sites; common practice)
    ss = SiteSet.from_sites([Site("COOH", (4.0,), 0, count=2)])
    assert eq.macroscopic_pkas(ss) == pytest.approx([4.0 - math.log10(2), 4.0 + math.log10(2)])


def test_batch_equals_rows() -> None:
    base = glycine()
    counts = np.array([[1.0, 1.0], [2.0, 1.0], [0.0, 3.0]])
    batch = base.with_counts(counts)
    ph = np.array([3.0, 7.0, 11.0])
    z = eq.net_charge(ph, batch)
    assert z.shape == (3, 3)
    for i in range(3):
        single = base.with_counts(counts[i])
        assert z[i] == pytest.approx(eq.net_charge(ph, single))
    pis = eq.isoelectric_point(batch)
    assert math.isnan(pis.values[2]) and "above zero" in pis.reasons[2]
    assert pis.values[0] == pytest.approx(5.97, abs=1e-4)


def test_no_pi_warns() -> None:
    ss = SiteSet.from_sites([Site("NH3+", (9.0,), 1)])
    with pytest.warns(ZwitterWarning, match="stays at or above zero"):
        assert eq.pi_or_none(ss) is None
    perm = SiteSet.from_sites([Site("Q", (), 1)])
    with pytest.warns(ZwitterWarning, match="no titratable group"):
        assert eq.pi_or_none(perm) is None


@pytest.mark.parametrize("bad", [float("nan"), -2.5, 16.01, "acid"])
def test_bad_ph(bad: object) -> None:
    with pytest.raises(ParameterError, match="'ph' parameter of charge"):
        eq.net_charge(bad, glycine())  # type: ignore[arg-type]


def test_dominant_form_glycine_zwitterion() -> None:
    dom = eq.dominant_form(7.0, glycine())
    assert dom.charge == 0.0  # the zwitterion dominates between the two pKa values
    assert dom.population > 0.99
    assert [(lab, lost, q) for lab, lost, q, _ in dom.sites] == [
        ("COOH", 1, -1.0),
        ("NH3+", 0, 1.0),
    ]


def test_charge_state_populations_sum_and_mean() -> None:
    ss = SiteSet.from_sites(
        [Site("COOH", (4.0,), 0, 3), Site("NH3+", (10.0,), 1, 2), Site("His", (6.0,), 1)]
    )
    charges, pops = eq.charge_state_populations(6.3, ss)
    assert pops.sum() == pytest.approx(1.0)
    assert float(charges @ pops) == pytest.approx(float(eq.net_charge(6.3, ss)), abs=1e-9)


# -- properties -----------------------------------------------------------------------------------
site_strategy = st.builds(
    Site,
    label=st.sampled_from(["a", "b", "c"]),
    pkas=st.lists(st.floats(0.0, 14.0), min_size=1, max_size=3).map(lambda v: tuple(sorted(v))),
    charge=st.integers(-1, 2),
    count=st.floats(0.5, 20.0),
)


@settings(max_examples=60, deadline=None)
@given(st.lists(site_strategy, min_size=1, max_size=6), st.floats(-2.0, 15.9))
def test_properties_of_charge(sites: list[Site], ph: float) -> None:
    ss = SiteSet.from_sites(sites)
    z1 = float(eq.net_charge(ph, ss))
    z2 = float(eq.net_charge(ph + 0.1, ss))
    assert z2 <= z1
    if any(abs(p - ph) < 6 for site in sites for p in site.pkas):
        assert z2 < z1  # strictly decreasing wherever the change is resolvable in float64
    low, high = ss.charge_bounds()
    assert float(low) - 1e-9 <= z1 <= float(high) + 1e-9
    f = eq.state_fractions(ph, ss.pkas)
    assert np.all((f >= 0) & (f <= 1))
    assert f.sum(axis=-1) == pytest.approx(np.ones(len(sites)))
    res = eq.isoelectric_point(ss)
    if not math.isnan(res.values[0]):
        assert abs(float(eq.net_charge(res.values[0], ss))) < 1e-6


@settings(max_examples=40, deadline=None)
@given(
    st.lists(site_strategy, min_size=1, max_size=5),
    st.lists(st.lists(st.integers(0, 30), min_size=5, max_size=5), min_size=2, max_size=40),
    st.randoms(use_true_random=False),
)
def test_a_rows_pi_does_not_depend_on_the_other_rows(
    sites: list[Site], rows: list[list[int]], rng: object
) -> None:
    # The root search of a batch starts from a matrix product whose rounding may depend on a
    # row's place; the pI must not: every row alone, and the rows in another order, give the same
    # bits.
    base = SiteSet.from_sites(sites)
    counts = np.array([r[: len(sites)] for r in rows], dtype=float)
    batch = eq.isoelectric_point(base.with_counts(counts)).values
    order = np.arange(len(rows))
    rng.shuffle(order)  # type: ignore[attr-defined]
    shuffled = eq.isoelectric_point(base.with_counts(counts[order])).values
    assert np.array_equal(shuffled, batch[order], equal_nan=True)
    for i in range(len(rows)):
        alone = eq.isoelectric_point(base.with_counts(counts[i])).values[0]
        assert alone == batch[i] or (math.isnan(alone) and math.isnan(batch[i]))


def test_pi_on_a_point_of_the_starting_grid() -> None:
    # One acid (pKa 5) and one base (pKa 9) of charge +1: the pI is their mean, 7.0, which is a
    # point of the grid the batch search starts on; the rows around it are not on the grid.
    base = SiteSet.from_sites([Site("COOH", (5.0,), 0), Site("NH3+", (9.0,), 1)])
    counts = np.array([[1.0, 1.0], [2.0, 1.0], [1.0, 2.0], [1.0, 1.0]])
    res = eq.isoelectric_point(base.with_counts(counts))
    assert res.values[0] == pytest.approx(7.0, abs=1e-12) and res.values[3] == res.values[0]
    for i in (1, 2):  # checked against the charge, not against the search
        assert abs(float(eq.net_charge(res.values[i], base.with_counts(counts[i])))) < 1e-9
