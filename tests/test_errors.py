"""Every error is a ZwitterError and the builtin it resembles, and survives pickling."""

from __future__ import annotations

import pickle

import pytest

from zwitter import errors as E

CASES = [
    (E.ParameterError("ph", "charge", "a number in [-2, 16]", 17.5), ValueError,
     "The 'ph' parameter of charge must be a number in [-2, 16]. Got 17.5 instead."),
    (E.SequenceError("invalid residue", 3, "1", "r1"), ValueError,
     "record 'r1': invalid residue: '1' at position 3"),
    (E.ScaleError("expected a number", "s.csv", 4, "pka"), ValueError,
     "s.csv, line 4, column 'pka': expected a number"),
    (E.ProFormaError("unknown modification 'Phosfo'", "S[Phosfo]", 2), ValueError,
     "unknown modification 'Phosfo' at position 2 of 'S[Phosfo]'"),
    (E.StructureError("cannot parse SMILES", "C1CC", "mol7"), ValueError,
     "record 'mol7': cannot parse SMILES (SMILES 'C1CC')"),
    (E.ConditionsError("temperature", "in [0, 100] deg C", 120.0), ValueError,
     "The 'temperature' condition must be in [0, 100] deg C. Got 120.0 instead."),
    (E.BufferLookupError("Trs", ("Tris",)), KeyError,
     "Unknown buffer 'Trs'. Did you mean 'Tris'? See `zwitter buffer --list` for the table."),
    (E.RecipeError("pH 3 is unreachable with Tris"), ValueError, "pH 3 is unreachable with Tris"),
    (E.InputFileError("the gzip stream ends early", "p.fasta.gz", 12), OSError,
     "p.fasta.gz, line 12: the gzip stream ends early"),
]  # fmt: skip


@pytest.mark.parametrize(("error", "builtin", "message"), CASES)
def test_error_types_messages_and_pickling(error, builtin, message) -> None:
    assert isinstance(error, E.ZwitterError) and isinstance(error, builtin)
    assert str(error) == message
    again = pickle.loads(pickle.dumps(error))
    assert type(again) is type(error) and str(again) == message
