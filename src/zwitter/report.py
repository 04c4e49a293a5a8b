"""Single-file HTML reports: a molecule, an ion-exchange plan, or a batch summary.

A report is one HTML file with everything inside it: the figures as base64 PNG (or SVG) data,
the tables, the conditions and pKa scale used, the source of every pKa value and the cautions.
It needs no network, no script and no other file, so it can be mailed, archived or opened
years later. Plain HTML and a small embedded style sheet; it prints on A4/Letter.

>>> import zwitter
>>> from zwitter.report import molecule_report
>>> html = molecule_report(zwitter.from_sequence("GLSDGEWQQVLNVWGK", scale="lehninger"))
>>> "3.97" in html and html.startswith("<!doctype html>")
True
"""

from __future__ import annotations

import base64
import datetime as _dt
import html
import io
import math
import os
import tempfile
import warnings
from collections.abc import Iterable, Mapping, Sequence
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np

from .errors import ParameterError, ZwitterError, ZwitterWarning

if TYPE_CHECKING:
    import pandas as pd
    from matplotlib.figure import Figure

    from .molecule import Molecule
    from .purification import Plan

__all__ = [
    "CAUTION",
    "molecule_report",
    "plan_report",
    "batch_report",
    "render_report",
    "write_report",
    "write_html",
]

CAUTION = (
    "These are estimates from published pKa data and simple models: verify experimentally "
    "before acting on them, and follow your lab's safety rules and local regulations."
)
LAB_CAUTION = (
    "Confirm a purification plan with a small pilot run. Charge patches, not only the net charge, "
    "decide how many proteins bind; handle acids, bases and buffer substances (some are toxic) "
    "as your lab's safety rules and local regulations require."
)
FIGURE_FORMATS = ("png", "svg")
#: pH values of the compact charge table of a molecule report.
CHARGE_TABLE_PH = (2.0, 3.0, 4.0, 5.0, 6.0, 7.0, 7.4, 8.0, 9.0, 10.0, 11.0, 12.0)
#: Titratable groups above which a species plot of charge states is no longer informative.
SPECIES_PLOT_MAX_GROUPS = 40

_CSS = """
:root { --ink:#1e1e24; --muted:#5d5d69; --accent:#3b2f86; --warm:#b85a08; --line:#e2e2ea;
        --tint:#f4f3fa; --page:#eeeef3; }
* { box-sizing: border-box; }
html { -webkit-text-size-adjust: 100%; }
body { margin: 0; background: var(--page); color: var(--ink);
       font: 15px/1.5 system-ui, -apple-system, "Segoe UI", Roboto, "Noto Sans", "DejaVu Sans",
             sans-serif; }
main { max-width: 1040px; margin: 0 auto; padding: 28px 36px 36px; background: #fff;
       min-height: 100vh; }
header { border-bottom: 3px solid var(--accent); padding-bottom: 10px; margin-bottom: 18px; }
.kicker { margin: 0; font-size: 12px; letter-spacing: .08em; text-transform: uppercase;
          color: var(--muted); }
h1 { margin: 4px 0 4px; font-size: 26px; line-height: 1.25; overflow-wrap: anywhere; }
h2 { margin: 30px 0 10px; font-size: 19px; color: var(--accent); }
h3 { margin: 18px 0 6px; font-size: 15px; }
p { margin: 6px 0 10px; }
.meta { margin: 0; font-size: 13px; color: var(--muted); }
.keys { display: grid; grid-template-columns: repeat(auto-fill, minmax(190px, 1fr)); gap: 12px;
        margin: 16px 0 8px; padding: 0; }
.key { margin: 0; background: var(--tint); border-left: 4px solid var(--accent);
       border-radius: 4px; padding: 9px 14px; }
.key dt { font-size: 12px; color: var(--muted); text-transform: uppercase; letter-spacing: .05em; }
.key dd { margin: 2px 0 0; font-size: 22px; font-weight: 650; font-variant-numeric: tabular-nums;
          overflow-wrap: anywhere; }
.key dd.mono { font-size: 15px; font-weight: 600; }
.key dd small { font-size: 13px; font-weight: 400; color: var(--muted); }
.caution { margin: 14px 0; padding: 11px 16px; background: #fff5e8;
           border-left: 4px solid var(--warm); border-radius: 4px; }
.caution strong { color: var(--warm); }
figure { margin: 12px 0 22px; }
figure img { display: block; width: 100%; max-width: 1000px; height: auto;
             border: 1px solid var(--line); border-radius: 3px; background: #fff; }
figcaption { margin-top: 6px; font-size: 13px; color: var(--muted); }
.scroll { overflow-x: auto; margin: 6px 0 16px; }
table { border-collapse: collapse; max-width: 100%; font-size: 13.5px; }
table.wide { width: 100%; }
caption { caption-side: top; text-align: left; font-size: 13px; color: var(--muted);
          padding: 0 0 4px; }
th, td { padding: 5px 9px; border-bottom: 1px solid var(--line); text-align: left;
         vertical-align: top; }
thead th { background: var(--tint); font-weight: 600; white-space: nowrap; }
tbody tr:nth-child(even) { background: #fafafc; }
.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
.mono, code { font-family: ui-monospace, "DejaVu Sans Mono", Menlo, Consolas, monospace;
              font-size: 12.5px; overflow-wrap: anywhere; }
.yes { color: #1d6b3a; font-weight: 600; }
ul.notes { margin: 6px 0 12px; padding-left: 22px; }
ul.notes li { margin: 3px 0; }
dl.facts { display: grid; grid-template-columns: max-content 1fr; gap: 4px 18px;
           margin: 6px 0 14px; }
dl.facts dt { color: var(--muted); }
dl.facts dd { margin: 0; overflow-wrap: anywhere; }
footer { margin-top: 32px; padding-top: 10px; border-top: 1px solid var(--line); font-size: 12px;
         color: var(--muted); }
@media (max-width: 640px) { main { padding: 18px 14px; } h1 { font-size: 21px; } }
@media print { body { background: #fff; } main { max-width: none; padding: 0; }
               figure, table, .key { break-inside: avoid; } }
"""


# -- small HTML helpers ---------------------------------------------------------------------------
def _e(value: Any) -> str:
    return html.escape(str(value), quote=True)


def _number(value: Any, digits: int = 2, signed: bool = False) -> str:
    if value is None:
        return "—"
    if isinstance(value, (bool, np.bool_)):
        return "yes" if value else "no"
    if isinstance(value, (int, np.integer)):
        return f"{int(value):+d}" if signed else f"{int(value):d}"
    try:
        x = float(value)
    except (TypeError, ValueError):
        return str(value)
    if math.isnan(x):
        return "—"
    if math.isinf(x):
        return "∞" if x > 0 else "−∞"
    if abs(x) < 0.5 * 10.0**-digits:
        return "0" if digits == 0 else f"{0.0:.{digits}f}"  # no "-0.00" or "+0"
    text = f"{x:+.{digits}f}" if signed else f"{x:.{digits}f}"
    return text.replace("-", "−")  # a true minus sign reads better in tables


def _is_number(value: Any) -> bool:
    return isinstance(value, (int, float, np.integer, np.floating)) and not isinstance(
        value, (bool, np.bool_)
    )


Column = tuple[str, str, Any]  # (key, header, formatter: None | int digits | callable)


def _table(
    rows: Sequence[Mapping[str, Any]],
    columns: Sequence[Column],
    *,
    caption: str = "",
    table_id: str = "",
    wide: bool = False,
) -> str:
    """An HTML table; numeric cells right-aligned, text escaped."""
    num = ' class="num"'
    head = "".join(
        f'<th scope="col"{num if _numeric_column(rows, key) else ""}>{_e(title)}</th>'
        for key, title, _ in columns
    )
    body = []
    for row in rows:
        cells = []
        for key, _, fmt in columns:
            value = row.get(key)
            if callable(fmt):
                text, numeric = fmt(value), _is_number(value)
            elif _is_number(value):
                text, numeric = _number(value, 2 if fmt is None else int(fmt)), True
            else:
                text, numeric = ("—" if value is None or value == "" else str(value)), False
            cls = ' class="num"' if numeric else ""
            cells.append(f"<td{cls}>{_e(text)}</td>")
        body.append("<tr>" + "".join(cells) + "</tr>")
    cap = f"<caption>{_e(caption)}</caption>" if caption else ""
    ident = (f' id="{_e(table_id)}"' if table_id else "") + (' class="wide"' if wide else "")
    return (
        f'<div class="scroll"><table{ident}>{cap}<thead><tr>{head}</tr></thead>'
        f"<tbody>{''.join(body)}</tbody></table></div>"
    )


def _numeric_column(rows: Sequence[Mapping[str, Any]], key: str) -> bool:
    return any(_is_number(r.get(key)) for r in rows)


def _records(frame: pd.DataFrame) -> list[dict[str, Any]]:
    out = []
    for rec in frame.to_dict(orient="records"):
        out.append({k: (None if _missing(v) else v) for k, v in rec.items()})
    return out


def _missing(value: Any) -> bool:
    try:
        import pandas as pd

        return bool(pd.isna(value)) if not isinstance(value, (list, tuple, np.ndarray)) else False
    except (TypeError, ValueError):
        return False


_MONO_KEYS = frozenset({"dominant_form"})


def _keys(items: Iterable[tuple[str, str, str, str]]) -> str:
    """Key-number cards: (data key, label, value, small print)."""
    cards = []
    for key, label, value, small in items:
        extra = f" <small>{_e(small)}</small>" if small else ""
        cls = ' class="mono"' if key in _MONO_KEYS else ""
        cards.append(
            f'<div class="key" data-key="{_e(key)}"><dt>{_e(label)}</dt>'
            f"<dd{cls}>{_e(value)}{extra}</dd></div>"
        )
    return f'<dl class="keys">{"".join(cards)}</dl>'


def _facts(items: Iterable[tuple[str, str]]) -> str:
    return (
        '<dl class="facts">'
        + "".join(f"<dt>{_e(k)}</dt><dd>{_e(v)}</dd>" for k, v in items)
        + "</dl>"
    )


def _notes(items: Iterable[str]) -> str:
    unique = list(dict.fromkeys(t for t in items if t))
    if not unique:
        return ""
    return '<ul class="notes">' + "".join(f"<li>{_e(t)}</li>" for t in unique) + "</ul>"


def _figure(fig: Figure, name: str, alt: str, caption: str, fmt: str) -> str:
    """A figure as an <img> with the image inline (base64 data URI)."""
    from .plots import _style

    buf = io.BytesIO()
    dpi = 144.0
    with _style():
        if fmt == "svg":
            fig.savefig(buf, format="svg", metadata={"Date": None}, facecolor="white")
            mime = "image/svg+xml"
        else:
            fig.savefig(buf, format="png", dpi=dpi, facecolor="white")
            mime = "image/png"
    width_in, height_in = fig.get_size_inches()
    # CSS pixels are 1/96 inch: the image shows at its natural size on a standard screen.
    w, h = int(round(width_in * 96)), int(round(height_in * 96))
    data = base64.b64encode(buf.getvalue()).decode("ascii")
    return (
        f'<figure class="plot" data-figure="{_e(name)}">'
        f'<img src="data:{mime};base64,{data}" alt="{_e(alt)}" width="{w}" height="{h}">'
        f"<figcaption>{_e(caption)}</figcaption></figure>"
    )


def _version() -> str:
    try:
        from importlib.metadata import PackageNotFoundError, version

        return version("zwitter")
    except PackageNotFoundError:  # pragma: no cover - running from a source tree
        return "0.0.0"


def _clip(text: str, limit: int) -> str:
    return text if len(text) <= limit else text[: limit - 1] + "…"


def _page(kind: str, title: str, subtitle: str, body: Sequence[str]) -> str:
    stamp = _dt.datetime.now().astimezone().strftime("%Y-%m-%d %H:%M %Z").strip()
    return (
        "<!doctype html>\n"
        '<html lang="en">\n<head>\n<meta charset="utf-8">\n'
        '<meta name="viewport" content="width=device-width, initial-scale=1">\n'
        f'<meta name="generator" content="zwitter {_e(_version())}">\n'
        f"<title>{_e(_clip(title, 70))} — zwitter {_e(kind)} report</title>\n"
        f"<style>{_CSS}</style>\n</head>\n<body>\n<main>\n"
        f'<header><p class="kicker">zwitter · {_e(kind)} report</p><h1>{_e(_clip(title, 90))}</h1>'
        f'<p class="meta">{_e(subtitle)}</p></header>\n'
        + "\n".join(part for part in body if part)
        + f"\n<footer>Made with zwitter {_e(_version())} on {_e(stamp)}. {_e(CAUTION)}</footer>\n"
        "</main>\n</body>\n</html>\n"
    )


def _caution_box(extra: str = "") -> str:
    text = f"<strong>Caution.</strong> {_e(CAUTION)}"
    if extra:
        text += f" {_e(extra)}"
    return f'<section class="caution" data-section="caution"><p>{text}</p></section>'


def _quiet(fn: Any) -> tuple[Any, list[str]]:
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", ZwitterWarning)
        value = fn()
    return value, [str(w.message) for w in caught if issubclass(w.category, ZwitterWarning)]


def _check_format(fmt: str, where: str) -> str:
    if fmt not in FIGURE_FORMATS:
        raise ParameterError("figure_format", where, "'png' or 'svg'", fmt)
    return fmt


def _check_ph_list(ph: float | Sequence[float], where: str) -> list[float]:
    from .equilibrium import check_ph

    values = [ph] if isinstance(ph, (int, float)) else list(ph)
    if not values:
        raise ParameterError("ph", where, "at least one pH value", values)
    check_ph(values, where)
    return [float(p) for p in values]


# -- pieces about molecules ------------------------------------------------------------------
def _scale_facts(key: str) -> list[tuple[str, str]]:
    if not key:
        return []
    from .scales import get_scale

    try:
        sc = get_scale(key)
    except (ZwitterError, OSError):
        return [("pKa scale", key)]
    out = [("pKa scale", f"{sc.key}" + (f" — {sc.title}" if sc.title else ""))]
    if sc.citation:
        out.append(("scale source", sc.citation))
    if sc.temperature is not None:
        out.append(("scale measured at", f"{sc.temperature:g} °C"))
    return out


def _condition_facts(conditions: Any) -> list[tuple[str, str]]:
    if conditions is None:
        return [
            ("temperature", "25 °C (reference of the pKa tables)"),
            ("ionic strength", "0 M (infinite dilution, reference)"),
        ]
    out = [
        ("temperature", f"{conditions.temperature:g} °C"),
        ("ionic strength", f"{conditions.ionic_strength:g} M"),
    ]
    scale = getattr(conditions, "ph_scale", "")
    if scale:
        out.append(
            (
                "pH means",
                "−log10 a(H+), what a calibrated electrode reads"
                if scale == "activity"
                else "−log10 [H+] (concentration)",
            )
        )
    if getattr(conditions, "electrostatics", False):
        out.append(("electrostatics", f"{conditions.electrostatics} (smeared-charge work term)"))
    return out


def _sources_table(site_rows: Sequence[Mapping[str, Any]]) -> str:
    used: dict[str, list[str]] = {}
    for r in site_rows:
        src = str(r.get("source") or "not stated")
        used.setdefault(src, []).append(str(r.get("site", "")))
    rows = [{"source": s, "sites": ", ".join(dict.fromkeys(v))} for s, v in used.items()]
    return _table(
        rows,
        [("source", "source of the pKa values", None), ("sites", "used for", None)],
        table_id="sources",
        wide=True,
    )


def _site_rows(molecule: Molecule, ph: float) -> list[dict[str, Any]]:
    table = molecule.site_table(ph)
    return _records(table)


_SITE_COLUMNS: list[Column] = [
    ("site", "site", None),
    ("count", "count", lambda v: _number(v, 2).rstrip("0").rstrip(".")),
    ("pka", "pKa", None),
    ("fraction_protonated", "fraction protonated", 3),
    ("charge", "charge", lambda v: _number(v, 3, signed=True)),
    (
        "members",
        "groups",
        lambda v: "—" if not v else (v if len(str(v)) <= 80 else str(v)[:77] + "…"),
    ),
    ("source", "source", None),
]


def _charge_strip(molecule: Molecule) -> str:
    values = np.asarray(molecule.charge(np.asarray(CHARGE_TABLE_PH)), dtype=np.float64)
    head = "".join(f'<th scope="col" class="num">{_e(f"{p:g}")}</th>' for p in CHARGE_TABLE_PH)
    cells = "".join(f'<td class="num">{_e(_number(z, 2, signed=True))}</td>' for z in values)
    return (
        '<div class="scroll"><table id="charge-table"><thead><tr><th scope="row">pH</th>'
        f'{head}</tr></thead><tbody><tr><th scope="row">net charge (e)</th>{cells}</tr>'
        "</tbody></table></div>"
    )


def _species_section(molecule: Molecule, ph: float) -> str:
    table = molecule.species(ph)
    top = table.sort_values("population", ascending=False, kind="stable").head(8)
    cols: list[Column] = []
    if "smiles" in top.columns:
        cols.append(("smiles", "form (SMILES)", None))
    cols.append(("charge", "charge", lambda v: _number(v, 0, signed=True)))
    if "protons_bound" in top.columns:
        cols.append(("protons_bound", "protons bound", None))
    cols.append(("population", "population", 4))
    label = "forms" if "smiles" in top.columns else "charge states"
    return f"<h3>Most populated {label} at pH {ph:g}</h3>" + _table(
        _records(top), cols, table_id="species"
    )


def _titratable_groups(molecule: Molecule) -> float:
    s = molecule.sites
    return float(np.sum(np.asarray(s.counts) * (np.asarray(s.nsteps) > 0)))


def _molecule_sections(
    molecule: Molecule, ph: list[float], fmt: str, *, figures: bool = True
) -> tuple[list[str], list[str], dict[str, Any]]:
    """(body parts, notes, facts) shared by the molecule and plan reports."""
    from . import plots

    notes: list[str] = list(molecule.notes)
    pi, messages = _quiet(molecule.isoelectric_point)
    notes += messages
    charges = [float(molecule.charge(p)) for p in ph]
    dom, more = _quiet(lambda: molecule.dominant(ph[0]))
    notes += more
    pkas, more = _quiet(molecule.pkas)
    notes += more
    groups = _titratable_groups(molecule)

    cards = [
        (
            "pI",
            "isoelectric point",
            "none" if pi is None else f"{pi:.2f}",
            "pH" if pi is not None else "",
        )
    ]
    for p, z in zip(ph, charges):
        cards.append((f"charge@{p:g}", f"net charge at pH {p:g}", _number(z, 2, signed=True), "e"))
    dom_charge = getattr(dom, "charge", None)
    if dom_charge is not None:
        cards.append(
            (
                "dominant",
                f"dominant charge state, pH {ph[0]:g}",
                _number(float(dom_charge), 0, signed=True),
                f"{100 * float(getattr(dom, 'population', math.nan)):.0f}% of molecules",
            )
        )
    smiles = getattr(dom, "smiles", None)
    if smiles:
        cards.append(("dominant_form", f"dominant form, pH {ph[0]:g}", str(smiles), ""))
    cards.append(("groups", "titratable groups", f"{groups:g}", ""))
    mass = _mass_of(molecule)
    if mass is not None:
        cards.append(("mass", "average mass", f"{mass / 1000:.2f}", "kDa"))
    parts = [_keys(cards)]
    if pi is None:
        why = "; ".join(messages) or "the charge never crosses zero"
        parts.append(f"<p>No isoelectric point: {_e(why)}.</p>")

    if figures:
        fig = plots.charge_plot(molecule)
        caption = "Net charge versus pH" + (
            f"; the diamond marks the isoelectric point, pH {pi:.2f}." if pi is not None else "."
        )
        parts.append("<h2>Charge versus pH</h2>")
        parts.append(
            _figure(fig, "charge", f"Net charge of {molecule.name} versus pH", caption, fmt)
        )
        parts.append(_charge_strip(molecule))
        try:
            tfig = plots.titration_plot(molecule)
        except ParameterError:
            tfig = None
        if tfig is not None:
            parts.append("<h2>Titration of each group type</h2>")
            parts.append(
                _figure(
                    tfig,
                    "titration",
                    f"Fraction protonated of each group type of {molecule.name}",
                    "Fraction of each group type that carries its proton; the curve passes 0.5 at "
                    "its pKa (count-weighted mean for types with several pKa values).",
                    fmt,
                )
            )
        if groups and (groups <= SPECIES_PLOT_MAX_GROUPS or molecule.kind == "smiles"):
            sfig, more = _quiet(lambda: plots.species_plot(molecule))
            notes += more
            what = "forms" if molecule.kind == "smiles" else "charge states"
            parts.append(f"<h2>Protonation {what}</h2>")
            parts.append(
                _figure(
                    sfig,
                    "species",
                    f"Populations of the protonation {what} of {molecule.name}",
                    f"Fraction of molecules in each {what[:-1]} versus pH; minor ones are summed.",
                    fmt,
                )
            )

    site_rows, more = _quiet(lambda: _site_rows(molecule, ph[0]))
    notes += more
    parts.append(f"<h2>Sites at pH {ph[0]:g}</h2>")
    parts.append(_table(site_rows, _SITE_COLUMNS, table_id="sites", wide=True))
    if groups:
        species, more = _quiet(lambda: _species_section(molecule, ph[0]))
        notes += more
        parts.append(species)
    if pkas:
        shown = ", ".join(f"{p:.2f}" for p in pkas[:40])
        if len(pkas) > 40:
            shown += f", … ({len(pkas)} in all)"
        parts.append(f'<h3>Macroscopic pKa values</h3><p class="mono" id="pkas">{_e(shown)}</p>')
    bonded = molecule.info.get("bonded_cysteines")
    if bonded:
        notes.append(f"cysteines taken as disulfide-bonded (no thiol site): {', '.join(bonded)}")
    return parts, notes, {"pi": pi, "site_rows": site_rows}


def _mass_of(molecule: Molecule) -> float | None:
    try:
        from .conditions import molecule_mass

        value = float(molecule_mass(molecule))
    except (ZwitterError, ValueError, TypeError, KeyError, AttributeError, ImportError):
        return None
    return value if math.isfinite(value) and value > 0 else None


def _corrections_table(molecule: Molecule) -> str:
    cond = molecule.conditions
    if cond is None or getattr(cond, "is_reference", True) or not hasattr(cond, "corrections"):
        return ""
    try:
        frame = molecule.condition_corrections()
    except (ZwitterError, ValueError, KeyError):
        return ""
    if frame is None:
        return ""
    cols: list[Column] = [
        ("site", "site", None),
        ("step", "step", None),
        ("pka_reference", "pKa at 25 °C, I = 0", 2),
        ("shift_temperature", "temperature shift", 3),
        ("shift_ionic_strength", "ionic-strength shift", 3),
        ("pka", "pKa used", 2),
        ("enthalpy_source", "ionization enthalpy source", None),
    ]
    note = ""
    if getattr(molecule, "salt_on_whole_forms", False):
        note = (
            "<p>The ionic strength acts on whole forms, not on these site values: each form "
            "(microstate) takes the Davies activity coefficient of its net charge, and the "
            "macroscopic pKa values and populations above include it.</p>"
        )
    return (
        "<h3>pKa corrections for these conditions</h3>"
        + note
        + _table(_records(frame), cols, table_id="corrections", wide=True)
    )


def _data_section(molecule: Molecule, extra: Sequence[tuple[str, str]] = ()) -> str:
    facts: list[tuple[str, str]] = [("input", molecule.name), ("read as", molecule.kind or "—")]
    proforma = molecule.info.get("proforma")
    if proforma and proforma != molecule.name:
        facts.append(("canonical ProForma", str(proforma)))
    if molecule.info.get("cys"):
        facts.append(
            (
                "cysteines",
                "all disulfide-bonded" if molecule.info["cys"] == "bonded" else "free thiols",
            )
        )
    facts += _scale_facts(molecule.scale)
    facts += _condition_facts(molecule.conditions)
    facts += list(extra)
    return "<h2>Conditions and data</h2>" + _facts(facts) + _corrections_table(molecule)


# -- the three reports ----------------------------------------------------------------------
def molecule_report(
    molecule: Molecule,
    *,
    ph: float | Sequence[float] = (7.4,),
    title: str | None = None,
    figure_format: str = "png",
) -> str:
    """HTML report of one molecule: key numbers, figures, sites, sources, conditions, cautions.

    Parameters
    ----------
    molecule
        Any :class:`~zwitter.Molecule` (sequence, ProForma, SMILES).
    ph
        pH value(s) for the key numbers; the first is used for the site and species tables.
    title
        Page title (default: the molecule's name).
    figure_format
        ``"png"`` (default) or ``"svg"``: how the figures are embedded.
    """
    from .molecule import Molecule

    if not isinstance(molecule, Molecule):
        raise ParameterError(
            "molecule", "molecule_report", "a Molecule", f"<{type(molecule).__name__}>"
        )
    fmt = _check_format(figure_format, "molecule_report")
    phs = _check_ph_list(ph, "molecule_report")
    parts, notes, info = _molecule_sections(molecule, phs, fmt)
    body = [parts[0], _caution_box(), *parts[1:]]
    body.append("<h2>Sources of the pKa values</h2>" + _sources_table(info["site_rows"]))
    body.append(_data_section(molecule))
    body.append(_closing(notes))
    subtitle = f"{molecule.kind or 'molecule'}; " + _conditions_line(molecule)
    return _page("molecule", title or molecule.name or "molecule", subtitle, body)


def _conditions_line(molecule: Molecule) -> str:
    from .plots import conditions_text

    return conditions_text(molecule)


def _closing(notes: Sequence[str], extra: str = "") -> str:
    text = f"<p>{_e(CAUTION)}</p>"
    if extra:
        text += f"<p>{_e(extra)}</p>"
    listed = _notes(notes)
    if listed:
        text += "<h3>Notes on this input</h3>" + listed
    return f'<h2>Cautions</h2><section data-section="cautions">{text}</section>'


def plan_report(plan: Plan, *, title: str | None = None, figure_format: str = "png") -> str:
    """HTML report of an ion-exchange plan (:func:`zwitter.purification.plan_ion_exchange`)."""
    from . import plots

    if not all(hasattr(plan, a) for a in ("target", "usable", "curves", "names")):
        raise ParameterError(
            "plan", "plan_report", "a purification Plan", f"<{type(plan).__name__}>"
        )
    fmt = _check_format(figure_format, "plan_report")
    target = plan.target
    working = plan.working_ph if math.isfinite(plan.working_ph) else None
    notes: list[str] = list(plan.notes)
    cards = [
        (
            "pI",
            "target isoelectric point",
            "none" if plan.pi is None else f"{plan.pi:.2f}",
            "pH" if plan.pi is not None else "",
        )
    ]
    if plan.exchanger:
        fixed = {"cation": "negative", "anion": "positive"}.get(plan.exchanger, "")
        cards.append(
            ("exchanger", "recommended exchanger", plan.exchanger, f"{fixed} fixed groups")
        )
        cards.append(("working_ph", "working pH", f"{plan.working_ph:.2f}", ""))
        cards.append(
            (
                "charge_working",
                "target charge there",
                _number(float(target.charge(plan.working_ph)), 2, signed=True),
                "e",
            )
        )
        rng = plan.ph_range
        cards.append(("range", "usable pH range", f"{rng.lo:.2f}–{rng.hi:.2f}", "pH"))
    else:
        cards.append(("exchanger", "recommended exchanger", "none", "see notes"))
    if plan.contaminants and math.isfinite(plan.separation_gap):
        cards.append(
            (
                "gap",
                "best charge gap",
                f"{plan.separation_gap:.2f}",
                f"e at pH {plan.separation_ph:.2f}",
            )
        )
    body = [_keys(cards), _caution_box(LAB_CAUTION)]
    if not plan.exchanger:
        body.append(f"<p><strong>No usable window.</strong> {_e(' '.join(plan.notes))}</p>")

    fig = plots.plan_plot(plan)
    body.append("<h2>Charge curves and binding windows</h2>")
    body.append(
        _figure(
            fig,
            "plan",
            f"Charge curves of {plan.names[0]} and contaminants with binding windows",
            f"Net charge versus pH; shaded: where each exchanger binds the target (|charge| ≥ "
            f"{plan.threshold:.3g} and {plan.margin:g} pH from its pI) within the stability "
            f"window pH {plan.stability[0]:g}–{plan.stability[1]:g} (dashed); dotted: the binding "
            "threshold.",
            fmt,
        )
    )

    windows = _records(plan.to_frame())
    body.append("<h2>Exchangers</h2>")
    body.append(
        _table(
            windows,
            [
                ("exchanger", "exchanger", None),
                ("fixed_charge", "fixed groups", None),
                ("binds_from_ph", "binds from pH", 2),
                ("binds_to_ph", "to pH", 2),
                ("usable_from_ph", "usable from pH", 2),
                ("usable_to_ph", "to pH", 2),
                ("recommended", "recommended", lambda v: "yes" if v else "no"),
                ("charge_at_working_ph", "target charge", lambda v: _number(v, 2, signed=True)),
            ],
            table_id="exchangers",
        )
    )

    if not plan.buffers.empty:
        rows = _records(plan.buffers)
        for r in rows:
            r["source"] = _buffer_source(str(r.get("buffer", "")), r.get("step"))
        body.append(f"<h2>Compatible buffers at pH {plan.working_ph:.2f}</h2>")
        body.append(
            _table(
                rows[:10],
                [
                    ("buffer", "buffer", None),
                    ("step", "step", None),
                    ("pka", "pKa here", 2),
                    ("distance", "|pKa − pH|", 2),
                    ("forms_present", "charges of its forms", None),
                    ("temperature_dependence", "dpKa/dT", None),
                    ("source", "pKa source", None),
                ],
                table_id="buffers",
                wide=True,
            )
        )

    mols = [plan.target, *plan.contaminants]
    at = working if working is not None else 7.0
    summary = []
    for name, m in zip(plan.names, mols):
        value, more = _quiet(m.isoelectric_point)
        notes += [f"{name}: {t}" for t in more]
        summary.append({"molecule": name, "pI": value, "charge": float(m.charge(at))})
    if plan.contaminants and plan.exchanger:
        order = {r["molecule"]: r for r in _records(plan.elution_order())}
        for r in summary:
            o = order.get(r["molecule"], {})
            r["binds"] = o.get("binds")
            r["elution_order"] = o.get("elution_order")
    body.append(f"<h2>Molecules at pH {at:.2f}</h2>")
    cols: list[Column] = [
        ("molecule", "molecule", lambda v: v if len(str(v)) <= 60 else str(v)[:57] + "…"),
        ("pI", "pI", 2),
        ("charge", "net charge (e)", lambda v: _number(v, 2, signed=True)),
    ]
    if plan.contaminants and plan.exchanger:
        cols += [
            ("binds", "binds", lambda v: "—" if v is None else ("yes" if v else "no")),
            (
                "elution_order",
                "elutes (1 = first)",
                lambda v: "flow-through" if not v else str(int(v)),
            ),
        ]
    body.append(_table(summary, cols, table_id="molecules"))

    site_rows, more = _quiet(lambda: _site_rows(target, at))
    notes += more
    body.append(f"<h2>Target sites at pH {at:.2f}</h2>")
    body.append(_table(site_rows, _SITE_COLUMNS, table_id="sites", wide=True))
    body.append("<h2>Sources of the pKa values</h2>" + _sources_table(site_rows))
    extra = [
        ("binding threshold", f"{plan.threshold:.3g} net charges"),
        ("distance from the pI", f"{plan.margin:g} pH units"),
        ("stability window", f"pH {plan.stability[0]:g}–{plan.stability[1]:g}"),
    ]
    cond = plan.conditions
    data = _data_section(target, extra)
    if cond is not None and target.conditions is None:  # the plan's own conditions
        data += _facts(_condition_facts(cond))
    body.append(data)
    body.append(_closing(notes, LAB_CAUTION))
    subtitle = f"ion exchange; {len(plan.contaminants)} contaminant(s); " + _conditions_line(target)
    return _page("purification plan", title or f"Ion exchange for {plan.names[0]}", subtitle, body)


def _buffer_source(name: str, step: Any) -> str:
    try:
        from .buffers import get_buffer

        buf = get_buffer(name)
        for s in buf.steps:
            if step is None or int(s.step) == int(step):
                return str(s.source)
    except (ZwitterError, ImportError, AttributeError, TypeError, ValueError):
        pass
    return ""


def batch_report(
    frame: pd.DataFrame,
    *,
    source: str = "",
    scale: Any = None,
    conditions: Any = None,
    cys: str = "",
    fractions: Sequence[float] | None = None,
    highlight: Iterable[str] = (),
    title: str | None = None,
    figure_format: str = "png",
    max_rows: int = 200,
) -> str:
    """HTML summary of a scored batch (:func:`zwitter.batch.score_fasta` or compatible table).

    Parameters
    ----------
    frame
        One row per record with at least ``id`` and ``pI``; a mass column (``average_mass``, Da)
        enables the pI-mass map; ``charge_ph...`` columns are tabulated.
    source
        Input file name(s), shown in the header.
    scale, conditions, cys
        What the batch was scored with (for the conditions section and the pKa sources).
    fractions
        Boundaries (pH) of isoelectric-focusing fractions: drawn on the histogram and counted.
    highlight
        Record ids to mark on the pI-mass map.
    max_rows
        Records listed in the table (the first ones, in input order).
    """
    from . import plots

    if not hasattr(frame, "columns") or "pI" not in frame.columns:
        raise ParameterError(
            "frame", "batch_report", "a batch table with a 'pI' column", f"<{type(frame).__name__}>"
        )
    if isinstance(max_rows, bool) or not isinstance(max_rows, int) or max_rows < 0:
        raise ParameterError("max_rows", "batch_report", "a whole number >= 0", max_rows)
    fmt = _check_format(figure_format, "batch_report")
    if fractions is not None:
        fractions = [float(x) for x in plots.check_fractions(fractions, "batch_report")]
    n = len(frame)
    pi = np.asarray(frame["pI"], dtype=np.float64)
    errors = (
        np.asarray(frame["error"].fillna("").astype(str) != "", dtype=bool)
        if "error" in frame.columns
        else np.zeros(n, dtype=bool)
    )
    finite = pi[np.isfinite(pi)]
    mass_col = next((c for c in plots.MASS_COLUMNS if c in frame.columns), None)
    charge_cols = [c for c in frame.columns if str(c).startswith("charge_ph")]
    cards = [
        ("records", "records", f"{n:,}", ""),
        ("scored", "with a pI", f"{finite.size:,}", ""),
        ("errors", "with errors", f"{int(errors.sum()):,}", ""),
    ]
    if finite.size:
        cards.append(
            (
                "median_pI",
                "median pI",
                f"{np.median(finite):.2f}",
                f"range {finite.min():.2f}–{finite.max():.2f}",
            )
        )
    if mass_col:
        masses = np.asarray(frame[mass_col], dtype=np.float64)
        masses = masses[np.isfinite(masses)]
        if masses.size:
            cards.append(("median_mass", "median mass", f"{np.median(masses) / 1000:.1f}", "kDa"))
    body = [_keys(cards), _caution_box()]
    if finite.size:
        if mass_col:
            body.append("<h2>Isoelectric point versus mass</h2>")
            body.append(
                _figure(
                    plots.gel_plot(frame, mass=mass_col, highlight=highlight),
                    "gel",
                    "Isoelectric point versus mass of every record, laid out like a 2-D gel",
                    "Each dot is one record: pI across (acidic left), mass down a logarithmic axis "
                    "with large molecules on top, as on a two-dimensional gel.",
                    fmt,
                )
            )
        body.append("<h2>Distribution of isoelectric points</h2>")
        body.append(
            _figure(
                plots.pi_histogram(frame, fractions=fractions),
                "histogram",
                "Histogram of isoelectric points",
                "Records per 0.25 pH bin"
                + (
                    "; shaded bands and dashed lines are the isoelectric-"
                    "focusing fractions, with their counts above."
                    if fractions
                    else "."
                ),
                fmt,
            )
        )
        if fractions:
            table = _records(plots.ief_fractions(frame, fractions))
            body.append("<h3>Isoelectric-focusing fractions</h3>")
            body.append(
                _table(
                    table,
                    [
                        ("fraction", "fraction", None),
                        ("from_ph", "from pH", 2),
                        ("to_ph", "to pH", 2),
                        ("count", "records", None),
                    ],
                    table_id="fractions",
                )
            )
    rows = _records(frame.head(max_rows))
    for r in rows:
        if mass_col and r.get(mass_col) is not None:
            r["mass_kda"] = float(r[mass_col]) / 1000.0
        note = r.get("error") or r.get("warnings") or ""
        r["note"] = note if len(str(note)) <= 90 else str(note)[:87] + "…"
        desc = r.get("description") or ""
        r["description"] = desc if len(str(desc)) <= 48 else str(desc)[:45] + "…"
    cols: list[Column] = [("id", "id", None)]
    if "description" in frame.columns:
        cols.append(("description", "description", None))
    if "length" in frame.columns:
        cols.append(("length", "length", None))
    if mass_col:
        cols.append(("mass_kda", "mass (kDa)", 2))
    cols.append(("pI", "pI", 2))
    cols += [
        (c, f"charge at pH {str(c)[len('charge_ph') :]} (e)", lambda v: _number(v, 2, signed=True))
        for c in charge_cols
    ]
    cols.append(("note", "warnings / error", None))
    shown = f"first {min(n, max_rows):,} of {n:,}" if n > max_rows else f"all {n:,}"
    body.append(f"<h2>Records ({shown})</h2>")
    body.append(_table(rows, cols, table_id="records", wide=True))

    facts: list[tuple[str, str]] = []
    if source:
        facts.append(("input", source))
    scale_key = getattr(scale, "key", scale) if scale is not None else None
    from .scales import get_scale

    try:
        sc = get_scale(scale)
    except (ZwitterError, OSError):
        sc = None
    facts += _scale_facts(sc.key if sc is not None else str(scale_key or ""))
    facts += _condition_facts(conditions)
    if cys:
        facts.append(("cysteines", "all disulfide-bonded" if cys == "bonded" else "free thiols"))
    if charge_cols:
        facts.append(
            (
                "charge columns at",
                ", ".join(f"pH {str(c)[len('charge_ph') :]}" for c in charge_cols),
            )
        )
    body.append("<h2>Conditions and data</h2>" + _facts(facts))
    if sc is not None:
        body.append("<h2>Sources of the pKa values</h2>" + _sources_table(_scale_rows(sc)))
    notes: list[str] = []
    if errors.any():
        notes.append(f"{int(errors.sum()):,} record(s) could not be scored: see the error column")
    missing = n - finite.size - int(errors.sum())
    if missing > 0:
        notes.append(
            f"{missing:,} record(s) have no isoelectric point (the charge never crosses zero)"
        )
    body.append(_closing(notes))
    subtitle = f"batch of {n:,} records" + (f" from {source}" if source else "")
    return _page(
        "batch",
        title or (f"Batch summary: {source}" if source else "Batch summary"),
        subtitle,
        body,
    )


def _scale_rows(scale: Any) -> list[dict[str, Any]]:
    rows = [{"site": g, "source": scale.source_of(g)} for g in scale.pka]
    for table, group in ((scale.nterm, "Nterm"), (scale.cterm, "Cterm")):
        rows += [{"site": f"{group}({r})", "source": scale.source_of(group, r)} for r in table]
    for table, ctx in ((scale.side_nterm, "Nterm"), (scale.side_cterm, "Cterm")):
        rows += [{"site": f"{g}({ctx})", "source": scale.source_of(g, ctx)} for g in table]
    return rows


# -- dispatch and writing ---------------------------------------------------------------------
def render_report(obj: Any, **options: Any) -> str:
    """The HTML report of a Molecule, a Plan or a batch DataFrame (options as for each)."""
    from .molecule import Molecule

    if isinstance(obj, Molecule):
        return molecule_report(obj, **options)
    if hasattr(obj, "usable") and hasattr(obj, "target"):
        return plan_report(obj, **options)
    if hasattr(obj, "columns"):
        return batch_report(obj, **options)
    raise ParameterError(
        "obj",
        "render_report",
        "a Molecule, a purification Plan or a batch DataFrame",
        f"<{type(obj).__name__}>",
    )


def write_html(text: str, path: str | os.PathLike[str]) -> Path:
    """Write ``text`` to ``path`` atomically (temporary file in the same folder, then rename)."""
    target = Path(path)
    if not target.parent.is_dir():
        raise ParameterError("path", "write_report", "a file in an existing folder", str(path))
    fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".tmp", dir=target.parent)
    try:
        with os.fdopen(fd, "w", encoding="utf-8", newline="\n") as handle:
            handle.write(text)
        os.chmod(tmp, 0o644)
        os.replace(tmp, target)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise
    return target


def write_report(obj: Any, path: str | os.PathLike[str], **options: Any) -> Path:
    """Render the report of ``obj`` (see :func:`render_report`) and write it atomically."""
    return write_html(render_report(obj, **options), path)
