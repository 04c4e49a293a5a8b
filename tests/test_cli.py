"""The command line: commands, formats with the same numbers, exit codes, one-line errors."""

from __future__ import annotations

import csv
import io
import json
import subprocess
import sys

import pytest
from typer.testing import CliRunner

import zwitter
from zwitter.cli import app

runner = CliRunner()


def run(*args: str, input: str | None = None):
    return runner.invoke(app, list(args), input=input)


def test_pi_formats_carry_the_same_numbers() -> None:
    seqs = ["MKWVTFISLLFLFSSAYS", "DDDEEK"]
    table = run("pi", *seqs)
    assert table.exit_code == 0, table.output
    as_csv = list(csv.DictReader(io.StringIO(run("pi", *seqs, "-f", "csv").stdout)))
    as_json = json.loads(run("pi", *seqs, "--format", "json").stdout)
    as_tsv = list(csv.DictReader(io.StringIO(run("pi", *seqs, "-f", "tsv").stdout), delimiter="\t"))
    for i, seq in enumerate(seqs):
        expected = round(zwitter.from_sequence(seq).isoelectric_point(), 3)
        assert float(as_csv[i]["pI"]) == expected
        assert as_json[i]["pI"] == expected
        assert float(as_tsv[i]["pI"]) == expected
        assert str(expected) in table.stdout


def test_charge_at_several_ph_and_scale() -> None:
    res = run("charge", "DKHK", "--ph", "7.4", "--ph", "5", "--scale", "lehninger", "-f", "json")
    assert res.exit_code == 0, res.output
    row = json.loads(res.stdout)[0]
    m = zwitter.from_sequence("DKHK", scale="lehninger")
    assert row["charge@pH7.4"] == round(m.charge(7.4), 3)
    assert row["charge@pH5"] == round(m.charge(5.0), 3)


def test_sequences_from_a_fasta_file(tmp_path) -> None:
    path = tmp_path / "two.fasta"
    path.write_text(">alpha first\nMKWV\nTFIS\r\n>beta\nDDEEKK\n")
    res = run("pi", "-i", str(path), "-f", "csv")
    assert res.exit_code == 0, res.output
    rows = list(csv.DictReader(io.StringIO(res.stdout)))
    assert [r["id"] for r in rows] == ["alpha", "beta"]
    assert rows[0]["length"] == "8"


def test_scales_lists_every_packaged_scale() -> None:
    res = run("scales", "-f", "json")
    assert res.exit_code == 0
    keys = [r["scale"].split()[0] for r in json.loads(res.stdout)]
    assert keys == zwitter.scale_names()
    one = json.loads(run("scales", "bjellqvist", "-f", "json").stdout)
    assert any(r["group"] == "Nterm" and "residue A" in r["context"] for r in one)


def test_forms_reports_dominant_state() -> None:
    res = run("forms", "DKHK", "--ph", "7", "-f", "json")
    assert res.exit_code == 0, res.output
    doc = json.loads(res.stdout)
    states = {g["group"]: g["state"] for g in doc["groups"]}
    assert states["K2"] == "protonated" and states["D1"] == "deprotonated"
    assert doc["forms"][0]["rank"] == 1
    assert sum(f["population"] for f in doc["forms"]) <= 1.0 + 1e-3
    assert "verify experimentally" in doc["caution"]


def test_forms_reports_bonded_cysteines_and_proforma() -> None:
    res = run("forms", "[Acetyl]-C[#XL1]KAC[#XL1]E", "--ph", "7", "-f", "json")
    assert res.exit_code == 0, res.output
    doc = json.loads(res.stdout)
    assert doc["kind"] == "proforma" and doc["bonded_cysteines"] == ["C1", "C4"]
    assert not any(g["group"].startswith("N-term") for g in doc["groups"])  # acetylated
    res = run("forms", "CKAC", "--cys", "bonded", "-f", "json")
    assert json.loads(res.stdout)["bonded_cysteines"] == ["C1", "C4"]


def test_pi_accepts_proforma_with_the_library_numbers() -> None:
    from zwitter.proforma import from_proforma

    text = "[Acetyl]-KPEPS[Phospho]TIDEK-[Amidated]"
    res = run("pi", text, "-f", "json")
    assert res.exit_code == 0, res.output
    assert json.loads(res.stdout)[0]["pI"] == round(from_proforma(text).isoelectric_point(), 3)


@pytest.mark.parametrize(
    ("args", "needle"),
    [
        (["pi", "MK1"], "invalid residue: '1' at position 3"),
        (["forms", "C1CC"], "cannot read SMILES"),
        (["pi", ""], "empty sequence"),
        (["charge", "MKW", "--ph", "17"], "'ph' parameter"),
        (["charge", "MKW", "--ph", "nan"], "'ph' parameter"),
        (["pi", "MKW", "--scale", "nonesuch"], "unknown pKa scale 'nonesuch'"),
        (["pi"], "no input given"),
    ],
)
def test_bad_input_one_line_exit_2(args: list[str], needle: str) -> None:
    res = run(*args)
    assert res.exit_code == 2
    assert needle in res.stderr
    assert "Traceback" not in res.output
    assert len([ln for ln in res.stderr.splitlines() if ln.startswith("zwitter: error")]) == 1


def test_malformed_scale_file_exit_2(tmp_path) -> None:
    path = tmp_path / "bad.csv"
    path.write_text("group,context,pka\nK,,high\n")
    res = run("pi", "MKW", "--scale", str(path))
    assert res.exit_code == 2
    assert "line 2, column 'pka'" in res.stderr


def test_console_script_runs() -> None:
    proc = subprocess.run(
        [sys.executable, "-m", "zwitter", "pi", "MKWV"], capture_output=True, text=True, check=False
    )
    assert proc.returncode == 0, proc.stderr
    assert "MKWV" in proc.stdout


def test_conditions_options_match_the_library() -> None:
    cold = zwitter.Conditions(temperature=4.0, ionic_strength=0.15)
    res = run("charge", "MKWVDEKHR", "--ph", "7.4", "--temp", "4", "--ionic-strength", "0.15",
              "-f", "json")  # fmt: skip
    assert res.exit_code == 0, res.output
    expected = round(zwitter.from_sequence("MKWVDEKHR", conditions=cold).charge(7.4), 3)
    assert json.loads(res.stdout)[0]["charge@pH7.4"] == expected
    assert expected != round(zwitter.from_sequence("MKWVDEKHR").charge(7.4), 3)
    bad = run("pi", "MKW", "--temp", "120")
    assert bad.exit_code == 2 and "'temperature'" in bad.stderr


@pytest.mark.parametrize(
    "args",
    [
        ["pi", "MKWVDEK", "KKDE"],
        ["charge", "MKWVDEK", "--ph", "7"],
        ["forms", "DKHKE"],
        ["plan", "MKWVDEKKKRRHKK", "-c", "DDEEDDKE"],
        ["species", "NCC(=O)O"],
    ],
)
def test_plot_option_writes_the_figure(tmp_path, args: list[str]) -> None:
    path = tmp_path / "figure.png"
    res = run(*args, "--plot", str(path), "-f", "csv")
    assert res.exit_code == 0, res.output
    assert path.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


def test_batch_figures_and_conditions(tmp_path, test_data_dir) -> None:
    out = tmp_path / "scores.csv"
    gel = tmp_path / "gel.svg"
    res = run("batch", str(test_data_dir / "batch_proteins.fasta"), "-o", str(out),
              "--temp", "4", "--plot", str(gel), "--histogram", str(tmp_path / "h.pdf"),
              "--fractions", "4,5,6,7,8")  # fmt: skip
    assert res.exit_code == 0, res.output
    assert "<svg" in gel.read_text()[:500]
    assert (tmp_path / "h.pdf").read_bytes()[:4] == b"%PDF"
    bad = run("batch", str(test_data_dir / "batch_proteins.fasta"), "-o", str(out),
              "--plot", str(tmp_path / "gel.bmp"))  # fmt: skip
    assert bad.exit_code == 2
