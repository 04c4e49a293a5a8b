"""Site and SiteSet: validation and shapes."""

from __future__ import annotations

import pickle

import numpy as np
import pytest

from zwitter import ParameterError, Site, SiteSet, permanent_charge


def test_site_defaults_and_range() -> None:
    s = Site("phosphate", (1.2, 6.5), 0)
    assert s.group == "phosphate"
    assert s.charge_range() == (-2, 0)
    assert not s.is_permanent
    assert permanent_charge("NMe3+", +1).is_permanent


@pytest.mark.parametrize(
    ("kwargs", "match"),
    [
        ({"pkas": (6.5, 1.2)}, "ascending"),
        ({"pkas": (float("nan"),)}, "finite"),
        ({"count": -1.0}, "'count' parameter"),
        ({"charge": 0.5}, "whole number"),
    ],
)
def test_site_rejects_bad_values(kwargs: dict[str, object], match: str) -> None:
    base: dict[str, object] = {"label": "x", "pkas": (4.0,), "charge": 0}
    base.update(kwargs)
    with pytest.raises(ParameterError, match=match):
        Site(**base)  # type: ignore[arg-type]


def test_siteset_arrays_and_padding() -> None:
    ss = SiteSet.from_sites(
        [Site("COOH", (4.0,), 0, 2), Site("PO4", (1.0, 6.0), 0), permanent_charge("Q+", 1)]
    )
    assert ss.pkas.shape == (3, 2)
    assert np.isnan(ss.pkas[0, 1])
    assert ss.nsteps.tolist() == [1, 2, 0]
    low, high = ss.charge_bounds()
    assert (float(low), float(high)) == (-3.0, 1.0)  # 2 carboxyls + 2 phosphate steps; +1 fixed
    assert [s.label for s in ss.sites()] == ["COOH", "PO4", "Q+"]
    with pytest.raises(ValueError):
        ss.pkas[0, 0] = 1.0  # arrays are read-only


def test_batch_rows_and_compact() -> None:
    ss = SiteSet.from_sites([Site("a", (4.0,), 0), Site("b", (9.0,), 1)])
    batch = ss.with_counts(np.array([[1.0, 0.0], [2.0, 3.0]]))
    assert batch.is_batch and batch.n_molecules == 2
    assert batch.row(0).labels == ("a",)
    assert batch.row(1).counts.tolist() == [2.0, 3.0]


def test_errors_pickle() -> None:
    err = ParameterError("ph", "charge", "a number in [-2, 16]", 17.5)
    again = pickle.loads(pickle.dumps(err))
    assert (
        str(again)
        == str(err)
        == ("The 'ph' parameter of charge must be a number in [-2, 16]. Got 17.5 instead.")
    )
