"""Plain one-letter sequences -> titratable sites (composition counts).

Policy for the one-letter alphabet (documented in README):

* the 20 standard residues, U (selenocysteine, selenol side chain) and O (pyrrolysine, whose
  side-chain amine is acylated in the ring, so it adds no site);
* upper or lower case; whitespace and line breaks are ignored; one ``*`` (stop) may end it;
* ambiguous residues: B (D or N) counts half an Asp side chain, Z (E or Q) half a Glu side
  chain, J (I or L) has no ionizable side chain, X (unknown) contributes no site and raises a
  :class:`~zwitter.errors.ZwitterWarning`;
* anything else is a :class:`~zwitter.errors.SequenceError` naming the character and its 1-based
  position among the residues (whitespace not counted).

Scoring a batch is matrix work: all sequences of a chunk are joined into one byte array, counted
with one ``bincount`` into an N x 256 letter matrix, and multiplied by a 256 x K letter-to-site
matrix; terminal groups are placed with index arithmetic. There is no Python loop over residues
and none over sequences.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np
import numpy.typing as npt

from .errors import SequenceError
from .scales import GROUPS, SIDE_CHAIN_GROUPS, Scale
from .sites import SiteSet

if TYPE_CHECKING:
    from .molecule import Molecule

__all__ = [
    "SiteLayout",
    "Composition",
    "layout_for",
    "compose",
    "compose_spans",
    "clean_sequence",
    "sites_for_sequence",
    "from_sequence",
]

STANDARD = "ACDEFGHIKLMNPQRSTVWY"
VALID = STANDARD + "UOBZJX"
_VALID_SET = frozenset(VALID)
_WHITESPACE = b" \t\r\n\v\f"
_SEP = 0  # byte joining the sequences of a chunk (NUL never occurs in a valid sequence)

# Compact residue codes: 0 separator, 1-26 the letters A-Z (either case; code = upper byte - 64),
# 27 '*', 31 any other byte (an error wherever it occurs).
_STAR = 27
_BAD = 31
_CODES = np.full(256, _BAD, dtype=np.uint8)
_CODES[_SEP] = 0
_CODES[ord("A") : ord("Z") + 1] = np.arange(1, 27)
_CODES[ord("a") : ord("z") + 1] = np.arange(1, 27)
_CODES[ord("*")] = _STAR
# (every one of the 26 letters is a valid one-letter code under the policy above)
_COMPACT = bytes(_CODES.tolist())


@dataclass(frozen=True)
class SiteLayout:
    """The site columns a scale gives to polypeptides, and the maps from letters to columns."""

    scale: Scale
    sites: SiteSet  # template: one row per column, counts all zero
    letter_weights: npt.NDArray[np.float64]  # (256, K)
    nterm_col: npt.NDArray[np.int64]  # (256,) column of the alpha-amino group by N-terminal letter
    cterm_col: npt.NDArray[np.int64]  # (256,)
    side_col: npt.NDArray[np.int64]  # (256,) column of the letter's side chain, -1 if none
    side_nterm_col: npt.NDArray[np.int64]  # (256,) side-chain column when N-terminal, -1 if none
    side_cterm_col: npt.NDArray[np.int64]  # (256,)
    has_u: bool


def _label(group: str, context: str) -> str:
    return f"{group}({context})" if context else group


def layout_for(scale: Scale) -> SiteLayout:
    """Site columns for ``scale`` (cached on the scale object's identity)."""
    cached = _LAYOUTS.get(id(scale))
    if cached is not None and cached.scale is scale:
        return cached
    columns: list[tuple[str, str, float]] = []
    for group in ("Nterm", "Cterm"):
        columns.append((group, "", scale.pka[group]))
        table = scale.nterm if group == "Nterm" else scale.cterm
        columns.extend((group, res, value) for res, value in sorted(table.items()))
    for group in SIDE_CHAIN_GROUPS:
        if group in scale.pka:
            columns.append((group, "", scale.pka[group]))
    for context, table in (("Nterm", scale.side_nterm), ("Cterm", scale.side_cterm)):
        columns.extend((group, context, value) for group, value in sorted(table.items()))
    index = {(g, c): i for i, (g, c, _) in enumerate(columns)}
    k = len(columns)
    template = SiteSet(
        labels=tuple(_label(g, c) for g, c, _ in columns),
        pkas=np.array([[v] for _, _, v in columns], dtype=float),
        nsteps=np.ones(k, dtype=np.int64),
        charges=np.array([GROUPS[g][0] for g, _, _ in columns], dtype=float),
        counts=np.zeros(k),
        sources=tuple(scale.source_of(g, c) for g, c, _ in columns),
        groups=tuple(g for g, _, _ in columns),
    )
    weights = np.zeros((256, k))
    side = np.full(256, -1, dtype=np.int64)
    for group in SIDE_CHAIN_GROUPS:
        if (group, "") in index:
            col = index[(group, "")]
            for letter in (group, group.lower()):
                weights[ord(letter), col] = 1.0
                side[ord(letter)] = col
    # B = Asp or Asn, Z = Glu or Gln: half a carboxyl each (policy in the module docstring).
    for amb, group in (("B", "D"), ("Z", "E")):
        for letter in (amb, amb.lower()):
            weights[ord(letter), index[(group, "")]] = 0.5
    nterm = np.full(256, index[("Nterm", "")], dtype=np.int64)
    cterm = np.full(256, index[("Cterm", "")], dtype=np.int64)
    side_n = np.full(256, -1, dtype=np.int64)
    side_c = np.full(256, -1, dtype=np.int64)
    for (group, context), col in index.items():
        for letter in (context, context.lower()) if len(context) == 1 else ():
            (nterm if group == "Nterm" else cterm)[ord(letter)] = col
        if context in ("Nterm", "Cterm"):
            for letter in (group, group.lower()):
                (side_n if context == "Nterm" else side_c)[ord(letter)] = col
    layout = SiteLayout(
        scale, template, weights, nterm, cterm, side, side_n, side_c, "U" in scale.pka
    )
    _LAYOUTS[id(scale)] = layout
    return layout


_LAYOUTS: dict[int, SiteLayout] = {}


@dataclass(frozen=True)
class Composition:
    """Site counts of a chunk of sequences.

    ``counts`` is (N, K) over ``layout.sites``; rows with an error are all zero and ``errors[i]``
    holds the :class:`SequenceError`. ``unknown`` counts X residues per row (no site, warned).
    """

    layout: SiteLayout
    counts: npt.NDArray[np.float64]
    lengths: npt.NDArray[np.int64]
    errors: tuple[SequenceError | None, ...]
    unknown: npt.NDArray[np.int64]
    letters: npt.NDArray[np.int64]  # (N, 32) residue counts: column ord(letter) - 64 (A = 1)

    @property
    def sites(self) -> SiteSet:
        return self.layout.sites.with_counts(self.counts)

    def letter_counts(self, letters: str) -> npt.NDArray[np.int64]:
        """(N, len(letters)) counts of the given one-letter codes, e.g. ``"DEKR"``."""
        return self.letters[:, [ord(c.upper()) - 64 for c in letters]]

    def warnings_for(self, i: int) -> list[str]:
        out = []
        if self.unknown[i]:
            n = int(self.unknown[i])
            out.append(f"{n} unknown residue{'s' if n > 1 else ''} (X) contribute no site")
        return out


def _real_char(text: str, cleaned_pos: int) -> str:
    """The character at 1-based position ``cleaned_pos`` of ``text`` with whitespace removed."""
    count = 0
    for ch in text:
        if ch in " \t\r\n\v\f":
            continue
        count += 1
        if count == cleaned_pos:
            return ch
    return ""


#: Residues per internal block: big enough for numpy to run at full speed, small enough for the
#: temporaries (a few bytes per residue) to stay in cache instead of faulting in fresh pages.
BLOCK_RESIDUES = 1 << 19


def compose(
    sequences: Sequence[str], scale: Scale, records: Sequence[str] | None = None
) -> Composition:
    """Count the sites of many sequences in one vectorised pass (see module docstring).

    Long inputs are processed in blocks of about :data:`BLOCK_RESIDUES` residues (whole
    sequences), each block one set of array operations; the blocks are stacked.
    """
    n = len(sequences)
    lengths = np.fromiter(map(len, sequences), dtype=np.int64, count=n)
    if n > 1 and int(lengths.sum()) > 2 * BLOCK_RESIDUES:
        block = np.cumsum(lengths) // BLOCK_RESIDUES
        cuts = np.flatnonzero(np.diff(block)) + 1
        bounds = [0, *cuts.tolist(), n]
        parts = [
            _compose_block(sequences[a:b], scale, records[a:b] if records else None)
            for a, b in zip(bounds[:-1], bounds[1:])
            if b > a
        ]
        return Composition(
            parts[0].layout,
            np.vstack([p.counts for p in parts]),
            np.concatenate([p.lengths for p in parts]),
            tuple(e for p in parts for e in p.errors),
            np.concatenate([p.unknown for p in parts]),
            np.vstack([p.letters for p in parts]),
        )
    return _compose_block(sequences, scale, records)


def _site_counts(
    layout: SiteLayout,
    letters: npt.NDArray[np.int64],
    lengths: npt.NDArray[np.int64],
    rows_ne: npt.NDArray[np.intp],
    first: npt.NDArray[np.uint8],
    last: npt.NDArray[np.uint8],
) -> npt.NDArray[np.float64]:
    """(N, K) site counts: side chains from the letter counts, then each non-empty row's termini
    (``first``/``last``: compact codes of its first and last residue) and terminal contexts."""
    counts = letters @ layout.letter_weights[64:96]
    first_code = first.astype(np.intp) + 64  # back to upper-case byte values
    last_code = last.astype(np.intp) + 64
    counts[rows_ne, layout.nterm_col[first_code]] += 1.0
    counts[rows_ne, layout.cterm_col[last_code]] += 1.0
    for side_map, byte in ((layout.side_cterm_col, last_code), (layout.side_nterm_col, first_code)):
        col = side_map[byte]
        hit = col >= 0
        if side_map is layout.side_nterm_col:
            # a one-residue chain keeps its C-terminal context only
            hit &= ~((lengths[rows_ne] == 1) & (layout.side_cterm_col[byte] >= 0))
        sel = rows_ne[hit]
        counts[sel, layout.side_col[byte[hit]]] -= 1.0
        counts[sel, col[hit]] += 1.0
    return counts


def _row_errors(
    letters: npt.NDArray[np.int64],
    lengths: npt.NDArray[np.int64],
    text: Callable[[int], str],
    rec: Callable[[int], str],
    scale: Scale,
    layout: SiteLayout,
) -> dict[int, SequenceError]:
    """Errors by row (rows with one are rare): invalid bytes and inner '*' (the exact message,
    character and 1-based position among residues, from the one-sequence reader), empty rows,
    and U where the scale has no selenol pKa. Clears the '*' and invalid-byte columns."""
    errors: dict[int, SequenceError] = {}
    for r in np.flatnonzero((letters[:, _BAD] > 0) | (letters[:, _STAR] > 0)).tolist():
        try:
            clean_sequence(text(r))
        except SequenceError as exc:
            errors[r] = SequenceError(exc.reason, exc.position, exc.character, rec(r))
    letters[:, _STAR] = 0
    letters[:, _BAD] = 0
    for r in np.flatnonzero(lengths == 0).tolist():
        errors[r] = SequenceError("empty sequence", 0, "", rec(r))
    if not layout.has_u:
        for r in np.flatnonzero(letters[:, ord("U") - 64]).tolist():
            if r not in errors:
                cleaned = text(r).translate({ord(c): None for c in " \t\r\n\v\f"}).upper()
                errors[r] = SequenceError(
                    f"scale {scale.key!r} gives no selenocysteine (U) pKa; choose a scale "
                    "with U or pass a scale file with a U row",
                    cleaned.find("U") + 1,
                    "U",
                    rec(r),
                )
    return errors


def _by_row(errors: dict[int, SequenceError], n: int) -> tuple[SequenceError | None, ...]:
    out: list[SequenceError | None] = [None] * n
    for r, e in errors.items():
        out[r] = e
    return tuple(out)


def _compose_block(
    sequences: Sequence[str], scale: Scale, records: Sequence[str] | None = None
) -> Composition:
    layout = layout_for(scale)
    n = len(sequences)
    k = layout.sites.n_types
    if n == 0:
        z = np.zeros((0,), dtype=np.int64)
        return Composition(layout, np.zeros((0, k)), z, (), z, np.zeros((0, 32), dtype=np.int64))
    joined = "\x00".join(sequences)
    # One C pass maps every byte to its compact code (letters folded to 1-26, '*' 27, anything
    # else 31) and drops whitespace.
    data = joined.encode("utf-8", errors="surrogatepass").translate(_COMPACT, _WHITESPACE)
    code = np.frombuffer(data, dtype=np.uint8)
    seps = np.flatnonzero(code == _SEP)
    if seps.size != n - 1:
        # A NUL inside a sequence would shift rows: compose with every NUL replaced by another
        # invalid byte (same position), then name the original character in the errors.
        safe = compose([s.replace("\x00", "\x01") for s in sequences], scale, records)
        named = tuple(
            None
            if e is None
            else SequenceError(
                e.reason, e.position, _real_char(sequences[i], e.position) or e.character, e.record
            )
            for i, e in enumerate(safe.errors)
        )
        return Composition(layout, safe.counts, safe.lengths, named, safe.unknown, safe.letters)
    starts = np.concatenate([[0], seps + 1])
    ends = np.concatenate([seps, [code.size]])  # exclusive
    # Letter counts per row: one bincount over (row << 5 | code); the row index comes from
    # np.repeat over the row lengths (the separator is counted with the row before it, in
    # column 0, which has no weight).
    spans = np.diff(np.concatenate([[0], ends + 1])).astype(np.intp)
    spans[-1] -= 1  # the last row has no separator after it
    key = np.repeat(np.arange(n, dtype=np.intp) << 5, spans)
    key |= code
    letters = np.bincount(key, minlength=n * 32).reshape(n, 32)
    letters[:, 0] = 0
    rec = (lambda r: records[r]) if records else (lambda r: "")
    # A final '*' (stop) is dropped; anywhere else it is an error (found below).
    star_end = np.zeros(n, dtype=bool)
    if letters[:, _STAR].any():
        nonempty = ends > starts
        star_end[nonempty] = code[ends[nonempty] - 1] == _STAR
        letters[:, _STAR] -= star_end
        ends = ends - star_end
    lengths = (ends - starts).astype(np.int64)
    errors = _row_errors(letters, lengths, lambda r: sequences[r], rec, scale, layout)
    rows_ne = np.flatnonzero(lengths > 0)
    counts = _site_counts(
        layout, letters, lengths, rows_ne, code[starts[rows_ne]], code[ends[rows_ne] - 1]
    )
    failed = np.zeros(n, dtype=bool)
    failed[list(errors)] = True
    counts[failed] = 0.0
    unknown = letters[:, ord("X") - 64].astype(np.int64)
    return Composition(layout, counts, lengths, _by_row(errors, n), unknown, letters)


# Codes for compose_spans: as _COMPACT, but whitespace is 0 (an ignored column; the bytes stay in
# place, so positions in the buffer keep their meaning) and NUL is an invalid byte like any other.
_SPAN_CODES = bytearray(_COMPACT)
for _byte in _WHITESPACE:
    _SPAN_CODES[_byte] = 0
_SPAN_CODES[0] = _BAD
_SPAN_TABLE = bytes(_SPAN_CODES)
del _SPAN_CODES, _byte
#: Blank bytes at the ends of a span skipped by vectorised steps; longer runs go row by row.
_EDGE_STEPS = 8


def _skip_blank(
    code: npt.NDArray[np.uint8],
    pos: npt.NDArray[np.int64],
    stop: npt.NDArray[np.int64],
    step: int,
) -> npt.NDArray[np.int64]:
    """Each position moved by ``step`` while it is on whitespace (code 0), at most to ``stop``."""
    pos = pos.copy()

    def inside(p: npt.NDArray[np.int64]) -> npt.NDArray[np.bool_]:
        return p < stop if step > 0 else p > stop

    for _ in range(_EDGE_STEPS):
        move = inside(pos)
        move[move] = code[pos[move]] == 0
        if not move.any():
            return pos
        pos[move] += step
    for r in np.flatnonzero(inside(pos)).tolist():
        if code[pos[r]] != 0:
            continue
        if step > 0:
            nz = np.flatnonzero(code[pos[r] : stop[r]])
            pos[r] = pos[r] + nz[0] if nz.size else stop[r]
        else:
            nz = np.flatnonzero(code[stop[r] + 1 : pos[r] + 1])
            pos[r] = stop[r] + 1 + nz[-1] if nz.size else stop[r]
    return pos


def _in_spans(
    positions: npt.NDArray[np.intp], lo: npt.NDArray[np.int64], hi: npt.NDArray[np.int64]
) -> list[int]:
    """Rows (ascending, once each) whose span [lo, hi) holds one of the ``positions``."""
    row = np.searchsorted(hi, positions, side="right")
    inside = (row < lo.size) & (lo[np.minimum(row, lo.size - 1)] <= positions)
    rows: list[int] = np.unique(row[inside]).tolist()
    return rows


_RUN_ROWS = (1 << 16) // 32 - 1  # rows per run whose (slot << 5 | code) keys fit in 16 bits


def _runs(lo: npt.NDArray[np.int64], hi: npt.NDArray[np.int64]) -> list[tuple[int, int]]:
    """(first, end) rows of consecutive runs of spans, each about BLOCK_RESIDUES bytes long."""
    n = lo.size
    marks = lo[0] + np.arange(BLOCK_RESIDUES, int(hi[-1] - lo[0]), BLOCK_RESIDUES)
    cuts = np.unique(np.searchsorted(lo, marks))
    bounds = [0, *cuts[(cuts > 0) & (cuts < n)].tolist(), n]
    runs: list[tuple[int, int]] = []
    for a, b in zip(bounds[:-1], bounds[1:]):
        runs.extend((c, min(c + _RUN_ROWS, b)) for c in range(a, b, _RUN_ROWS))
    return runs


def compose_spans(
    data: bytes,
    starts: npt.ArrayLike,
    ends: npt.ArrayLike,
    scale: Scale,
    records: Sequence[str] | None = None,
) -> Composition:
    """:func:`compose` of the sequences ``data[starts[i]:ends[i]]``, without building them.

    Equal to ``compose([data[a:b].decode("utf-8", "replace") for a, b in zip(starts, ends)],
    scale, records)`` (tested), so a FASTA block is composed where it lies: the spans are the
    sequence lines of each record (whitespace inside is ignored, as in :func:`compose`), and
    the bytes between spans (header lines) are not looked at. Spans are in order and do not
    overlap. Only rows with an error build their sequence text.
    """
    layout = layout_for(scale)
    k = layout.sites.n_types
    lo = np.asarray(starts, dtype=np.int64).reshape(-1)
    hi = np.asarray(ends, dtype=np.int64).reshape(-1)
    n = lo.size
    if hi.size != n:
        raise ValueError(f"{n} span starts but {hi.size} span ends")
    if n == 0:
        z = np.zeros((0,), dtype=np.int64)
        return Composition(layout, np.zeros((0, k)), z, (), z, np.zeros((0, 32), dtype=np.int64))
    if np.any(hi < lo) or np.any(lo[1:] < hi[:-1]) or lo[0] < 0 or hi[-1] > len(data):
        raise ValueError("spans must lie inside the data, in order, without overlapping")

    def text(r: int) -> str:
        return data[int(lo[r]) : int(hi[r])].decode("utf-8", errors="replace")

    if b"\x00" in data and _in_spans(np.flatnonzero(np.frombuffer(data, np.uint8) == 0), lo, hi):
        # compose treats a NUL specially (it names the original characters in every error of
        # the run of rows around it); go through it.
        return compose([text(r) for r in range(n)], scale, records)
    # One C pass maps every byte to its code (letters 1-26 in either case, '*' 27, whitespace 0,
    # anything else 31) in place, so span positions stay valid.
    code = np.frombuffer(data.translate(_SPAN_TABLE), dtype=np.uint8)
    letters = np.zeros((n, 32), dtype=np.int64)
    # Letter counts: one bincount over (slot << 5 | code) for each run of rows covering about
    # BLOCK_RESIDUES bytes (and at most 2047 rows, so that keys fit in 16 bits); a span's bytes
    # get its row's slot, the gaps between spans a spare slot that is dropped.
    for a, b in _runs(lo, hi):
        m = b - a
        pieces = np.empty(2 * m - 1, dtype=np.intp)
        pieces[0::2] = hi[a:b] - lo[a:b]
        pieces[1::2] = lo[a + 1 : b] - hi[a : b - 1]
        slots = np.full(2 * m - 1, m << 5, dtype=np.uint16)
        slots[0::2] = np.arange(m, dtype=np.uint16) << 5
        key = np.repeat(slots, pieces)
        key |= code[lo[a] : hi[b - 1]]
        letters[a:b] = np.bincount(key, minlength=(m + 1) * 32)[: m * 32].reshape(m, 32)
    letters[:, 0] = 0
    # First and last non-blank byte of every span (usually its first byte and the byte before
    # the final line break).
    first = _skip_blank(code, lo, hi, 1)
    last = _skip_blank(code, hi - 1, lo - 1, -1)
    lengths = letters[:, 1:].sum(axis=1)
    rec = (lambda r: records[r]) if records else (lambda r: "")
    # A final '*' (stop) is dropped; anywhere else it is an error (found below).
    if letters[:, _STAR].any():
        star_end = (lengths > 0) & (code[np.maximum(last, 0)] == _STAR)
        letters[:, _STAR] -= star_end
        lengths -= star_end
        moved = np.flatnonzero(star_end & (lengths > 0))  # the residue before it is the last
        last[moved] = _skip_blank(code, last[moved] - 1, lo[moved] - 1, -1)
    errors = _row_errors(letters, lengths, text, rec, scale, layout)
    rows_ne = np.flatnonzero(lengths > 0)
    counts = _site_counts(
        layout, letters, lengths, rows_ne, code[first[rows_ne]], code[last[rows_ne]]
    )
    failed = np.zeros(n, dtype=bool)
    failed[list(errors)] = True
    counts[failed] = 0.0
    unknown = letters[:, ord("X") - 64].astype(np.int64)
    if not data.isascii():
        # A byte outside ASCII counts once here but as U+FFFD (three bytes) in compose; such
        # rows (they always have an error) are composed from their text.
        wide = np.flatnonzero(np.frombuffer(data, dtype=np.uint8) >= 0x80)
        hit_rows = _in_spans(wide, lo, hi)
        if hit_rows:
            one = _compose_block([text(r) for r in hit_rows], scale, [rec(r) for r in hit_rows])
            counts[hit_rows], lengths[hit_rows] = one.counts, one.lengths
            unknown[hit_rows], letters[hit_rows] = one.unknown, one.letters
            for j, r in enumerate(hit_rows):
                e = one.errors[j]
                if e is None:
                    errors.pop(r, None)
                else:
                    errors[r] = e
    return Composition(layout, counts, lengths, _by_row(errors, n), unknown, letters)


def clean_sequence(text: str) -> str:
    """Upper-case residues with whitespace and a final ``*`` removed; raises on bad letters.

    >>> clean_sequence("mkw vt*")
    'MKWVT'
    """
    if not isinstance(text, str):
        raise SequenceError(f"a sequence must be a string, got {type(text).__name__}")
    kept = text.translate({ord(c): None for c in " \t\r\n\v\f"})
    if kept.endswith("*"):
        kept = kept[:-1]
    if not kept:
        raise SequenceError("empty sequence")
    for i, ch in enumerate(kept, start=1):
        if ch.upper() not in _VALID_SET:
            if ch == "*":
                raise SequenceError("'*' (stop) is allowed only at the end", i, ch)
            raise SequenceError("invalid residue", i, ch)
    return kept.upper()


def sites_for_sequence(text: str, scale: Scale, record: str = "") -> tuple[SiteSet, list[str]]:
    """One sequence -> (SiteSet with residue positions as members, warnings)."""
    comp = compose([text], scale, [record] if record else None)
    err = comp.errors[0]
    if err is not None:
        raise err
    seq = clean_sequence(text)
    layout = comp.layout
    codes = np.frombuffer(seq.encode("ascii"), dtype=np.uint8)
    col_of = layout.side_col[codes].copy()
    if seq:
        if layout.side_nterm_col[codes[0]] >= 0 and not (
            len(seq) == 1 and layout.side_cterm_col[codes[0]] >= 0
        ):
            col_of[0] = layout.side_nterm_col[codes[0]]
        if layout.side_cterm_col[codes[-1]] >= 0:
            col_of[-1] = layout.side_cterm_col[codes[-1]]
    members: list[tuple[str, ...]] = []
    nterm_col = int(layout.nterm_col[codes[0]])
    cterm_col = int(layout.cterm_col[codes[-1]])
    for k in range(layout.sites.n_types):
        names = [f"{seq[i]}{i + 1}" for i in np.flatnonzero(col_of == k).tolist()]
        if k == nterm_col:
            names.insert(0, f"N-term {seq[0]}1")
        if k == cterm_col:
            names.append(f"C-term {seq[-1]}{len(seq)}")
        members.append(tuple(names))
    base = layout.sites
    full = SiteSet(
        base.labels, base.pkas, base.nsteps, base.charges, comp.counts[0], base.sources,
        base.groups, tuple(members), base.atoms,
    )  # fmt: skip
    return full.compact(), comp.warnings_for(0)


CYS_MODES = ("free", "bonded")


def check_cys(cys: str, where: str) -> str:
    """Validate the cysteine policy: ``free`` thiols or all ``bonded`` in disulfides."""
    from .errors import ParameterError

    if cys not in CYS_MODES:
        raise ParameterError("cys", where, "'free' or 'bonded'", cys)
    return cys


def bond_all_cysteines(sites: SiteSet) -> tuple[SiteSet, tuple[str, ...]]:
    """Remove every Cys thiol (all cysteines taken as disulfide-bonded); return the bonded names."""
    keep = [k for k in range(sites.n_types) if sites.groups[k] != "C"]
    bonded = tuple(
        m for k in range(sites.n_types) if sites.groups[k] == "C" for m in sites.members[k]
    )
    return sites.take(keep), bonded


def from_sequence(
    sequence: str,
    scale: str | Scale | None = None,
    *,
    cys: str = "free",
    conditions: object | None = None,
    name: str = "",
) -> Molecule:
    """A molecule from a plain one-letter sequence.

    Parameters
    ----------
    sequence
        One-letter codes (policy in the module docstring).
    scale
        A packaged scale key (``zwitter scales`` lists them), a path to a CSV/TOML scale file, a
        :class:`~zwitter.scales.Scale`, or None for the default scale.
    cys
        ``"free"`` (default): every cysteine is a titratable thiol; ``"bonded"``: every cysteine
        is in a disulfide and carries no site (sequence databases rarely record the bonds).
    conditions
        Temperature and ionic strength (:class:`zwitter.Conditions`); None for the scale's own.
    name
        Label for reports (defaults to the sequence itself).

    Examples
    --------
    >>> import zwitter
    >>> m = zwitter.from_sequence("GLSDGEWQQVLNVWGK", scale="lehninger")
    >>> round(m.isoelectric_point(), 2)
    3.97
    >>> zwitter.from_sequence("CKC", cys="bonded").info["bonded_cysteines"]
    ('C1', 'C3')
    """
    from .molecule import Molecule
    from .scales import get_scale

    check_cys(cys, "from_sequence")
    sc = get_scale(scale)
    sites, notes = sites_for_sequence(sequence, sc, name)
    info: dict[str, object] = {"cys": cys, "sequence": clean_sequence(sequence)}
    if cys == "bonded":
        sites, bonded = bond_all_cysteines(sites)
        info["bonded_cysteines"] = bonded
    label = name or clean_sequence(sequence)
    return Molecule(
        sites, name=label, kind="sequence", scale=sc.key, notes=notes, info=info,
        conditions=conditions,
    )  # fmt: skip
