"""Batch scoring: same numbers as the single-sequence API, every record once and in order,
atomic output, exit codes, masses against Biopython / pyteomics."""

from __future__ import annotations

import gzip
import io
import json
import math
import warnings
from collections.abc import Iterator
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from typer.testing import CliRunner

import zwitter
from zwitter import batch as zb
from zwitter.cli import app
from zwitter.errors import InputFileError, ParameterError, ZwitterWarning
from zwitter.fasta import read_fasta
from zwitter.sites import SiteSet

DATA = Path(__file__).resolve().parent / "data"
PROTEINS = DATA / "batch_proteins.fasta"
runner = CliRunner()


def _single(seq: str, **kw: object) -> zwitter.Molecule:
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ZwitterWarning)
        return zwitter.from_sequence(seq, **kw)  # type: ignore[arg-type]


def _pi(m: zwitter.Molecule) -> float:
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ZwitterWarning)
        value = m.isoelectric_point()
    return math.nan if value is None else value


# A mixed file: good records, an empty record, bad letters, text before the first header, a
# header without id, Windows line endings, and a header-only record at the end (no final newline).
MIXED = (
    b"MKVLA\r\n"  # line 1: text before the first header
    b">good1 first good record\r\n"  # line 2
    b"MKWVTFISLL\r\nFLFSSAYS\r\n"
    b">empty\r\n"  # line 5
    b"\r\n"
    b">bad_letters has a digit\r\n"  # line 7
    b"MK1DE\r\n"
    b">\r\n"  # line 9: no id
    b"GGKK\r\n"
    b">good2\r\n"  # line 11
    b"DEKR\r\n"
    b">header_only"  # line 13
)
MIXED_IDS = [
    "(before first header, line 1)", "good1", "empty", "bad_letters", "(no id, line 9)", "good2",
    "header_only",
]  # fmt: skip
MIXED_ERRORS = {
    "(before first header, line 1)": "line 1: sequence text before the first '>' header",
    "empty": "line 5: record 'empty': empty sequence",
    "bad_letters": "line 7: record 'bad_letters': invalid residue: '1' at position 3",
    "header_only": "line 13: record 'header_only': empty sequence",
}


@pytest.fixture
def mixed(tmp_path: Path) -> Path:
    path = tmp_path / "mixed.fasta"
    path.write_bytes(MIXED)
    return path


# -- same numbers as the single-sequence API ------------------------------------------------------
@pytest.mark.parametrize("scale", [None, "lehninger", "grimsley"])
@pytest.mark.parametrize("cys", ["free", "bonded"])
def test_every_record_matches_from_sequence(scale: str | None, cys: str) -> None:
    ph = [3.0, 7.4, 11.0]
    df = zb.score_fasta(PROTEINS, ph=ph, scale=scale, cys=cys, chunk_size=4)
    records = list(read_fasta(PROTEINS))
    assert list(df["id"]) == [r.id for r in records]
    assert (df["error"] == "").all()
    for row, rec in zip(df.itertuples(index=False), records):
        m = _single(rec.sequence, scale=scale, cys=cys)
        expected = _pi(m)
        got = row.pI
        assert (math.isnan(got) and math.isnan(expected)) or abs(got - expected) < 1e-6, rec.id
        charges = df.loc[df["id"] == rec.id, [zb.charge_column(p) for p in ph]].to_numpy()[0]
        assert np.allclose(charges, [m.charge(p) for p in ph], atol=1e-6, rtol=0), rec.id


def test_jobs_and_chunk_sizes_do_not_change_a_number() -> None:
    one = zb.score_fasta(PROTEINS, ph=[7.0], chunk_size=1000)
    for chunk_size, jobs in ((1, 1), (3, 2), (5, 0)):
        other = zb.score_fasta(PROTEINS, ph=[7.0], chunk_size=chunk_size, jobs=jobs)
        pd.testing.assert_frame_equal(one, other)


def test_composition_columns() -> None:
    df = zb.score_fasta(PROTEINS).set_index("id")
    ubq = "MQIFVKTLTGKTITLEVEPSDTIENVKAKIQDKEGIPPDQQRLIFAGKQLEDGRTLSDYNIQKESTLHLVLRLRGG"
    row = df.loc["sp|P0CG48|UBIQ_HUMAN"]
    assert row["length"] == len(ubq) == 76
    assert [row[f"n_{r}"] for r in "DECYHKRU"] == [ubq.count(r) for r in "DECYHKRU"]
    assert df.loc["substance_P", "length"] == 11  # the final '*' is not a residue
    assert df.loc["lower_case", "length"] == 18
    assert df.loc["selenopeptide", "n_U"] == 1
    assert df.loc["with_unknown", "n_unknown"] == 1
    assert "unknown residue" in df.loc["with_unknown", "warnings"]
    assert df.loc["bradykinin", "description"] == "tab-separated description"
    assert df.loc["sp|P0CG48|UBIQ_HUMAN", "description"].startswith("Ubiquitin")


def test_conditions_object_is_applied_like_the_single_api() -> None:
    class Shift:
        """Duck-typed conditions: every pKa up by 0.3 (stands in for zwitter.Conditions)."""

        def apply(self, sites: SiteSet) -> SiteSet:
            return sites.with_pkas(sites.pkas + 0.3)

    df = zb.score_fasta(PROTEINS, ph=[7.0], conditions=Shift())
    plain = zb.score_fasta(PROTEINS, ph=[7.0])
    for rec, got in zip(read_fasta(PROTEINS), df["pI"]):
        expected = _pi(_single(rec.sequence, conditions=Shift()))
        assert abs(got - expected) < 1e-6
    assert not np.allclose(df["pI"], plain["pI"], equal_nan=True)


def test_score_list_matches_score_fasta() -> None:
    records = list(read_fasta(PROTEINS))
    from_list = zb.score_list(
        [r.sequence for r in records], [r.id for r in records], [r.description for r in records],
        ph=[7.0], chunk_size=3,
    )  # fmt: skip
    from_file = zb.score_fasta(PROTEINS, ph=[7.0])
    cols = [c for c in from_file.columns if c != "input"]
    pd.testing.assert_frame_equal(from_list[cols], from_file[cols])


def test_nucleotide_looking_sequences_get_a_warning() -> None:
    df = zb.score_list(["ACGTTGCAACGTGGCCAATTGACGT", "ACGTACGT", "MKWVTFISLLFLFSSAYSACGT"])
    assert "nucleotide" in df["warnings"][0]
    assert df["warnings"][1] == ""  # too short to tell
    assert df["warnings"][2] == ""


# -- masses against reference libraries -----------------------------------------------------------
def test_masses_match_pyteomics_and_biopython() -> None:
    from Bio.SeqUtils import molecular_weight
    from pyteomics import mass

    df = zb.score_fasta(PROTEINS).set_index("id")
    for rec in read_fasta(PROTEINS):
        seq = rec.sequence.upper().rstrip("*")
        row = df.loc[rec.id]
        if set(seq) & set("BZX"):
            continue
        # pyteomics: NIST monoisotopic element masses (its std_aa_comp + H2O)
        assert abs(row["monoisotopic_mass"] - mass.calculate_mass(sequence=seq)) < 1e-4, rec.id
        if "U" not in seq:  # Biopython's Se weight is the pre-2013 78.96
            # Biopython: average masses from the IUPAC atomic weights of 2007 era
            assert abs(row["average_mass"] / molecular_weight(seq, "protein") - 1) < 2e-6, rec.id
    assert math.isnan(df.loc["with_unknown", "average_mass"])
    # B and Z: mean of D/N and E/Q (the table's policy); J has I/L's exact mass
    from zwitter.masses import sequence_mass

    assert sequence_mass("B") == pytest.approx((sequence_mass("D") + sequence_mass("N")) / 2)
    assert sequence_mass("J", monoisotopic=True) == sequence_mass("L", monoisotopic=True)


def test_residue_masses_match_unimod_values() -> None:
    from zwitter.masses import residue_masses

    # Unimod amino-acid monoisotopic residue masses (from memory, 5 decimals)
    unimod = {"G": 57.02146, "A": 71.03711, "S": 87.03203, "P": 97.05276, "V": 99.06841,
              "T": 101.04768, "C": 103.00919, "L": 113.08406, "N": 114.04293, "D": 115.02694,
              "Q": 128.05858, "K": 128.09496, "E": 129.04259, "M": 131.04049, "H": 137.05891,
              "F": 147.06841, "R": 156.10111, "Y": 163.06333, "W": 186.07931, "U": 150.95364,
              "O": 237.14773}  # fmt: skip
    masses = residue_masses()
    for letter, value in unimod.items():
        assert masses[letter].monoisotopic == pytest.approx(value, abs=1e-5), letter


# -- nothing lost ---------------------------------------------------------------------------------
@pytest.mark.parametrize("chunk_size", [1, 2, 3, 100])
def test_mixed_file_every_record_once_in_order(mixed: Path, chunk_size: int) -> None:
    frames = list(zb.iter_score_fasta(mixed, chunk_size=chunk_size))
    n = len(MIXED_IDS)
    assert [len(f) for f in frames] == [min(chunk_size, n - a) for a in range(0, n, chunk_size)]
    df = pd.concat(frames)
    assert list(df["id"]) == MIXED_IDS
    assert list(df.index) == list(range(len(MIXED_IDS)))
    errors = dict(zip(df["id"], df["error"]))
    for ident in MIXED_IDS:
        assert errors[ident] == MIXED_ERRORS.get(ident, ""), ident
    good = df[df["error"] == ""]
    assert list(good["id"]) == ["good1", "(no id, line 9)", "good2"]
    assert good["pI"].notna().all()
    bad = df[df["error"] != ""]
    assert bad["pI"].isna().all() and bad["length"].isna().all() and bad["n_K"].isna().all()
    # Windows line endings do not leak into sequences: same pI as the clean sequence
    assert good["pI"].iloc[0] == pytest.approx(_pi(_single("MKWVTFISLLFLFSSAYS")), abs=1e-9)


def test_several_inputs_keep_their_file_names(mixed: Path, tmp_path: Path) -> None:
    gz = tmp_path / "proteins.fa.gz"
    gz.write_bytes(gzip.compress(PROTEINS.read_bytes()))
    df = zb.score_fasta([gz, mixed], chunk_size=4)
    n = len(list(read_fasta(PROTEINS)))
    assert list(df["input"]) == [str(gz)] * n + [str(mixed)] * len(MIXED_IDS)
    assert list(df["id"][n:]) == MIXED_IDS


def _truncated(tmp_path: Path) -> Path:
    data = gzip.compress(PROTEINS.read_bytes() * 200)
    path = tmp_path / "cut.fasta.gz"
    path.write_bytes(data[: len(data) // 2])
    return path


def test_truncated_gzip_raises_a_clear_error(tmp_path: Path) -> None:
    path = _truncated(tmp_path)
    with pytest.raises(
        InputFileError, match=r"cut\.fasta\.gz: the gzip stream ends early: the file is truncated"
    ):
        zb.score_fasta(path, chunk_size=50)
    # the iterator hands out the complete chunks before the break, then raises
    got = []
    with pytest.raises(InputFileError):
        for frame in zb.iter_score_fasta(path, chunk_size=50):
            got.append(frame)
    assert got and all(len(f) == 50 for f in got)


def test_truncated_gzip_cli_exit_2_and_no_output(tmp_path: Path) -> None:
    path = _truncated(tmp_path)
    out = tmp_path / "scores.csv"
    res = runner.invoke(app, ["batch", str(path), "-o", str(out), "--chunk-size", "50"])
    assert res.exit_code == 2
    assert "truncated" in res.stderr and "no output written" in res.stderr
    assert "Traceback" not in res.output + res.stderr
    assert len(res.stderr.strip().splitlines()) == 1
    assert sorted(p.name for p in tmp_path.iterdir()) == ["cut.fasta.gz"]


def test_corrupt_gzip_is_an_input_error(tmp_path: Path) -> None:
    data = bytearray(gzip.compress(PROTEINS.read_bytes()))
    data[40:60] = b"\xff" * 20
    path = tmp_path / "bad.fasta.gz"
    path.write_bytes(bytes(data))
    with pytest.raises(InputFileError, match="corrupt gzip data|truncated"):
        zb.score_fasta(path)


# -- CLI ------------------------------------------------------------------------------------------
def _invoke(*args: str, input: bytes | None = None):  # noqa: A002
    return runner.invoke(app, ["batch", *args], input=input)


def test_cli_writes_every_format_with_the_same_numbers(mixed: Path, tmp_path: Path) -> None:
    expected = zb.score_fasta([PROTEINS, mixed], ph=[5.0, 7.4])
    readers = {
        "csv": lambda p: pd.read_csv(p, keep_default_na=False, na_values=[""]),
        "csv.gz": lambda p: pd.read_csv(p, keep_default_na=False, na_values=[""]),
        "tsv": lambda p: pd.read_csv(p, sep="\t", keep_default_na=False, na_values=[""]),
        "jsonl": lambda p: pd.read_json(p, lines=True),
        "parquet": pd.read_parquet,
    }
    for suffix, read in readers.items():
        out = tmp_path / f"scores.{suffix}"
        res = _invoke(str(PROTEINS), str(mixed), "-o", str(out), "--ph", "5", "--ph", "7.4")
        assert res.exit_code == 0, res.output
        got = read(out)
        assert list(got.columns) == list(expected.columns), suffix
        assert list(got["id"]) == list(expected["id"]), suffix
        for col in ("pI", "charge_ph5.0", "charge_ph7.4", "monoisotopic_mass"):
            assert np.allclose(got[col].astype(float), expected[col], atol=1e-9, equal_nan=True), (
                suffix,
                col,
            )
        assert list(got["error"].fillna("")) == list(expected["error"]), suffix
    assert sorted(p.name for p in tmp_path.iterdir() if p.name.startswith(".")) == []


def test_cli_summary_and_record_errors_on_stderr(mixed: Path, tmp_path: Path) -> None:
    out = tmp_path / "s.csv"
    res = _invoke(str(mixed), "-o", str(out))
    assert res.exit_code == 0  # per-record errors are rows, not a failure
    assert res.stdout == ""
    assert "7 records read, 3 scored, 4 with errors; wrote" in res.stderr
    assert "warning: " + str(mixed) + ": line 7: record 'bad_letters'" in res.stderr
    assert "\r" not in res.stderr  # no progress when stderr is not a terminal


def test_cli_reads_stdin(tmp_path: Path) -> None:
    out = tmp_path / "s.tsv"
    res = _invoke("-", "-o", str(out), input=PROTEINS.read_bytes())
    assert res.exit_code == 0, res.output
    got = pd.read_csv(out, sep="\t")
    assert set(got["input"]) == {"<stdin>"}
    assert len(got) == len(list(read_fasta(PROTEINS)))


def test_cli_strict_exit_2_and_no_output_left(mixed: Path, tmp_path: Path) -> None:
    out = tmp_path / "scores.parquet"
    out.write_bytes(b"an older result")
    res = _invoke(str(PROTEINS), str(mixed), "-o", str(out), "--strict")
    assert res.exit_code == 2
    assert f"{mixed}: line 1: sequence text before the first '>' header" in res.stderr
    assert out.read_bytes() == b"an older result"  # the old file is untouched
    assert not [p for p in tmp_path.iterdir() if p.name.endswith(".partial")]
    fresh = tmp_path / "fresh.csv"
    assert _invoke(str(mixed), "-o", str(fresh), "--strict").exit_code == 2
    assert not fresh.exists()
    clean = tmp_path / "clean.csv"
    assert _invoke(str(PROTEINS), "-o", str(clean), "--strict").exit_code == 0
    assert clean.exists()


@pytest.mark.parametrize(
    "args, hint",
    [
        (["--ph", "17"], "--ph"),
        (["--ph", "7", "--ph", "7.0"], "--ph"),
        (["--chunk-size", "0"], "--chunk-size"),
        (["--jobs", "-1"], "--jobs"),
        (["--cys", "half"], "--cys"),
        (["--engine", "spark"], "--engine"),
        (["--engine", "local", "--scheduler", "tcp://127.0.0.1:8786"], "--scheduler"),
        (["--input-format", "genbank"], "--input-format"),
        (["-o", "{tmp}/out.xlsx"], "--output"),
        (["-o", "{tmp}/no/such/dir/out.csv"], "--output"),
    ],
)
def test_cli_bad_arguments_exit_2(args: list[str], hint: str, tmp_path: Path) -> None:
    args = [a.replace("{tmp}", str(tmp_path)) for a in args]
    if "-o" not in args:
        args += ["-o", str(tmp_path / "out.csv")]
    res = _invoke(str(PROTEINS), *args)
    assert res.exit_code == 2, res.output
    assert hint in res.output + res.stderr
    assert [p.name for p in tmp_path.iterdir()] == []


def test_cli_missing_input_and_unknown_scale_exit_2(tmp_path: Path) -> None:
    out = tmp_path / "o.csv"
    res = _invoke(str(tmp_path / "nope.fasta"), "-o", str(out))
    assert res.exit_code == 2 and "does not exist" in res.output + res.stderr
    res = _invoke(str(PROTEINS), "-o", str(out), "--scale", "no_such_scale")
    assert res.exit_code == 2 and "unknown pKa scale" in res.stderr
    assert not out.exists()


def test_cli_write_failure_exit_1_and_no_output(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    def disk_full(self: object, payload: object) -> None:
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(zb._Writer, "write", disk_full)
    out = tmp_path / "o.csv"
    res = _invoke(str(PROTEINS), "-o", str(out))
    assert res.exit_code == 1
    assert "No space left on device" in res.stderr and "no output written" in res.stderr
    assert list(tmp_path.iterdir()) == []


def test_unknown_suffix_is_sniffed(tmp_path: Path) -> None:
    odd = tmp_path / "proteins.txt"
    odd.write_bytes(PROTEINS.read_bytes())
    assert len(zb.score_fasta(odd)) == len(list(read_fasta(PROTEINS)))
    junk = tmp_path / "table.dat"
    junk.write_text("a,b\n1,2\n")
    with pytest.raises(InputFileError, match="cannot tell the input format"):
        zb.score_fasta(junk)


# -- library parameters, progress, extension points -----------------------------------------------
@pytest.mark.parametrize(
    "kwargs, match",
    [
        ({"ph": [20.0]}, r"The 'ph' parameter of iter_score_fasta must be a number in \[-2, 16\]"),
        ({"ph": []}, "one or more pH values"),
        ({"ph": [7.0, 7.0]}, "distinct pH values"),
        ({"cys": "sometimes"}, "'cys' parameter"),
        ({"chunk_size": 0}, "'chunk_size' parameter"),
        ({"jobs": -2}, "'jobs' parameter"),
        ({"conditions": 37.0}, "'conditions' parameter"),
        ({"engine": "spark"}, "'engine' parameter"),
    ],
)
def test_bad_library_parameters(kwargs: dict[str, object], match: str) -> None:
    with pytest.raises(ParameterError, match=match):
        zb.score_fasta(PROTEINS, **kwargs)  # type: ignore[arg-type]


def test_charge_column_names() -> None:
    assert [zb.charge_column(p) for p in (7, 7.4, 7.25, 10)] == [
        "charge_ph7.0", "charge_ph7.4", "charge_ph7.25", "charge_ph10.0",
    ]  # fmt: skip


def test_progress_only_on_a_terminal() -> None:
    class Tty(io.StringIO):
        def isatty(self) -> bool:
            return True

    shown = Tty()
    p = zb.Progress(total_bytes=1000, stream=shown)
    p._last = -1.0
    p.update(5000, 250)
    p.finish()
    assert "5,000 records" in shown.getvalue() and "records/s" in shown.getvalue()
    assert "25%" in shown.getvalue() and "ETA" in shown.getvalue()
    quiet = io.StringIO()
    q = zb.Progress(total_bytes=1000, stream=quiet)
    q._last = -1.0
    q.update(5000, 250)
    q.finish()
    assert quiet.getvalue() == ""


def test_in_flight_blocks_are_bounded() -> None:
    class Counting:
        slots = 3

        def __init__(self) -> None:
            self.open = 0
            self.peak = 0
            self.closed = False

        def submit(self, block: zb.Block):
            self.open += 1
            self.peak = max(self.peak, self.open)
            engine = self

            class Pending:
                def result(self) -> zb.ChunkResult:
                    engine.open -= 1
                    return zb.ChunkResult(block.source, 0, 0, 1, 0, (), None)

            return Pending()

        def close(self, cancel: bool) -> None:
            self.closed = True

    engine = Counting()
    blocks = (zb.Block(str(i), 0, b"", 1, 0, zb._score_fasta_block) for i in range(20))
    order = [r.source for r in zb._ordered(engine, blocks)]
    assert order == [str(i) for i in range(20)]
    assert engine.peak == 3 and engine.closed


def test_a_new_input_format_plugs_in(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    """The extension point SMILES batches will use: a splitter plus a block scorer."""

    def split(path: str, label: str, index: int, chunk_size: int):
        lines = Path(path).read_bytes().splitlines(keepends=True)
        for a in range(0, len(lines), chunk_size):
            yield zb.Block(label, index, b"".join(lines[a : a + chunk_size]), a + 1, 0, score_lines)

    fmt = zb.InputFormat("lines", (".seqs",), split, zb.output_columns, lambda head: False)
    monkeypatch.setitem(zb._FORMATS, "lines", fmt)
    path = tmp_path / "three.seqs"
    path.write_text("DK\nMKW\nGG\n")
    df = zb.score_fasta(path, chunk_size=2)
    assert list(df["id"]) == ["line1", "line2", "line3"]
    assert df["pI"].notna().all()


def score_lines(block: zb.Block, options: zb.BatchOptions) -> pd.DataFrame:
    seqs = block.data.decode().split()
    ids = [f"line{block.first_line + i}" for i in range(len(seqs))]
    return zb.score_chunk(seqs, ids, None, options, input_name=block.source)


def test_jsonl_rows_are_valid_json(tmp_path: Path, mixed: Path) -> None:
    out = tmp_path / "s.jsonl"
    assert _invoke(str(mixed), "-o", str(out)).exit_code == 0
    rows = [json.loads(line) for line in out.read_text().splitlines()]
    assert [r["id"] for r in rows] == MIXED_IDS
    assert rows[2]["pI"] is None and rows[1]["pI"] > 0


def test_odd_bytes_become_error_rows_not_crashes(tmp_path: Path) -> None:
    path = tmp_path / "odd.fasta"
    path.write_bytes(
        b">nul\nMK\x00DE\n>latin1\nMK\xe9DE\n>stop_inside\nMK*DE\n>stop_end\nMKDE*\n>fine\nMKDE\n"
    )
    df = zb.score_fasta(path, chunk_size=2).set_index("id")
    assert df.loc["nul", "error"] == "line 1: record 'nul': invalid residue: '\\x00' at position 3"
    assert (
        df.loc["latin1", "error"]
        == "line 3: record 'latin1': invalid residue: '\ufffd' at position 3"
    )
    assert "'*' (stop) is allowed only at the end" in df.loc["stop_inside", "error"]
    assert df.loc["stop_end", "error"] == "" and df.loc["stop_end", "length"] == 4
    assert df.loc["stop_end", "pI"] == df.loc["fine", "pI"]


def test_old_mac_line_endings(tmp_path: Path) -> None:
    path = tmp_path / "mac.fasta"
    path.write_bytes(b">a one\rMKW\rVT\r>b\rDEK\r")
    df = zb.score_fasta(path)
    assert list(df["id"]) == ["a", "b"] and list(df["description"]) == ["one", ""]
    assert list(df["length"]) == [5, 3]


# -- the array reader of FASTA blocks --------------------------------------------------------------
# Most blocks are read without a Python string per record (ids, descriptions and sequences are cut
# out of the block's bytes with array operations). It must give exactly what the record-by-record
# reader gives (parse_fasta_block + score_columns: str.split / str.strip semantics for headers,
# compose for sequences), down to the bytes written.
PLAIN_BLOCKS = [
    b">sp|P1|A_HUMAN Protein A OS=Homo sapiens\nMKWVTFISLL\nFLFSSAYS\n>b\nDEKR\n",
    b">a one\r\nMKW\r\nVT\r\n>b  two  words \r\nDEK\r\n",  # Windows line ends
    b"\n\n  \n>after_blank_lines x\nMK\n",  # blank text before the first header is not a record
    b">\nGGKK\n>   \nDD\n>x\n>last_header_only",  # no id; header-only records
    # every ASCII byte that str.split takes for a space
    b">\x1ct\x1dab\x0bvt\x0cff\x1efs\x1fus desc \x1f\t\n MK DE \n\n\n",
    b'>q"uote, comma "x" d,e\nKKK\n>nul\x00in_id\nMK\n',
    b">caf\xc3\xa9 cr\xc3\xa8me br\xc3\xbbl\xc3\xa9e\nMK\n>nbsp\xc2\xa0id \xc2\x85next\nDE\n",
    b">bad\xff\xfeutf8 x\xe9y\nMK\n>ok\nMK\xe9DE\n>stop\nMK*DE\n>end*\nMKDE*\n>x\nXXMK\n",
    b">nuc looks nucleotide\nACGTACGTACGTACGTACGTACGTNNAC\n>uz\nUBZJO\n>low\nmkdekr\n",
]


def _both_readers(data: bytes, options: zb.BatchOptions) -> tuple[zb.Columns, zb.Columns]:
    block = zb.Block("in.fasta", 0, data, 7, 0, zb._score_fasta_block)
    fast = zb._score_plain_fasta_block(block, options)
    recs = zb.parse_fasta_block(block)
    slow = zb.score_columns(
        recs.sequences, recs.ids, recs.descriptions, options,
        input_name=block.source, lines=recs.lines, record_errors=recs.errors,
    )  # fmt: skip
    assert fast is not None
    return fast, slow


def _assert_same_rows(fast: zb.Columns, slow: zb.Columns, options: zb.BatchOptions) -> None:
    schema = zb._arrow_schema(zb.output_columns(options))
    assert zb.to_arrow(fast, schema).equals(zb.to_arrow(slow, schema))
    pd.testing.assert_frame_equal(zb.to_frame(fast, options), zb.to_frame(slow, options))
    for fmt in ("csv", "tsv", "jsonl"):
        assert zb.encode_rows(fast, fmt, options) == zb.encode_rows(slow, fmt, options), fmt


@pytest.mark.parametrize("data", PLAIN_BLOCKS)
@pytest.mark.parametrize("kw", [{}, {"scale": "bjellqvist", "cys": "bonded", "ph": [3.0, 9.0]}])
def test_array_reader_equals_the_record_reader(data: bytes, kw: dict[str, object]) -> None:
    options = zb._canonical(zb.make_options(**kw))  # type: ignore[arg-type]
    fast, slow = _both_readers(data, options)
    _assert_same_rows(fast, slow, options)


@pytest.mark.parametrize(
    "data",
    [
        b">a one\rMKW\rVT\r>b\rDEK\r",  # old Mac line ends
        b">a\r\nMK\r>b\nDE\n",  # mixed line ends
        b"MKV\n>a\nDE\n",  # text before the first header: a record with an error
        b"  \n",
    ],
)
def test_array_reader_leaves_odd_blocks_to_the_record_reader(data: bytes) -> None:
    block = zb.Block("in.fasta", 0, data, 1, 0, zb._score_fasta_block)
    assert zb._score_plain_fasta_block(block, zb._canonical(zb.make_options())) is None


@settings(max_examples=120, deadline=None)
@given(
    st.lists(
        st.tuples(
            st.lists(
                st.sampled_from(["a", "Z9", " ", "\t", "\x1c", "é", "\xa0", "|", '"']), max_size=8
            ).map("".join),
            st.lists(
                st.sampled_from(
                    ["MK", "d", "E", "*", " ", "\n", "\n\n", "X", "U", "1", "\x00", "\xe9", ">"]
                ),
                max_size=12,
            ).map("".join),
        ),
        min_size=1,
        max_size=8,
    ),
    st.booleans(),
)
def test_array_reader_equals_the_record_reader_on_any_records(
    records: list[tuple[str, str]], crlf: bool
) -> None:
    data = "".join(f">{h}\n{s}\n" for h, s in records).encode("utf-8", errors="surrogatepass")
    if crlf:
        data = data.replace(b"\r", b"").replace(b"\n", b"\r\n")
    options = zb._canonical(zb.make_options(ph=[7.0, 7.4]))
    block = zb.Block("in.fasta", 0, data, 1, 0, zb._score_fasta_block)
    if zb._score_plain_fasta_block(block, options) is not None:
        _assert_same_rows(*_both_readers(data, options), options)


def test_text_column_round_trip() -> None:
    values = ["", "a", "é€", "", "id|x"]
    col = zb.TextColumn.from_strings(values)
    assert col.tolist() == values and len(col) == 5 and col[2] == "é€" and col[-1] == "id|x"
    assert zb.TextColumn.repeat("in.fa", 3).tolist() == ["in.fa"] * 3
    assert zb.TextColumn.from_strings(["", ""]).tolist() == ["", ""]
    with pytest.raises(TypeError):
        zb.TextColumn.from_strings(["a", None])  # type: ignore[list-item]


def test_csv_output_does_not_import_pandas(tmp_path: Path) -> None:
    """pandas costs a fresh process about 0.3 s to import; CSV output does not need it."""
    import subprocess
    import sys

    out = tmp_path / "s.csv"
    code = (
        "import sys, zwitter.batch as zb; "
        f"zb.score_files([{str(PROTEINS)!r}], {str(out)!r}, ph=[7.0, 7.4]); "
        "print('pandas' in sys.modules)"
    )
    res = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert res.stdout.strip() == "False"
    expected = zb.score_fasta(PROTEINS, ph=[7.0, 7.4])
    got = pd.read_csv(out, keep_default_na=False, na_values={"pI": [""], "length": [""]})
    assert list(got["id"]) == list(expected["id"])
    assert np.allclose(got["charge_ph7.4"], expected["charge_ph7.4"], rtol=0, atol=1e-12)


# -- plain files: blocks that say where they lie ---------------------------------------------------
def _loaded(blocks: list[zb.Block]) -> list[tuple[bytes, int]]:
    return [(b.loaded().data, b.first_line) for b in blocks]


def _both_splitters(
    path: Path, chunk_size: int, monkeypatch: pytest.MonkeyPatch, read_size: int
) -> tuple[list[zb.Block], list[tuple[bytes, int]]]:
    monkeypatch.setattr(zb, "_READ_SIZE", read_size)
    monkeypatch.setattr(zb, "_SCAN_SIZE", read_size)
    plain = list(zb.split_fasta(str(path), "in", 0, chunk_size))
    with path.open("rb") as fh:
        stream = list(zb._split_fasta_stream(fh, None, str(path), "in", 0, chunk_size))
    return plain, [(b.data, b.first_line) for b in stream]


@settings(max_examples=150, deadline=None)
@given(
    data=st.lists(
        st.sampled_from([b">", b">a x", b"MK", b"de", b" ", b"\n", b"\r\n", b"\r", b"\n>b\n"]),
        max_size=30,
    ).map(b"".join),
    chunk_size=st.integers(1, 4),
    read_size=st.sampled_from([1, 2, 3, 7, 64]),
)
def test_plain_file_splitter_cuts_the_blocks_the_stream_splitter_cuts(
    data: bytes, chunk_size: int, read_size: int, tmp_path_factory: pytest.TempPathFactory
) -> None:
    # Any bytes (blank or text before the first header, headers at window edges, CR and CRLF
    # line ends), any chunk size, windows down to one byte: the same blocks, bytes and lines.
    path = tmp_path_factory.mktemp("split") / "in.fasta"
    path.write_bytes(data)
    with pytest.MonkeyPatch.context() as mp:
        plain, stream = _both_splitters(path, chunk_size, mp, read_size)
    assert all(b.data == b"" and b.origin is not None for b in plain)
    assert _loaded(plain) == stream
    assert b"".join(d for d, _ in stream).strip() == data.strip()


def test_plain_file_blocks_of_the_mixed_file(mixed: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    plain, stream = _both_splitters(mixed, 2, monkeypatch, 5)
    assert _loaded(plain) == stream
    assert [line for _, line in stream] == [1, 5, 9, 13]  # the lines of MIXED's records 1, 3, 5, 7
    assert plain[-1].origin is not None and plain[-1].origin.offset + plain[-1].origin.length == (
        len(MIXED)
    )


def test_a_block_is_not_read_from_a_file_that_changed(tmp_path: Path) -> None:
    path = tmp_path / "growing.fasta"
    path.write_bytes(PROTEINS.read_bytes())
    first = next(zb.split_fasta(str(path), "growing.fasta", 0, 3))
    assert first.loaded().data.startswith(b">")
    with path.open("ab") as fh:
        fh.write(b">late\nMKW\n")
    with pytest.raises(InputFileError, match=r"^growing\.fasta: the file changed while"):
        first.loaded()
    path.unlink()
    with pytest.raises(InputFileError, match=r"^growing\.fasta: cannot open again: No such file"):
        first.loaded()


def test_detached_blocks_travel_without_their_bytes(tmp_path: Path) -> None:
    block = next(zb.split_fasta(str(PROTEINS), "p", 0, 3))
    assert block.detached() is block  # already without bytes
    full = block.loaded()
    assert full.data and full.detached().data == b"" and full.detached().loaded() == full
    gz = tmp_path / "p.fasta.gz"
    gz.write_bytes(gzip.compress(PROTEINS.read_bytes()))
    packed = next(zb.split_fasta(str(gz), "p", 0, 3))
    assert packed.origin is None and packed.detached() is packed and packed.data == full.data


# -- worker processes ----------------------------------------------------------------------------
def _through_engine(engine: zb.Engine, paths: list[str], chunk_size: int) -> list[bytes]:
    formats = zb._formats(paths, "auto")
    return [r.payload for r in zb._ordered(engine, zb._blocks(paths, formats, chunk_size))]


@pytest.mark.parametrize("method", ["fork", "forkserver", "spawn"])
def test_every_start_method_gives_the_in_process_bytes(
    method: str, mixed: Path, tmp_path: Path
) -> None:
    # Plain files (blocks read by the workers), gzip and several inputs (blocks sent with their
    # bytes); the first blocks may be scored here while forkserver/spawn workers start.
    gz = tmp_path / "p.fasta.gz"
    gz.write_bytes(gzip.compress(PROTEINS.read_bytes()))
    paths = [str(PROTEINS), str(mixed), str(gz)]
    options = zb.make_options(ph=[7.0, 7.4])
    expected = _through_engine(zb.InProcessEngine(options, "csv"), paths, 2)
    engine = zb.ProcessEngine(options, "csv", 2, method=method)
    assert engine.method == method
    assert _through_engine(engine, paths, 2) == expected


def test_auto_start_method_forks_only_without_other_threads() -> None:
    import sys
    import threading

    if not sys.platform.startswith("linux"):
        pytest.skip("fork is chosen on Linux only")
    assert zb.start_method() == ("fork" if threading.active_count() == 1 else "forkserver")
    stop = threading.Event()
    other = threading.Thread(target=stop.wait)
    other.start()
    try:
        assert zb.start_method() == "forkserver"
    finally:
        stop.set()
        other.join()
    with pytest.raises(ParameterError, match="'start_method' parameter of batch must be one of"):
        zb.start_method("teleport")


def test_a_worker_that_cannot_read_its_block_fails_the_run(tmp_path: Path) -> None:
    path = tmp_path / "p.fasta"
    path.write_bytes(PROTEINS.read_bytes() * 3)

    def blocks() -> Iterator[zb.Block]:
        for i, b in enumerate(zb.split_fasta(str(path), "p.fasta", 0, 5)):
            if i == 2:
                path.write_bytes(b">other\nMK\n")  # the file is replaced under the run
            yield b

    engine = zb.ProcessEngine(zb.make_options(), "csv", 2, method="fork")
    with pytest.raises(InputFileError, match="the file changed while it was being scored"):
        for _ in zb._ordered(engine, blocks()):
            pass


def test_keeping_freed_memory_is_switched_on_and_back(monkeypatch: pytest.MonkeyPatch) -> None:
    import sys

    calls: list[tuple[int, int]] = []

    class Libc:
        def mallopt(self, param: int, value: int) -> int:
            calls.append((param, value))
            return 1

    if not sys.platform.startswith("linux"):
        assert zb.keep_freed_memory(True) is False
        return
    import ctypes

    monkeypatch.setattr(ctypes, "CDLL", lambda name: Libc())
    engine = zb.InProcessEngine(zb.make_options(), "csv")
    assert calls == list(zb._MALLOC_SCORING.items())
    engine.close(cancel=False)
    assert calls[3:] == list(zb._MALLOC_DEFAULTS.items())
    engine.close(cancel=False)  # once only
    assert len(calls) == 6
    # mallopt(3): M_TRIM_THRESHOLD, M_TOP_PAD, M_MMAP_THRESHOLD default to 128 kB each
    assert zb._MALLOC_DEFAULTS == {-1: 131072, -2: 131072, -3: 131072}


@pytest.mark.parametrize("jobs", [1, 2])
def test_gzip_output_is_the_text_output_compressed_chunk_by_chunk(
    jobs: int, mixed: Path, tmp_path: Path
) -> None:
    import shutil
    import subprocess

    plain, packed = tmp_path / "s.tsv", tmp_path / "s.tsv.gz"
    for out in (plain, packed):
        zb.score_files([PROTEINS, mixed], out, ph=[7.0], chunk_size=3, jobs=jobs)
    data = packed.read_bytes()
    assert gzip.decompress(data) == plain.read_bytes()
    # one gzip member for the header line and one per chunk, each closed (RFC 1952)
    n_records = len(list(read_fasta(PROTEINS))) + len(MIXED_IDS)
    assert data.count(b"\x1f\x8b\x08") >= 1 + math.ceil(n_records / 3) - 1
    if shutil.which("gzip"):  # the system's gzip reads the members as one stream
        res = subprocess.run(["gzip", "-dc", str(packed)], capture_output=True, check=True)
        assert res.stdout == plain.read_bytes()


@pytest.mark.parametrize("strict", [False, True])
def test_two_jobs_leave_only_the_output_or_nothing(
    strict: bool, mixed: Path, tmp_path: Path
) -> None:
    # Workers leave their encoded chunks in a spool folder beside the output; it goes with the
    # run, whether the output is written or, under strict, abandoned at the first bad record.
    inputs = tmp_path / "in"
    inputs.mkdir()
    fasta = inputs / "many.fasta"
    fasta.write_bytes(PROTEINS.read_bytes() * 20 + MIXED[MIXED.index(b">") :])
    out_dir = tmp_path / "out"
    out_dir.mkdir()
    out = out_dir / "s.csv"
    if strict:
        with pytest.raises(InputFileError, match="--strict stops at the first bad record"):
            zb.score_files(fasta, out, chunk_size=7, jobs=2, strict=True)
        assert list(out_dir.iterdir()) == []
        return
    summary = zb.score_files(fasta, out, chunk_size=7, jobs=2)
    assert [p.name for p in out_dir.iterdir()] == ["s.csv"]
    one = out_dir / "one.csv"
    zb.score_files(fasta, one, chunk_size=7, jobs=1)
    assert out.read_bytes() == one.read_bytes()
    assert summary.records == len(list(read_fasta(PROTEINS))) * 20 + len(MIXED_IDS) - 1


def test_a_spooled_chunk_is_appended_whole_without_copy_file_range(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    import os

    data = bytes(range(256)) * 5000  # 1.28 MB: more than one read of the fallback copy
    for copy in (True, False):
        if not copy:

            def refuse(*args: object) -> int:
                raise OSError(18, "Invalid cross-device link")

            monkeypatch.setattr(os, "copy_file_range", refuse, raising=False)
        chunk = zb.Spooled.write(str(tmp_path), data)
        out = tmp_path / f"out{copy}.bin"
        with out.open("wb") as fh:
            fh.write(b"head")
            chunk.append_to(fh)
            fh.write(b"tail")
        assert out.read_bytes() == b"head" + data + b"tail"
        assert not Path(chunk.path).exists()


@pytest.mark.parametrize("jobs", [1, 2])
def test_an_interrupted_run_leaves_nothing_behind(
    jobs: int, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    # Ctrl-C while blocks are in flight: the partial output, the spool folder and the workers go.
    def split(path: str, label: str, index: int, chunk_size: int):
        blocks = zb.split_fasta(str(PROTEINS), label, index, 2)
        for i, block in enumerate(blocks):
            if i == 4:
                raise KeyboardInterrupt
            yield block

    fmt = zb.InputFormat("stopping", (".stop",), split, zb.output_columns, lambda head: False)
    monkeypatch.setitem(zb._FORMATS, "stopping", fmt)
    src = tmp_path / "in.stop"
    src.write_text(">a\nMK\n")
    out_dir = tmp_path / "out"
    out_dir.mkdir()
    with pytest.raises(KeyboardInterrupt):
        zb.score_files(src, out_dir / "s.csv", jobs=jobs)
    assert list(out_dir.iterdir()) == []
    res = runner.invoke(app, ["batch", str(src), "-o", str(out_dir / "s.csv"), "--jobs", str(jobs)])
    assert res.exit_code == 130
    assert res.stderr == "zwitter: error: interrupted; no output written\n"
    assert list(out_dir.iterdir()) == []


def test_blocks_in_flight_deep_only_when_they_travel_light(tmp_path: Path) -> None:
    # Blocks without bytes and spooled results are small: the engine lets the workers run far
    # ahead of the oldest block; blocks that carry their bytes (gzip) stay few.
    gz = tmp_path / "p.fasta.gz"
    gz.write_bytes(gzip.compress(PROTEINS.read_bytes()))
    plain = next(zb.split_fasta(str(PROTEINS), "p", 0, 3))
    packed = next(zb.split_fasta(str(gz), "p", 0, 3))
    engine = zb.ProcessEngine(zb.make_options(), "csv", 2, method="fork", spool=str(tmp_path))
    try:
        engine.submit(plain).result()
        assert engine.slots == 32
        engine.submit(packed).result()
        assert engine.slots == 8
    finally:
        engine.close(cancel=False)
