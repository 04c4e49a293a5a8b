"""Figures: files of the requested format, plotted data equal to the computed data, pI markers.

The data drawn are read back from the Axes (line and scatter data) and compared with what the
library computes and, where an outside reference exists, with it: Henderson-Hasselbalch and the
closed-form populations of a diprotic acid (any physical chemistry textbook), pyteomics for the
charge curve and Biopython for the pI and the average mass.
"""

from __future__ import annotations

import itertools
import math
import subprocess
import sys
import warnings
from pathlib import Path

import numpy as np
import pytest

import zwitter
from zwitter import plots
from zwitter.errors import ParameterError
from zwitter.molecule import Molecule
from zwitter.sites import Site, SiteSet

MAGIC = {"png": b"\x89PNG\r\n\x1a\n", "pdf": b"%PDF-"}
# Sperm-whale myoglobin-like test sequence (realistic input only; not a reference value).
PROTEIN = (
    "GLSDGEWQQVLNVWGKVEADIPGHGQEVLIRLFKGHPETLEKFDKFKHLKSEDEMKASEDLKKHGATVLTALGGILKKKGHHEAELKPLAQ"
    "SHATKHKIPVKYLEFISEAIIQVLQSKHPGDFGADAQGAMNKALELFRKDMASNYKELGFQG"
)


def line(fig, gid: str):
    found = [ln for ln in fig.axes[0].get_lines() if ln.get_gid() == gid]
    assert len(found) == 1, [ln.get_gid() for ln in fig.axes[0].get_lines()]
    return found[0]


# -- files -----------------------------------------------------------------------------------
@pytest.mark.parametrize("fmt", ["png", "svg", "pdf"])
def test_figure_files_have_the_requested_format(tmp_path: Path, fmt: str) -> None:
    m = zwitter.from_sequence("DKHKE", scale="lehninger")
    target = tmp_path / f"charge.{fmt}"
    fig = plots.charge_plot(m, path=target)
    data = target.read_bytes()
    assert len(data) > 5000
    if fmt == "svg":
        head = data[:2000].decode("utf-8")
        assert "<svg" in head and data.rstrip().endswith(b"</svg>")
    else:
        assert data.startswith(MAGIC[fmt])
    if fmt == "png":  # the size in the IHDR chunk is the figure size at 150 dpi
        width, height = int.from_bytes(data[16:20], "big"), int.from_bytes(data[20:24], "big")
        w_in, h_in = fig.get_size_inches()
        assert (width, height) == (round(w_in * 150), round(h_in * 150))
    assert sorted(p.name for p in tmp_path.iterdir()) == [target.name]  # no temporary file left


@pytest.mark.parametrize(
    "fn",
    [
        lambda m, p: plots.species_plot(m, path=p),
        lambda m, p: plots.titration_plot(m, path=p),
    ],
)
def test_other_molecule_figures_save(tmp_path: Path, fn) -> None:
    m = zwitter.from_sequence("DKHKE", scale="lehninger")
    target = tmp_path / "fig.png"
    fn(m, target)
    assert target.read_bytes().startswith(MAGIC["png"])


@pytest.mark.parametrize("name", ["figure.jpg", "figure", "figure.png.txt"])
def test_unknown_suffix_is_refused(tmp_path: Path, name: str) -> None:
    fig = plots.charge_plot(zwitter.from_sequence("DK"))
    with pytest.raises(ParameterError) as err:
        plots.save_figure(fig, tmp_path / name)
    assert str(err.value) == (
        "The 'path' parameter of save_figure must be a file name ending in .png, .svg or .pdf. "
        f"Got {str(tmp_path / name)!r} instead."
    )
    assert list(tmp_path.iterdir()) == []


def test_missing_folder_is_refused(tmp_path: Path) -> None:
    fig = plots.charge_plot(zwitter.from_sequence("DK"))
    with pytest.raises(ParameterError, match="a file in an existing folder"):
        plots.save_figure(fig, tmp_path / "no" / "such.png")


def test_failed_save_keeps_the_old_file(tmp_path: Path, monkeypatch) -> None:
    target = tmp_path / "charge.png"
    target.write_bytes(b"old")
    fig = plots.charge_plot(zwitter.from_sequence("DK"))

    def broken(*args, **kwargs):
        raise RuntimeError("disk full")

    monkeypatch.setattr(fig, "savefig", broken)
    with pytest.raises(RuntimeError, match="disk full"):
        plots.save_figure(fig, target)
    assert target.read_bytes() == b"old"
    assert [p.name for p in tmp_path.iterdir()] == ["charge.png"]


# -- charge curves ---------------------------------------------------------------------------
def test_plotted_charge_equals_the_computed_curve() -> None:
    m = zwitter.from_sequence(PROTEIN, scale="lehninger")
    fig = plots.charge_plot(m)
    xy = line(fig, "charge:0").get_xydata()
    curve = m.curve()
    np.testing.assert_array_equal(xy[:, 0], curve["ph"].to_numpy())
    np.testing.assert_allclose(xy[:, 1], curve["charge"].to_numpy(), rtol=0, atol=1e-12)
    ax = fig.axes[0]
    assert ax.get_xlabel() == "pH" and ax.get_ylabel() == "net charge (e)"


def test_plotted_charge_matches_pyteomics() -> None:
    # pyteomics.electrochem carries the same Lehninger pK table (checked in
    # test_reference_libraries); its charge at each pH is an independent computation.
    electrochem = pytest.importorskip("pyteomics.electrochem")
    seq = "MKWVTFISLLFLFSSAYSRGVFRRDTHKSEIAHRFKDLGE"
    m = zwitter.from_sequence(seq, scale="lehninger")
    grid = np.linspace(1.0, 13.0, 25)
    xy = line(plots.charge_plot(m, grid), "charge:0").get_xydata()
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        theirs = [electrochem.charge(seq, float(p), pK=electrochem.pK_lehninger) for p in grid]
    np.testing.assert_allclose(xy[:, 1], theirs, atol=0.01)


@pytest.mark.parametrize("seq", ["DKHKE", "GLSDGEWQQVLNVWGK", PROTEIN, "KKKKGGGGKKKK"])
def test_pi_marker_sits_where_the_charge_crosses_zero(seq: str) -> None:
    m = zwitter.from_sequence(seq, scale="lehninger")
    fig = plots.charge_plot(m)
    ((x, y),) = line(fig, "pI:0").get_xydata()
    assert x == pytest.approx(m.isoelectric_point(), abs=1e-6)
    assert y == 0.0
    assert abs(m.charge(x)) < 1e-6
    # and the drawn curve changes sign around the marker
    xy = line(fig, "charge:0").get_xydata()
    left, right = xy[xy[:, 0] < x][-1, 1], xy[xy[:, 0] > x][0, 1]
    assert left > 0 > right
    labels = [t.get_text() for t in fig.axes[0].texts]
    assert f"pI {x:.2f}" in labels


def test_pi_marker_matches_biopython(test_data_dir: Path) -> None:
    # tests/data/biopython_scale.csv holds Biopython's own pK values (see that file's header).
    protparam = pytest.importorskip("Bio.SeqUtils.ProtParam")
    scale = zwitter.load_scale_file(test_data_dir / "biopython_scale.csv")
    seq = "MKWVTFISLLFLFSSAYSRGVFRRDTHKSEIAHRFKDLGE"
    fig = plots.charge_plot(zwitter.from_sequence(seq, scale=scale))
    ((x, _),) = line(fig, "pI:0").get_xydata()
    assert x == pytest.approx(protparam.ProteinAnalysis(seq).isoelectric_point(), abs=0.01)


def test_several_molecules_on_one_plot() -> None:
    mols = [
        zwitter.from_sequence(s, scale="lehninger") for s in ("DDDEK", "GGKKR", "DKHKE", "EEKK")
    ]
    fig = plots.charge_plot(mols, names=["acidic", "basic", "mixed", "even"])
    for i, m in enumerate(mols):
        np.testing.assert_allclose(line(fig, f"charge:{i}").get_ydata(), m.curve()["charge"])
        assert line(fig, f"pI:{i}").get_xdata()[0] == pytest.approx(m.isoelectric_point(), abs=1e-6)
    legend = [t.get_text() for t in fig.axes[0].get_legend().get_texts()]
    assert legend[0] == f"acidic (pI {mols[0].isoelectric_point():.2f})"
    # the series differ in colour, and a colour is never reused with the same line style
    styles = [(ln.get_color(), ln.get_linestyle()) for ln in fig.axes[0].get_lines()
              if str(ln.get_gid()).startswith("charge:")]  # fmt: skip
    assert len(set(styles)) == len(mols)


def test_molecule_without_pi_has_no_marker_and_no_warning() -> None:
    acid = Molecule(SiteSet.from_sites([Site("COOH", (4.0,), 0)]), name="acid")
    fig = plots.charge_plot(acid)  # filterwarnings=error: a leaked warning would fail here
    gids = [ln.get_gid() for ln in fig.axes[0].get_lines()]
    assert "pI:0" not in gids
    assert fig.axes[0].get_legend().get_texts()[0].get_text() == "acid (no pI)"


def test_windows_and_threshold_are_drawn() -> None:
    m = zwitter.from_sequence("KKKKGGGGKKKK", scale="lehninger")
    fig = plots.charge_plot(
        m, windows={"cation": (3.0, 5.5), "anion": (math.nan, math.nan)}, threshold=1.5
    )
    ax = fig.axes[0]
    spans = {p.get_gid(): p for p in ax.patches}
    assert set(spans) == {"window:cation"}
    trans = spans["window:cation"].get_patch_transform()
    xs = trans.transform(spans["window:cation"].get_path().vertices)[:, 0]
    assert (xs.min(), xs.max()) == pytest.approx((3.0, 5.5))
    assert {ln.get_gid() for ln in ax.get_lines()} >= {"threshold:+", "threshold:-"}
    assert line(fig, "threshold:+").get_ydata()[0] == 1.5


def test_plan_plot_shades_the_usable_windows() -> None:
    from zwitter.purification import plan_ion_exchange

    target = "GLSDGEWQQVLNVWGKVEADIPGHGQEVLIRLFKGHPETLEKFDK"
    plan = plan_ion_exchange(target, ["DDDDEEEEKK", "KKKRRRHH"], scale="lehninger")
    fig = plots.plan_plot(plan)
    ax = fig.axes[0]
    for name, window in plan.usable.items():
        found = [p for p in ax.patches if p.get_gid() == f"window:{name}"]
        if window.empty:
            assert not found
            continue
        (patch,) = found
        xs = patch.get_patch_transform().transform(patch.get_path().vertices)[:, 0]
        assert (xs.min(), xs.max()) == pytest.approx((window.lo, window.hi))
    assert line(fig, "working_ph").get_xdata()[0] == pytest.approx(plan.working_ph)
    for i, name in enumerate(plan.names):
        np.testing.assert_allclose(line(fig, f"charge:{i}").get_ydata(), plan.curves[name])


# -- species and titration -------------------------------------------------------------------
def test_species_of_a_diprotic_molecule_follow_the_closed_form() -> None:
    # Glycine as a one-residue chain: N-terminal amine and C-terminal carboxyl. For a diprotic
    # acid H2A+ with pKa1 < pKa2 the populations are 1 : 10^(pH-pKa1) : 10^(2pH-pKa1-pKa2),
    # normalised (textbook result; pKa values are whatever the scale gives).
    m = zwitter.from_sequence("G", scale="lehninger")
    pka1, pka2 = sorted(float(p) for p in m.sites.pkas[:, 0])
    fig = plots.species_plot(m)
    h = line(fig, "species:charge +1").get_xdata()
    w = np.stack([np.ones_like(h), 10 ** (h - pka1), 10 ** (2 * h - pka1 - pka2)])
    expected = w / w.sum(axis=0)
    for q, row in zip(("+1", "+0", "-1"), expected):
        np.testing.assert_allclose(line(fig, f"species:charge {q}").get_ydata(), row, atol=1e-12)


def test_species_lines_equal_species_tables_and_sum_to_one() -> None:
    m = zwitter.from_sequence("DDEEKKHHYYC", scale="lehninger")
    fig = plots.species_plot(m, min_population=0.2, top=4)
    lines = [ln for ln in fig.axes[0].get_lines() if str(ln.get_gid()).startswith("species:")]
    assert any(ln.get_gid() == "species:other" for ln in lines)
    total = np.sum([ln.get_ydata() for ln in lines], axis=0)
    np.testing.assert_allclose(total, 1.0, atol=1e-9)
    grid = lines[0].get_xdata()
    for j in (0, 40, 70, 100, 140):
        table = m.species(float(grid[j]))
        for ln in lines:
            if ln.get_gid() == "species:other":
                continue
            q = float(ln.get_gid().split()[-1])
            expected = float(table.loc[table["charge"] == q, "population"].sum())
            assert ln.get_ydata()[j] == pytest.approx(expected, abs=1e-12)


def test_species_of_a_structure_are_its_forms() -> None:
    pytest.importorskip("rdkit")
    from zwitter.inputs import molecule_from_text

    m = molecule_from_text("NCC(=O)O", kind="smiles")
    fig = plots.species_plot(m)
    lines = [ln for ln in fig.axes[0].get_lines() if str(ln.get_gid()).startswith("species:")]
    # the structure's species table leaves out forms below about 1e-6 of the molecules
    np.testing.assert_allclose(np.sum([ln.get_ydata() for ln in lines], axis=0), 1.0, atol=1e-5)
    at7 = m.species(7.0).set_index("smiles")["population"]
    grid = lines[0].get_xdata()
    j = int(np.argmin(abs(grid - 7.0)))
    for ln in lines:
        if ln.get_gid() == "species:other":
            continue
        smiles = ln.get_gid().split(maxsplit=1)[1].split()[-1]
        if smiles in at7.index:
            assert ln.get_ydata()[j] == pytest.approx(float(at7[smiles]), abs=1e-12)


def test_titration_lines_follow_henderson_hasselbalch() -> None:
    # One pKa per group type (Lehninger scale has no terminus-specific values): the fraction
    # protonated is 1 / (1 + 10^(pH - pKa)) (Henderson-Hasselbalch).
    m = zwitter.from_sequence("DKHKEYCR", scale="lehninger")
    fig = plots.titration_plot(m)
    curve = m.curve()
    s = m.sites
    for k in range(s.n_types):
        ys = line(fig, f"titration:{s.groups[k]}").get_ydata()
        np.testing.assert_allclose(ys, curve[f"fraction_protonated:{s.labels[k]}"], atol=1e-12)
        hh = 1.0 / (1.0 + 10.0 ** (curve["ph"].to_numpy() - s.pkas[k, 0]))
        np.testing.assert_allclose(ys, hh, atol=1e-12)
    assert fig.axes[0].get_ylabel() == "fraction protonated"


def test_titration_averages_site_types_of_one_group_by_count() -> None:
    # Two site types of one group (a side-chain carboxyl with a terminus-shifted pKa, say): the
    # drawn line is their count-weighted mean, each by Henderson-Hasselbalch.
    sites = SiteSet.from_sites([
        Site("D", (3.9,), 0, count=2.0, group="D"),
        Site("D(Cterm)", (4.6,), 0, count=1.0, group="D"),
        Site("K", (10.5,), 1, count=1.0, group="K"),
    ])  # fmt: skip
    m = Molecule(sites, name="two Asp types")
    fig = plots.titration_plot(m)
    (d,) = [ln for ln in fig.axes[0].get_lines() if ln.get_gid() == "titration:D"]
    h = d.get_xdata()
    expected = (2.0 / (1 + 10 ** (h - 3.9)) + 1.0 / (1 + 10 ** (h - 4.6))) / 3.0
    np.testing.assert_allclose(d.get_ydata(), expected, atol=1e-12)
    assert d.get_label() == "Asp ×3 (pKa 3.90–4.60)"


def test_titration_needs_titratable_groups() -> None:
    fixed = Molecule(SiteSet.from_sites([Site("NMe3+", (), 1)]), name="choline-like")
    with pytest.raises(ParameterError) as err:
        plots.titration_plot(fixed)
    assert str(err.value) == (
        "The 'molecule' parameter of titration_plot must be a molecule with titratable groups. "
        "Got 'choline-like' instead."
    )


# -- batch maps -----------------------------------------------------------------------------
@pytest.fixture(scope="module")
def batch_frame():
    from zwitter.batch import score_fasta

    return score_fasta(Path(__file__).parent / "data" / "batch_proteins.fasta", ph=[7.0])


def test_gel_plot_draws_pi_against_mass_like_a_gel(batch_frame) -> None:
    fig = plots.gel_plot(batch_frame, highlight=["melittin"])
    ax = fig.axes[0]
    (dots,) = [c for c in ax.collections if c.get_gid() == "gel"]
    ok = batch_frame["pI"].notna() & batch_frame["average_mass"].notna()
    expected = np.column_stack([batch_frame["pI"][ok], batch_frame["average_mass"][ok] / 1000])
    np.testing.assert_allclose(dots.get_offsets(), expected)
    assert ax.get_yscale() == "log"
    bottom, top = ax.get_ylim()
    assert bottom > top  # inverted: large molecules at the top, as on a gel
    assert ax.get_xlabel() == "isoelectric point (pH)" and ax.get_ylabel() == "mass (kDa)"
    (marked,) = [c for c in ax.collections if c.get_gid() == "gel:highlight"]
    row = batch_frame[batch_frame["id"] == "melittin"].iloc[0]
    np.testing.assert_allclose(marked.get_offsets(), [[row["pI"], row["average_mass"] / 1000]])


def test_gel_masses_match_biopython(batch_frame) -> None:
    bio_sequtils = pytest.importorskip("Bio.SeqUtils")
    fig = plots.gel_plot(batch_frame)
    (dots,) = [c for c in fig.axes[0].collections if c.get_gid() == "gel"]
    ok = (batch_frame["pI"].notna() & batch_frame["average_mass"].notna()).to_numpy()
    ids = list(batch_frame["id"][ok])
    # melittin: GIGAVLKVLTTGLPALISWIKRKRQQ (the record in tests/data/batch_proteins.fasta)
    mass = dots.get_offsets()[ids.index("melittin"), 1] * 1000
    theirs = bio_sequtils.molecular_weight("GIGAVLKVLTTGLPALISWIKRKRQQ", "protein")
    assert mass == pytest.approx(theirs, abs=0.1)


def test_gel_plot_needs_a_mass_column() -> None:
    import pandas as pd

    with pytest.raises(ParameterError) as err:
        plots.gel_plot(pd.DataFrame({"id": ["a"], "pI": [5.0]}))
    assert str(err.value) == (
        "The 'frame' parameter of gel_plot must be a table with a mass column (average_mass, "
        "mass, molecular_weight, mw, in Da). Got <columns id, pI> instead."
    )


def test_histogram_counts_and_fraction_boundaries(batch_frame) -> None:
    bounds = [4.0, 5.0, 6.0, 7.0, 8.0, 9.0, 10.0]
    fig = plots.pi_histogram(batch_frame, fractions=bounds, bin_width=0.5)
    ax = fig.axes[0]
    bars = [p for p in ax.patches if p.get_gid() == "histogram"]
    values = batch_frame["pI"].dropna().to_numpy()
    assert sum(b.get_height() for b in bars) == len(values)
    for b in bars:  # each bar counts the values in its bin
        lo, hi = b.get_x(), b.get_x() + b.get_width()
        assert b.get_width() == pytest.approx(0.5)
        inside = ((values >= lo) & (values < hi)) | ((values == hi) & (b is bars[-1]))
        assert b.get_height() == int(inside.sum())
    edges = sorted(ln.get_xdata()[0] for ln in ax.get_lines() if ln.get_gid() == "fraction")
    assert edges == bounds
    table = plots.ief_fractions(batch_frame, bounds)
    inner = table[~table["fraction"].isin(["below", "above"])]
    counts = [t.get_text() for t in ax.texts if t.get_gid() == "fraction_count"]
    assert counts == [f"{c:,}" for c in inner["count"]]
    assert int(table["count"].sum()) == len(values)


@pytest.mark.parametrize(
    "bounds",
    [[5.0], [5.0, 4.0], [4.0, 4.0], [-1.0, 5.0], [4.0, 15.0], [4.0, math.nan], "4,5"],
)
def test_bad_fraction_boundaries(bounds) -> None:
    with pytest.raises(
        ParameterError, match="at least two pH values in \\[0, 14\\], strictly ascending"
    ):
        plots.ief_fractions([5.0, 6.0], bounds)


# -- API shape ------------------------------------------------------------------------------
@pytest.mark.parametrize(
    ("call", "message"),
    [
        (lambda: plots.charge_plot([]), "The 'molecules' parameter of charge_plot must be a "
         "Molecule or a non-empty list of Molecules. Got <list> instead."),
        (lambda: plots.charge_plot("DKHK"), "The 'molecules' parameter of charge_plot must be a "
         "Molecule or a non-empty list of Molecules. Got <str> instead."),
        (lambda: plots.charge_plot(zwitter.from_sequence("DK"), names=["a", "b"]),
         "The 'names' parameter of charge_plot must be 1 labels (one per molecule). "
         "Got ['a', 'b'] instead."),
        (lambda: plots.charge_plot(zwitter.from_sequence("DK"), ph=[7.0, 5.0]),
         "The 'ph' parameter of charge_plot must be at least two pH values in ascending order. "
         "Got [7.0, 5.0] instead."),
        (lambda: plots.charge_plot(zwitter.from_sequence("DK"), ph=[7.0, 17.0]),
         "The 'ph' parameter of charge_plot must be a number in [-2, 16]. Got 17.0 instead."),
        (lambda: plots.species_plot(zwitter.from_sequence("DK"), min_population=2),
         "The 'min_population' parameter of species_plot must be a fraction in [0, 1]. "
         "Got 2 instead."),
        (lambda: plots.pi_histogram([5.0], bin_width=0),
         "The 'bin_width' parameter of pi_histogram must be pH units in [0.01, 5]. Got 0 instead."),
    ],
)  # fmt: skip
def test_bad_arguments(call, message: str) -> None:
    with pytest.raises(ParameterError) as err:
        call()
    assert str(err.value) == message


def test_drawing_into_an_existing_axes() -> None:
    from matplotlib.figure import Figure

    fig = Figure(figsize=(10, 4))
    left, right = fig.subplots(1, 2)
    m = zwitter.from_sequence("DKHKE")
    assert plots.charge_plot(m, ax=left) is fig
    assert plots.titration_plot(m, ax=right) is fig
    assert any(ln.get_gid() == "charge:0" for ln in left.get_lines())
    assert any(str(ln.get_gid()).startswith("titration:") for ln in right.get_lines())


def test_matplotlib_is_imported_only_when_drawing() -> None:
    code = (
        "import sys, zwitter, zwitter.plots, zwitter.report, zwitter.cli\n"
        "print(sorted(m for m in ('matplotlib', 'pandas') if m in sys.modules))"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert "matplotlib" not in out.stdout


# -- palette --------------------------------------------------------------------------------
# Colour-vision deficiency simulation: Machado, Oliveira & Fernandes 2009, IEEE Trans. Vis.
# Comput. Graph. 15:1291-1298, matrices for severity 1.0, applied to linear RGB (from memory).
CVD = {
    "protanopia": [[0.152286, 1.052583, -0.204868], [0.114503, 0.786281, 0.099216],
                   [-0.003882, -0.048116, 1.051998]],
    "deuteranopia": [[0.367322, 0.860646, -0.227968], [0.280085, 0.672501, 0.047413],
                     [-0.011820, 0.042940, 0.968881]],
    "tritanopia": [[1.255528, -0.076749, -0.178779], [-0.078411, 0.930809, 0.147602],
                   [0.004733, 0.691367, 0.303900]],
    "normal": np.eye(3).tolist(),
}  # fmt: skip


def _lab(linear_rgb: np.ndarray) -> np.ndarray:
    # sRGB (D65) -> XYZ -> CIELAB (IEC 61966-2-1 matrix; CIE 1976 L*a*b*)
    xyz = np.array([[0.4124, 0.3576, 0.1805], [0.2126, 0.7152, 0.0722],
                    [0.0193, 0.1192, 0.9505]]) @ linear_rgb  # fmt: skip
    t = xyz / np.array([0.95047, 1.0, 1.08883])
    f = np.where(t > 0.008856, np.cbrt(t), 7.787 * t + 16 / 116)
    return np.array([116 * f[1] - 16, 500 * (f[0] - f[1]), 200 * (f[1] - f[2])])


def _linear(hex_colour: str) -> np.ndarray:
    c = np.array([int(hex_colour[i : i + 2], 16) / 255 for i in (1, 3, 5)])
    return np.where(c <= 0.04045, c / 12.92, ((c + 0.055) / 1.055) ** 2.4)


@pytest.mark.parametrize("vision", sorted(CVD))
def test_palette_stays_distinct_under_colour_blindness(vision: str) -> None:
    m = np.array(CVD[vision])
    labs = [_lab(np.clip(m @ _linear(c), 0, 1)) for c in plots.PALETTE]
    worst = min(np.linalg.norm(a - b) for a, b in itertools.combinations(labs, 2))
    assert worst >= 20.0  # CIE76 distance; about 2.3 is a just-noticeable difference


def test_palette_lightness_reads_on_white() -> None:
    lightness = [_lab(_linear(c))[0] for c in plots.PALETTE]
    assert all(20 <= v <= 72 for v in lightness)
