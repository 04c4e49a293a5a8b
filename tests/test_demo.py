"""`zwitter demo` runs end to end and writes what it says."""

from __future__ import annotations

import csv

from typer.testing import CliRunner

import zwitter
from zwitter.cli import app
from zwitter.demo import DEMO_CONDITIONS, DEMO_STABILITY, TARGET_ID, demo_fasta


def test_demo_runs_and_writes_its_files(tmp_path) -> None:
    out = tmp_path / "demo"
    res = CliRunner().invoke(app, ["demo", "--out", str(out)])
    assert res.exit_code == 0, res.output
    written = [line.strip() for line in res.stdout.split("Wrote:")[1].splitlines() if "/" in line]
    assert len(written) == 6
    for name in written:
        path = tmp_path / "demo" / name.rsplit("/", 1)[-1]
        assert path.exists() and path.stat().st_size > 1000, name
    with (out / "extract_scores.csv").open() as handle:
        rows = list(csv.DictReader(handle))
    records = list(zwitter.fasta.read_fasta(demo_fasta()))
    assert [r["id"] for r in rows] == [r.id for r in records]  # every record, in order
    assert all(not r["error"] for r in rows)
    cond = zwitter.Conditions(**DEMO_CONDITIONS)
    target = next(r for r in records if r.id == TARGET_ID)
    mol = zwitter.from_sequence(target.sequence, conditions=cond)
    row = next(r for r in rows if r["id"] == TARGET_ID)
    assert abs(float(row["pI"]) - mol.isoelectric_point()) < 1e-6
    others = [
        zwitter.from_sequence(r.sequence, conditions=cond) for r in records if r is not target
    ]
    plan = zwitter.plan_ion_exchange(mol, others, conditions=cond, stability=DEMO_STABILITY)
    assert f"{plan.exchanger} exchanger at pH {plan.working_ph:.1f}" in res.stdout
    html = (out / "report.html").read_text()
    assert "marinase" in html and "verify experimentally" in html
    assert "invented" in res.stdout
