"""Figures: charge curves, species populations, titration by residue type, proteome maps.

Every function returns a :class:`matplotlib.figure.Figure` and, given ``path``, also saves it
(PNG, SVG or PDF, chosen by the file's suffix; written to a temporary file and renamed, so a
failed save leaves no half-written image). Pass ``ax`` to draw into an existing Axes instead.

matplotlib is imported only inside these functions (the command line starts without it), and
figures are built without pyplot on the Agg canvas: no global figure registry, no GUI backend,
safe in worker processes and on servers.

Palette
-------
:data:`PALETTE` is our own set of seven colours, chosen so that every pair stays apart (CIELAB
distance of at least 25) for normal vision and under simulated protanopia, deuteranopia and
tritanopia, with lightness L* between 26 and 68 so that lines read on white. Series beyond the
first few also change line style, so curves stay distinct in greyscale print.
"""

from __future__ import annotations

import math
import os
import tempfile
import warnings
from collections.abc import Iterable, Mapping, Sequence
from pathlib import Path
from typing import TYPE_CHECKING, Any, cast

import numpy as np
import numpy.typing as npt

from .errors import ParameterError, ZwitterWarning

if TYPE_CHECKING:
    import pandas as pd
    from matplotlib.axes import Axes
    from matplotlib.figure import Figure

    from .molecule import Molecule
    from .purification import Plan

__all__ = [
    "PALETTE",
    "FIGURE_FORMATS",
    "save_figure",
    "charge_plot",
    "plan_plot",
    "species_plot",
    "titration_plot",
    "gel_plot",
    "pi_histogram",
    "ief_fractions",
    "check_fractions",
]

#: Categorical colours (indigo, orange, sky, wine, brown, sand, silver): see the module docstring.
PALETTE = ("#3b2f86", "#ee7d1a", "#3aaee0", "#9c1c4e", "#6e3410", "#c99f62", "#9aa5a6")
#: Line styles cycled with the palette (a new style each time the colours come round again).
LINE_STYLES = ("-", "--", "-.", ":")
#: Shading of the ion-exchange binding windows: (colour, hatch).
WINDOW_STYLE = {"cation": ("#3aaee0", "//"), "anion": ("#ee7d1a", "\\\\")}
INK = "#1e1e24"
MUTED = "#6b6b76"
FIGURE_FORMATS = ("png", "svg", "pdf")
#: Readable short names of the polypeptide groups (keys of zwitter.scales.GROUPS).
RESIDUE_NAMES = {
    "Nterm": "N-terminus",
    "Cterm": "C-terminus",
    "D": "Asp",
    "E": "Glu",
    "C": "Cys",
    "Y": "Tyr",
    "H": "His",
    "K": "Lys",
    "R": "Arg",
    "U": "Sec",
}

_STYLE = {
    "font.size": 10.0,
    "axes.titlesize": 11.5,
    "axes.titleweight": "bold",
    "axes.titlelocation": "left",
    "axes.labelsize": 10.5,
    "axes.edgecolor": INK,
    "axes.labelcolor": INK,
    "axes.linewidth": 0.8,
    "axes.spines.top": False,
    "axes.spines.right": False,
    "axes.grid": True,
    "grid.color": "#e4e4ea",
    "grid.linewidth": 0.7,
    "xtick.color": INK,
    "ytick.color": INK,
    "legend.frameon": False,
    "legend.fontsize": 9.0,
    "hatch.linewidth": 0.6,
    "svg.fonttype": "path",  # text as outlines: the SVG looks the same without our fonts
    "pdf.fonttype": 42,
}


# -- shared helpers ---------------------------------------------------------------------------
def _style() -> Any:
    import matplotlib as mpl

    return mpl.rc_context(cast(Any, _STYLE))


def _axes(ax: Axes | None, size: tuple[float, float]) -> tuple[Figure, Axes]:
    if ax is not None:
        return ax.figure, ax  # type: ignore[return-value]
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    fig = Figure(figsize=size, layout="constrained")
    FigureCanvasAgg(fig)
    return fig, fig.add_subplot()


def series_style(i: int) -> tuple[str, str]:
    """(colour, line style) of the i-th series."""
    return PALETTE[i % len(PALETTE)], LINE_STYLES[(i // len(PALETTE)) % len(LINE_STYLES)]


def _format_of(path: str | os.PathLike[str]) -> str:
    suffix = Path(path).suffix.lower().lstrip(".")
    if suffix not in FIGURE_FORMATS:
        raise ParameterError(
            "path", "save_figure", "a file name ending in .png, .svg or .pdf", str(path)
        )
    return suffix


def save_figure(fig: Figure, path: str | os.PathLike[str], *, dpi: float = 150) -> Path:
    """Save ``fig`` as PNG, SVG or PDF (by suffix), atomically; returns the path.

    The image goes to a temporary file in the target folder and is renamed when complete.
    Dates are left out of SVG/PDF metadata so that the same figure gives the same file.
    """
    fmt = _format_of(path)
    target = Path(path)
    if not target.parent.is_dir():
        raise ParameterError("path", "save_figure", "a file in an existing folder", str(path))
    metadata: dict[str, Any] = {"svg": {"Date": None}, "pdf": {"CreationDate": None}}.get(fmt, {})
    fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".tmp", dir=target.parent)
    try:
        with os.fdopen(fd, "wb") as handle:
            with _style():
                fig.savefig(handle, format=fmt, dpi=dpi, metadata=metadata, facecolor="white")
        os.chmod(tmp, 0o644)  # mkstemp makes it private; an image is meant to be shared
        os.replace(tmp, target)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise
    return target


def _finish(fig: Figure, path: str | os.PathLike[str] | None) -> Figure:
    if path is not None:
        save_figure(fig, path)
    return fig


def _grid(ph: npt.ArrayLike | None, default: npt.NDArray[np.float64], where: str) -> Any:
    from .equilibrium import check_ph

    grid = default if ph is None else np.atleast_1d(np.asarray(ph, dtype=np.float64))
    grid = check_ph(grid, where)
    if grid.ndim != 1 or grid.size < 2 or np.any(np.diff(grid) <= 0):
        raise ParameterError("ph", where, "at least two pH values in ascending order", ph)
    return grid


def _quiet(fn: Any) -> tuple[Any, list[str]]:
    """Call ``fn()``; return (value, messages of the ZwitterWarnings it raised)."""
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", ZwitterWarning)
        value = fn()
    return value, [str(w.message) for w in caught if issubclass(w.category, ZwitterWarning)]


def _pi(molecule: Molecule) -> tuple[float | None, str]:
    value, messages = _quiet(molecule.isoelectric_point)
    return value, "; ".join(messages)


def _short(text: str, limit: int = 32) -> str:
    return text if len(text) <= limit else text[: limit - 1] + "…"


def conditions_text(molecule: Molecule) -> str:
    """One line naming the conditions and scale a molecule's numbers are for."""
    cond = molecule.conditions
    if cond is None:
        parts = ["25 °C, I = 0 M (reference values)"]
    else:
        parts = [f"{cond.temperature:g} °C, I = {cond.ionic_strength:g} M"]
        if getattr(cond, "electrostatics", False):
            parts.append("smeared-charge electrostatics")
    if molecule.scale:
        parts.append(f"scale {molecule.scale}")
    return "; ".join(parts)


def _subtitle(ax: Axes, text: str) -> None:
    if text:
        ax.text(
            0.0,
            1.0,
            text,
            transform=ax.transAxes,
            ha="left",
            va="bottom",
            fontsize=8.5,
            color=MUTED,
            gid="subtitle",
        )


def _window_bounds(window: Any) -> tuple[float, float] | None:
    """(lo, hi) of a Window-like object or a pair; None when empty."""
    if window is None:
        return None
    if hasattr(window, "lo") and hasattr(window, "hi"):
        lo, hi = float(window.lo), float(window.hi)
    else:
        try:
            lo, hi = (float(x) for x in window)
        except (TypeError, ValueError):
            raise ParameterError(
                "windows", "charge_plot", "a mapping of name to (lo, hi) pH pairs", window
            ) from None
    if not (math.isfinite(lo) and math.isfinite(hi)) or lo > hi:
        return None
    return lo, hi


def _shade_windows(ax: Axes, windows: Mapping[str, Any]) -> None:
    if not isinstance(windows, Mapping):
        raise ParameterError(
            "windows", "charge_plot", "a mapping of name to (lo, hi) pH pairs", windows
        )
    extra = 0
    for name, window in windows.items():
        bounds = _window_bounds(window)
        if bounds is None:
            continue
        lo, hi = bounds
        if name in WINDOW_STYLE:
            color, hatch = WINDOW_STYLE[name]
            label = f"{name} exchanger binds (pH {lo:.2f}–{hi:.2f})"
        else:
            color, hatch = PALETTE[(2 + extra) % len(PALETTE)], "xx"
            extra += 1
            label = f"{name} (pH {lo:.2f}–{hi:.2f})"
        ax.axvspan(
            lo,
            hi,
            facecolor=color,
            alpha=0.14,
            edgecolor=color,
            hatch=hatch,
            lw=0.0,
            zorder=0,
            label=label,
            gid=f"window:{name}",
        )
        ax.text(
            (lo + hi) / 2,
            0.98,
            name,
            transform=ax.get_xaxis_transform(),
            ha="center",
            va="top",
            fontsize=8.5,
            color=INK,
            zorder=5,
            bbox={"boxstyle": "round,pad=0.2", "fc": "white", "ec": "none", "alpha": 0.8},
        )


# -- charge curves ------------------------------------------------------------------------------
_DEFAULT_GRID = np.linspace(0.0, 14.0, 281)


def charge_plot(
    molecules: Molecule | Sequence[Molecule],
    ph: npt.ArrayLike | None = None,
    *,
    names: Sequence[str] | None = None,
    windows: Mapping[str, Any] | None = None,
    threshold: float | None = None,
    show_pi: bool = True,
    title: str | None = None,
    ax: Axes | None = None,
    path: str | os.PathLike[str] | None = None,
) -> Figure:
    """Net charge versus pH of one or several molecules, the pI of each marked.

    Parameters
    ----------
    molecules
        A :class:`~zwitter.Molecule` or several (drawn on the same axes for comparison).
    ph
        pH grid, ascending (default 0-14 in steps of 0.05, as :meth:`Molecule.curve`).
    names
        Legend labels (default: the molecules' names).
    windows
        pH intervals to shade, by name: ``{"cation": (lo, hi), "anion": window}``; values may
        be pairs or objects with ``lo``/``hi`` (:class:`zwitter.purification.Window`). Empty or
        NaN windows are skipped.
    threshold
        Draw dotted lines at +threshold and -threshold net charges (binding threshold).
    show_pi
        Mark each isoelectric point: a diamond where the curve crosses zero, labelled
        ``pI 6.23`` (a molecule without a pI says so in the legend).
    title, ax, path
        Title; an Axes to draw into; a file to save to (.png, .svg, .pdf).

    The curve of molecule ``i`` is the line with gid ``charge:i``, its pI marker ``pI:i``.

    Examples
    --------
    >>> import zwitter
    >>> from zwitter.plots import charge_plot
    >>> fig = charge_plot(zwitter.from_sequence("GLSDGEWQQVLNVWGK", scale="lehninger"))
    >>> [round(float(x), 2) for x in fig.axes[0].get_lines()[-1].get_xdata()]
    [3.97]
    """
    from .molecule import Molecule

    mols = [molecules] if isinstance(molecules, Molecule) else list(molecules)
    if not mols or not all(isinstance(m, Molecule) for m in mols):
        raise ParameterError(
            "molecules",
            "charge_plot",
            "a Molecule or a non-empty list of Molecules",
            f"<{type(molecules).__name__}>",
        )
    labels = (
        list(names)
        if names is not None
        else [m.name or f"molecule {i + 1}" for i, m in enumerate(mols)]
    )
    if len(labels) != len(mols):
        raise ParameterError(
            "names", "charge_plot", f"{len(mols)} labels (one per molecule)", labels
        )
    grid = _grid(ph, _DEFAULT_GRID, "charge_plot")
    with _style():
        fig, axes = _axes(ax, (7.2, 4.5))
        if windows:
            _shade_windows(axes, windows)
        axes.axhline(0.0, color=INK, lw=0.9, zorder=1, gid="zero")
        if threshold is not None:
            for sign in (1.0, -1.0):
                axes.axhline(
                    sign * threshold,
                    color=MUTED,
                    lw=0.9,
                    ls=(0, (1, 2)),
                    zorder=1,
                    gid=f"threshold:{'+' if sign > 0 else '-'}",
                )
        markers: list[tuple[int, float, str]] = []
        for i, m in enumerate(mols):
            color, dash = series_style(i)
            z = np.asarray(m.charge(grid), dtype=np.float64)
            label = _short(labels[i])
            pi, reason = _pi(m) if show_pi else (None, "")
            if show_pi:
                label += f" (pI {pi:.2f})" if pi is not None else " (no pI)"
            axes.plot(
                grid, z, color=color, ls=dash, lw=2.0, label=label, zorder=3, gid=f"charge:{i}"
            )
            if pi is not None and grid[0] <= pi <= grid[-1]:
                markers.append((i, pi, color))
        for i, pi, color in markers:
            axes.plot(
                [pi],
                [0.0],
                ls="none",
                marker="D",
                ms=7,
                mfc="white",
                mec=color,
                mew=2.0,
                zorder=6,
                gid=f"pI:{i}",
            )
            if len(markers) <= 3:
                axes.annotate(
                    f"pI {pi:.2f}",
                    (pi, 0.0),
                    xytext=(8, 10 + 16 * len([m for m in markers if m[0] < i])),
                    textcoords="offset points",
                    fontsize=9,
                    fontweight="bold",
                    color=color,
                    bbox={"boxstyle": "round,pad=0.25", "fc": "white", "ec": color, "lw": 0.8},
                    arrowprops={"arrowstyle": "-", "color": color, "lw": 0.8},
                    zorder=7,
                )
        axes.set_xlim(float(grid[0]), float(grid[-1]))
        axes.set_xlabel("pH")
        axes.set_ylabel("net charge (e)")
        if title is None:
            title = (
                "Net charge versus pH"
                if len(mols) > 1
                else f"Net charge of {_short(labels[0], 36)}"
            )
        axes.set_title(title, pad=16)
        _subtitle(axes, conditions_text(mols[0]))
        _legend(axes, below=bool(windows) or len(mols) > 3)
    return _finish(fig, path)


def _legend(axes: Axes, *, below: bool) -> None:
    """Legend inside the upper right corner, or below the axes when it would hide curves."""
    if below:
        axes.legend(loc="upper center", bbox_to_anchor=(0.5, -0.13), ncols=2, fontsize=8.5)
    else:
        axes.legend(loc="upper right", fontsize=8.5)


def plan_plot(
    plan: Plan,
    *,
    title: str | None = None,
    ax: Axes | None = None,
    path: str | os.PathLike[str] | None = None,
) -> Figure:
    """Charge curves of a purification plan: target and contaminants, usable windows shaded.

    Draws the plan's pH grid; the usable binding windows of both exchangers (binding window
    within the stability range) are shaded, the binding threshold is dotted and the working pH
    is a vertical line (gid ``working_ph``).
    """
    grid = np.asarray(plan.curves["ph"], dtype=np.float64)
    mols = [plan.target, *plan.contaminants]
    with _style():
        fig = charge_plot(
            mols,
            grid,
            names=list(plan.names),
            windows=dict(plan.usable),
            threshold=plan.threshold,
            title=title or f"Ion exchange plan for {_short(plan.names[0], 30)}",
            ax=ax,
        )
        axes = ax if ax is not None else fig.axes[0]
        lo, hi = plan.stability
        for k, edge in enumerate((lo, hi)):
            axes.axvline(
                edge,
                color=MUTED,
                lw=0.8,
                ls=(0, (4, 3)),
                zorder=1,
                gid="stability",
                label=f"stability window pH {lo:g}–{hi:g}" if k == 0 else None,
            )
        if math.isfinite(plan.working_ph):
            axes.axvline(
                plan.working_ph,
                color=INK,
                lw=1.4,
                zorder=4,
                gid="working_ph",
                label=f"working pH {plan.working_ph:.2f} ({plan.exchanger} exchanger)",
            )
        _legend(axes, below=True)
    return _finish(fig, path)


# -- species ------------------------------------------------------------------------------------
_SPECIES_GRID = np.linspace(0.0, 14.0, 141)


def species_curves(
    molecule: Molecule, ph: npt.ArrayLike | None = None
) -> tuple[npt.NDArray[np.float64], list[tuple[str, float, npt.NDArray[np.float64]]]]:
    """Population of every form over a pH grid: (grid, [(label, charge, populations)]).

    Forms are the rows of ``molecule.species(ph)``: SMILES microstates or forms when the table
    has a ``smiles`` column (structures), charge states otherwise (sequences).
    """
    grid = _grid(ph, _SPECIES_GRID, "species_plot")
    tables, messages = _quiet(lambda: [molecule.species(float(p)) for p in grid])
    for text in dict.fromkeys(messages):
        warnings.warn(text, ZwitterWarning, stacklevel=3)
    by_key: dict[Any, npt.NDArray[np.float64]] = {}
    charge_of: dict[Any, float] = {}
    key_column = "smiles" if "smiles" in tables[0].columns else "charge"
    for j, table in enumerate(tables):
        sums = table.groupby(key_column, sort=False)["population"].sum()
        charges = table.groupby(key_column, sort=False)["charge"].first()
        for key, pop in sums.items():
            if key not in by_key:
                by_key[key] = np.zeros(grid.size)
                charge_of[key] = float(charges[key])
            by_key[key][j] = float(pop)
    out = []
    for key, pops in by_key.items():
        q = charge_of[key]
        label = f"{q:+g}  {key}" if key_column == "smiles" else f"charge {q:+g}"
        out.append((label, q, pops))
    out.sort(key=lambda item: -item[1])
    return grid, out


def species_plot(
    molecule: Molecule,
    ph: npt.ArrayLike | None = None,
    *,
    min_population: float = 0.05,
    top: int = 10,
    title: str | None = None,
    ax: Axes | None = None,
    path: str | os.PathLike[str] | None = None,
) -> Figure:
    """Populations of the protonation forms versus pH.

    For a structure (SMILES) the forms are its species (microstates); for a sequence, its charge
    states. Forms that reach ``min_population`` somewhere on the grid are drawn (at most ``top``,
    the most populated first; legend ordered by charge); the rest are summed as "other forms".
    Default grid: pH 0-14 in steps of 0.1. Line gids are ``species:<label>``.
    """
    if not 0 <= min_population <= 1:
        raise ParameterError(
            "min_population", "species_plot", "a fraction in [0, 1]", min_population
        )
    if int(top) != top or top < 1:
        raise ParameterError("top", "species_plot", "a whole number >= 1", top)
    grid, forms = species_curves(molecule, ph)
    peaks = sorted(range(len(forms)), key=lambda k: -float(forms[k][2].max()))
    shown = {k for k in peaks[: int(top)] if float(forms[k][2].max()) >= min_population}
    if not shown:  # a flat, many-state protein: show at least the most populated forms
        shown = set(peaks[: min(int(top), len(peaks))])
    rest = np.zeros(grid.size)
    for k, (_, _, pops) in enumerate(forms):
        if k not in shown:
            rest += pops
    with _style():
        fig, axes = _axes(ax, (7.2, 4.5))
        n = 0
        for k, (label, _, pops) in enumerate(forms):
            if k not in shown:
                continue
            color, dash = series_style(n)
            axes.plot(
                grid,
                pops,
                color=color,
                ls=dash,
                lw=2.0,
                label=_short(label, 40),
                gid=f"species:{label}",
            )
            n += 1
        if len(shown) < len(forms):
            axes.plot(
                grid,
                rest,
                color=MUTED,
                lw=1.2,
                ls=(0, (1, 1.5)),
                label=f"other forms ({len(forms) - len(shown)})",
                gid="species:other",
            )
        axes.set_xlim(float(grid[0]), float(grid[-1]))
        axes.set_ylim(-0.02, 1.04)
        axes.set_xlabel("pH")
        axes.set_ylabel("population (fraction of molecules)")
        axes.set_title(
            title or f"Protonation forms of {_short(molecule.name or 'the molecule', 34)}", pad=16
        )
        _subtitle(axes, conditions_text(molecule))
        axes.legend(loc="center left", bbox_to_anchor=(1.01, 0.5), fontsize=8.5)
    return _finish(fig, path)


# -- titration by residue type -----------------------------------------------------------------
def titration_curves(
    molecule: Molecule, ph: npt.ArrayLike | None = None
) -> tuple[npt.NDArray[np.float64], list[tuple[str, str, npt.NDArray[np.float64]]]]:
    """Fraction protonated of each group type: (grid, [(group, label, fractions)]).

    Site types of one group (e.g. a side-chain Asp and a C-terminal Asp with its own pKa) are
    averaged with their counts as weights. Groups are ordered by their mean pKa.
    """
    grid = _grid(ph, _DEFAULT_GRID, "titration_plot")
    curve = molecule.curve(grid)
    s = molecule.sites
    weights: dict[str, float] = {}
    sums: dict[str, npt.NDArray[np.float64]] = {}
    pkas: dict[str, list[float]] = {}
    names: dict[str, list[str]] = {}
    for k in range(s.n_types):
        column = f"fraction_protonated:{s.labels[k]}"
        n = int(s.nsteps[k])
        if not n or column not in curve.columns:
            continue
        g = s.groups[k]
        c = float(s.counts[k])
        weights[g] = weights.get(g, 0.0) + c
        sums[g] = sums.get(g, np.zeros(grid.size)) + c * np.asarray(curve[column], dtype=np.float64)
        pkas.setdefault(g, []).extend(float(p) for p in s.pkas[k, :n])
        names.setdefault(g, []).append(s.labels[k])
    if not sums:
        raise ParameterError(
            "molecule",
            "titration_plot",
            "a molecule with titratable groups",
            molecule.name or "<molecule>",
        )
    out = []
    for g in sorted(sums, key=lambda g: float(np.mean(pkas[g]))):
        lo, hi = min(pkas[g]), max(pkas[g])
        pka = f"pKa {lo:.2f}" if abs(hi - lo) < 5e-3 else f"pKa {lo:.2f}–{hi:.2f}"
        # residue names for polypeptides; a structure's own site label when its type is alone
        name = RESIDUE_NAMES.get(g) or (names[g][0] if len(names[g]) == 1 else g.replace("_", " "))
        label = f"{name} ×{weights[g]:g} ({pka})"
        out.append((g, label, sums[g] / weights[g] if weights[g] > 0 else sums[g]))
    return grid, out


def titration_plot(
    molecule: Molecule,
    ph: npt.ArrayLike | None = None,
    *,
    title: str | None = None,
    ax: Axes | None = None,
    path: str | os.PathLike[str] | None = None,
) -> Figure:
    """Fraction protonated of each residue (group) type versus pH, from :meth:`Molecule.curve`.

    One line per group type (gid ``titration:<group>``, e.g. ``titration:K``); each group's
    midpoint (fraction 0.5) is where the pH equals its pKa for a single-step group.
    """
    grid, groups = titration_curves(molecule, ph)
    with _style():
        fig, axes = _axes(ax, (7.2, 4.5))
        axes.axhline(0.5, color=MUTED, lw=0.7, ls=(0, (1, 2)), zorder=1)
        for i, (g, label, frac) in enumerate(groups):
            color, dash = series_style(i)
            axes.plot(grid, frac, color=color, ls=dash, lw=2.0, label=label, gid=f"titration:{g}")
        axes.set_xlim(float(grid[0]), float(grid[-1]))
        axes.set_ylim(-0.02, 1.04)
        axes.set_xlabel("pH")
        axes.set_ylabel("fraction protonated")
        axes.set_title(
            title or f"Titration by group type: {_short(molecule.name or 'molecule', 28)}", pad=16
        )
        _subtitle(axes, conditions_text(molecule))
        axes.legend(loc="center left", bbox_to_anchor=(1.01, 0.5), fontsize=8.5)
    return _finish(fig, path)


# -- batch maps -----------------------------------------------------------------------------------
MASS_COLUMNS = ("average_mass", "mass", "molecular_weight", "mw")


def _mass_column(frame: pd.DataFrame, mass: str | None, where: str) -> str:
    if mass is not None:
        if mass not in frame.columns:
            raise ParameterError(
                "mass", where, f"a column of the frame ({', '.join(map(str, frame.columns))})", mass
            )
        return mass
    for name in MASS_COLUMNS:
        if name in frame.columns:
            return name
    raise ParameterError(
        "frame",
        where,
        f"a table with a mass column ({', '.join(MASS_COLUMNS)}, in Da)",
        f"<columns {', '.join(map(str, frame.columns))}>",
    )


def _pi_values(data: Any, where: str, column: str = "pI") -> npt.NDArray[np.float64]:
    if hasattr(data, "columns"):
        if column not in data.columns:
            raise ParameterError(
                "frame",
                where,
                f"a table with a {column!r} column",
                f"<columns {', '.join(map(str, data.columns))}>",
            )
        values = np.asarray(data[column], dtype=np.float64)
    else:
        try:
            values = np.asarray(list(data), dtype=np.float64)
        except (TypeError, ValueError):
            raise ParameterError(
                "data", where, "a table with a 'pI' column or numbers", f"<{type(data).__name__}>"
            ) from None
    return values


def gel_plot(
    frame: pd.DataFrame,
    *,
    mass: str | None = None,
    highlight: Iterable[str] = (),
    label: str = "id",
    title: str | None = None,
    ax: Axes | None = None,
    path: str | os.PathLike[str] | None = None,
) -> Figure:
    """pI versus mass of a batch, laid out like a two-dimensional gel.

    pI runs along x (acidic left, basic right); mass (kDa) along a logarithmic y axis with large
    molecules at the top, as a second-dimension SDS gel shows them. Rows without a pI or a mass
    are left out (their number is shown). ``highlight`` names rows (by the ``label`` column) to
    draw in a second colour and label. The scatter of all shown rows has gid ``gel``.
    """
    from matplotlib.ticker import FuncFormatter, LogLocator, NullFormatter

    col = _mass_column(frame, mass, "gel_plot")
    pi = _pi_values(frame, "gel_plot")
    kda = np.asarray(frame[col], dtype=np.float64) / 1000.0
    ok = np.isfinite(pi) & np.isfinite(kda) & (kda > 0)
    names = (
        np.asarray(frame[label], dtype=object)
        if label in frame.columns
        else np.full(len(frame), "", dtype=object)
    )
    marked = set(highlight)
    hit = ok & np.array([str(n) in marked for n in names], dtype=bool)
    n_shown = int(ok.sum())
    with _style():
        fig, axes = _axes(ax, (7.2, 5.2))
        axes.set_facecolor("#f6f4ef")
        size = 18.0 if n_shown <= 200 else (8.0 if n_shown <= 5000 else 3.0)
        alpha = 0.85 if n_shown <= 200 else 0.45
        axes.scatter(
            pi[ok],
            kda[ok],
            s=size,
            c=PALETTE[0],
            alpha=alpha,
            linewidths=0,
            zorder=3,
            gid="gel",
            label=f"{n_shown:,} molecules",
        )
        if hit.any():
            axes.scatter(
                pi[hit],
                kda[hit],
                s=70,
                facecolors="none",
                edgecolors=PALETTE[1],
                linewidths=2.0,
                zorder=5,
                gid="gel:highlight",
                label="highlighted",
            )
            for x, y, n in zip(pi[hit], kda[hit], names[hit]):
                axes.annotate(
                    _short(str(n), 24),
                    (x, y),
                    xytext=(6, 4),
                    textcoords="offset points",
                    fontsize=8.5,
                    color=INK,
                    zorder=6,
                )
        lo = min(3.0, float(np.floor(pi[ok].min()))) if n_shown else 3.0
        hi = max(11.0, float(np.ceil(pi[ok].max()))) if n_shown else 11.0
        axes.set_xlim(lo, hi)
        axes.set_yscale("log")
        if n_shown:
            ymin, ymax = float(kda[ok].min()), float(kda[ok].max())
            axes.set_ylim(ymin / 1.4, ymax * 1.4)
        axes.invert_yaxis()  # large on top, as on a gel
        axes.yaxis.set_major_locator(LogLocator(base=10, subs=(1.0, 2.0, 5.0)))
        axes.yaxis.set_major_formatter(FuncFormatter(lambda v, _: f"{v:g}"))
        axes.yaxis.set_minor_formatter(NullFormatter())
        axes.set_xlabel("isoelectric point (pH)")
        axes.set_ylabel("mass (kDa)")
        axes.set_title(title or "Isoelectric point versus mass", pad=16)
        missing = len(frame) - n_shown
        note = f"{n_shown:,} shown" + (
            f"; {missing:,} without pI or mass not shown" if missing else ""
        )
        _subtitle(axes, note)
        axes.legend(loc="lower right", fontsize=8.5)
    return _finish(fig, path)


def ief_fractions(data: Any, boundaries: npt.ArrayLike) -> pd.DataFrame:
    """Counts of pI values in isoelectric-focusing fractions.

    ``boundaries`` b0 < b1 < ... < bn (pH) make n fractions [b_i, b_(i+1)); the last includes
    b_n. Values below b0 or above bn are counted in ``below`` / ``above`` rows when present.
    Columns: ``fraction`` (1-based number, or ``below``/``above``), ``from_ph``, ``to_ph``,
    ``count``.

    >>> ief_fractions([4.2, 5.5, 5.6, 9.1], [4, 5, 6, 7])["count"].tolist()
    [1, 2, 0, 1]
    """
    import pandas as pd

    b = check_fractions(boundaries, "ief_fractions")
    values = _pi_values(data, "ief_fractions")
    values = values[np.isfinite(values)]
    counts, _ = np.histogram(values, bins=b)
    rows: list[dict[str, Any]] = []
    below = int((values < b[0]).sum())
    above = int((values > b[-1]).sum())
    if below:
        rows.append(
            {"fraction": "below", "from_ph": -math.inf, "to_ph": float(b[0]), "count": below}
        )
    rows += [
        {"fraction": str(i + 1), "from_ph": float(b[i]), "to_ph": float(b[i + 1]), "count": int(c)}
        for i, c in enumerate(counts)
    ]
    if above:
        rows.append(
            {"fraction": "above", "from_ph": float(b[-1]), "to_ph": math.inf, "count": above}
        )
    return pd.DataFrame(rows, columns=["fraction", "from_ph", "to_ph", "count"])


def check_fractions(boundaries: npt.ArrayLike, where: str) -> npt.NDArray[np.float64]:
    """Validated IEF fraction boundaries: at least two ascending pH values in [0, 14]."""
    allowed = "at least two pH values in [0, 14], strictly ascending"
    try:
        b = np.asarray(
            [float(x) for x in np.atleast_1d(np.asarray(boundaries, dtype=object))],
            dtype=np.float64,
        )
    except (TypeError, ValueError):
        raise ParameterError("fractions", where, allowed, boundaries) from None
    if (
        b.size < 2
        or not np.all(np.isfinite(b))
        or np.any(np.diff(b) <= 0)
        or b[0] < 0
        or b[-1] > 14
    ):
        raise ParameterError("fractions", where, allowed, [float(x) for x in b])
    return b


def pi_histogram(
    data: Any,
    *,
    fractions: Sequence[float] | None = None,
    bin_width: float = 0.25,
    title: str | None = None,
    ax: Axes | None = None,
    path: str | os.PathLike[str] | None = None,
) -> Figure:
    """Histogram of isoelectric points, with isoelectric-focusing fractions when given.

    ``data`` is a batch table (``pI`` column) or a sequence of pI values; ``bin_width`` in pH
    units. ``fractions`` are the boundaries (pH) of IEF fractions: alternate fractions are
    shaded, every boundary is a vertical line (gid ``fraction``), and each fraction's count is
    written above it. The bars have gid ``histogram``.
    """
    from matplotlib.ticker import MaxNLocator

    if not (isinstance(bin_width, (int, float)) and 0.01 <= bin_width <= 5):
        raise ParameterError("bin_width", "pi_histogram", "pH units in [0.01, 5]", bin_width)
    values = _pi_values(data, "pi_histogram")
    finite = values[np.isfinite(values)]
    b = check_fractions(fractions, "pi_histogram") if fractions is not None else None
    lo = (
        math.floor(
            min(finite.min() if finite.size else 3.0, b[0] if b is not None else 99) / bin_width
        )
        * bin_width
    )
    hi = (
        math.ceil(
            max(finite.max() if finite.size else 11.0, b[-1] if b is not None else -99) / bin_width
        )
        * bin_width
    )
    edges = np.arange(lo, hi + bin_width * 0.5, bin_width)
    if edges.size < 2:
        edges = np.array([lo, lo + bin_width])
    with _style():
        fig, axes = _axes(ax, (7.2, 4.2))
        if b is not None:
            for i in range(b.size - 1):
                if i % 2 == 0:
                    axes.axvspan(b[i], b[i + 1], color=PALETTE[2], alpha=0.12, lw=0, zorder=0)
            for edge in b:
                axes.axvline(edge, color=MUTED, lw=0.9, ls=(0, (3, 2)), zorder=1, gid="fraction")
        counts, _ = np.histogram(finite, bins=edges)
        bars = axes.bar(
            edges[:-1],
            counts,
            width=np.diff(edges),
            align="edge",
            color=PALETTE[0],
            edgecolor="white",
            linewidth=0.5,
            zorder=3,
            label=f"{finite.size:,} molecules",
        )
        for bar in bars:
            bar.set_gid("histogram")
        axes.yaxis.set_major_locator(MaxNLocator(integer=True))
        top = float(counts.max()) if counts.size else 1.0
        axes.set_ylim(0, max(top, 1.0) * (1.22 if b is not None else 1.08))
        if b is not None:
            table = ief_fractions(finite, b)
            for row in table.itertuples():
                if row.fraction in ("below", "above"):
                    continue
                axes.text(
                    (row.from_ph + row.to_ph) / 2,
                    1.0,
                    f"{row.count:,}",
                    ha="center",
                    va="top",
                    transform=axes.get_xaxis_transform(),
                    fontsize=8,
                    color=INK,
                    gid="fraction_count",
                )
        axes.set_xlim(float(edges[0]), float(edges[-1]))
        axes.set_xlabel("isoelectric point (pH)")
        axes.set_ylabel("molecules per bin")
        axes.set_title(title or "Distribution of isoelectric points", pad=16)
        note = f"bins of {bin_width:g} pH"
        if b is not None:
            note += f"; {b.size - 1} IEF fractions (count above each)"
        dropped = values.size - finite.size
        if dropped:
            note += f"; {dropped:,} without a pI not shown"
        _subtitle(axes, note)
    return _finish(fig, path)
