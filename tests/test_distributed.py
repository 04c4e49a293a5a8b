"""The Dask engine against a real dask.distributed LocalCluster: same rows as the local engine."""

from __future__ import annotations

import logging
from collections.abc import Iterator
from pathlib import Path

import pandas as pd
import pytest

pytest.importorskip("distributed")

import dask.bag as db  # noqa: E402
import dask.dataframe as dd  # noqa: E402
from distributed import Client, LocalCluster  # noqa: E402
from typer.testing import CliRunner  # noqa: E402

from zwitter import batch as zb  # noqa: E402
from zwitter.cli import app  # noqa: E402
from zwitter.distributed import score_dask_bag, score_dask_dataframe  # noqa: E402
from zwitter.errors import ParameterError  # noqa: E402
from zwitter.fasta import read_fasta  # noqa: E402

DATA = Path(__file__).resolve().parent / "data"
PROTEINS = DATA / "batch_proteins.fasta"
MIXED = b">ok\nMKWVTFISLL\n>empty\n\n>bad\nMK1\n>ok2\nDEKR\n"


@pytest.fixture(scope="module")
def client() -> Iterator[Client]:
    # Two single-threaded worker processes: a real cluster, as a user would start one.
    with LocalCluster(
        n_workers=2, threads_per_worker=1, processes=True, dashboard_address=":0",
        silence_logs=logging.ERROR,
    ) as cluster, Client(cluster) as c:  # fmt: skip
        yield c


@pytest.fixture
def mixed(tmp_path: Path) -> Path:
    path = tmp_path / "mixed.fasta"
    path.write_bytes(MIXED)
    return path


def test_file_engine_equals_local_row_for_row(client: Client, mixed: Path) -> None:
    address = client.scheduler.address
    local = zb.score_fasta([PROTEINS, mixed], ph=[5.0, 7.4], chunk_size=3)
    dask_run = zb.score_fasta(
        [PROTEINS, mixed], ph=[5.0, 7.4], chunk_size=3, engine="dask", scheduler=address
    )
    pd.testing.assert_frame_equal(local, dask_run)
    assert (dask_run["error"] != "").sum() == 2


def test_cli_dask_engine_writes_the_same_file(client: Client, mixed: Path, tmp_path: Path) -> None:
    runner = CliRunner()
    local_out, dask_out = tmp_path / "local.csv", tmp_path / "dask.csv"
    args = [str(PROTEINS), str(mixed), "--ph", "7.4", "--chunk-size", "4"]
    assert runner.invoke(app, ["batch", *args, "-o", str(local_out)]).exit_code == 0
    res = runner.invoke(
        app, ["batch", *args, "-o", str(dask_out), "--scheduler", client.scheduler.address]
    )
    assert res.exit_code == 0, res.output
    assert dask_out.read_bytes() == local_out.read_bytes()


def test_strict_on_dask_leaves_no_output(client: Client, mixed: Path, tmp_path: Path) -> None:
    out = tmp_path / "o.parquet"
    res = CliRunner().invoke(
        app,
        ["batch", str(mixed), "-o", str(out), "--strict", "--scheduler", client.scheduler.address],
    )
    assert res.exit_code == 2
    assert "record 'empty'" in res.stderr
    assert list(tmp_path.iterdir()) == [mixed]


def test_score_dask_bag_equals_score_list(client: Client) -> None:
    records = list(read_fasta(PROTEINS))
    items = [(r.id, r.description, r.sequence) for r in records]
    items.append(("missing", "", 42))  # not a sequence: a row with an error, nothing lost
    bag = db.from_sequence(items, npartitions=4)
    got = score_dask_bag(bag, ph=[7.0]).compute().reset_index(drop=True)
    expected = zb.score_list(
        [r.sequence for r in records], [r.id for r in records], [r.description for r in records],
        ph=[7.0],
    )  # fmt: skip
    pd.testing.assert_frame_equal(got.iloc[:-1], expected)
    assert got["id"].iloc[-1] == "missing"
    assert "is 42, not a string" in got["error"].iloc[-1]
    assert got["pI"].isna().iloc[-1]


def test_score_dask_dataframe_keeps_index_and_numbers(client: Client) -> None:
    records = list(read_fasta(PROTEINS))
    frame = pd.DataFrame(
        {"acc": [r.id for r in records], "seq": [r.sequence for r in records]},
        index=pd.RangeIndex(100, 100 + len(records)),
    )
    frame.loc[105, "seq"] = None
    ddf = dd.from_pandas(frame, npartitions=3)
    got = score_dask_dataframe(ddf, "seq", "acc", ph=[6.0, 8.0], cys="bonded").compute()
    assert list(got.index) == list(frame.index)
    expected = zb.score_list(
        [s if isinstance(s, str) else "" for s in frame["seq"]], list(frame["acc"]),
        ph=[6.0, 8.0], cys="bonded",
    )  # fmt: skip
    ok = got["error"] == ""
    assert list(ok).count(False) == 1 and "not a sequence" in got.loc[105, "error"]
    expected.index = frame.index
    pd.testing.assert_frame_equal(got[ok], expected[ok.to_numpy()])


def test_score_dask_dataframe_names_a_missing_column(client: Client) -> None:
    ddf = dd.from_pandas(pd.DataFrame({"seq": ["DK"]}), npartitions=1)
    with pytest.raises(
        ParameterError, match="'sequence_column' parameter .* a column of the frame"
    ):
        score_dask_dataframe(ddf, "sequence")


def test_local_cluster_is_started_without_an_address(mixed: Path) -> None:
    local = zb.score_fasta(mixed, chunk_size=2)
    started = zb.score_fasta(mixed, chunk_size=2, engine="dask", jobs=1)
    pd.testing.assert_frame_equal(local, started)
