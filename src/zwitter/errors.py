"""Errors and warnings raised by zwitter.

Every error derives from :class:`ZwitterError` and from the builtin it resembles, keeps the
offending data in attributes, builds its message in ``__str__`` and pickles (batch work crosses
processes): each ``__init__`` passes its arguments, in order, to ``Exception.__init__`` so that
the default pickling protocol can rebuild it.
"""

from __future__ import annotations

__all__ = [
    "ZwitterError",
    "ZwitterWarning",
    "ParameterError",
    "SequenceError",
    "ScaleError",
    "ProFormaError",
    "StructureError",
    "ConditionsError",
    "BufferLookupError",
    "RecipeError",
    "InputFileError",
]


class ZwitterWarning(UserWarning):
    """A result was computed but deserves a caution (ambiguous residue, no pI, validity range)."""


class ZwitterError(Exception):
    """Base class of every error zwitter raises on purpose."""


class ParameterError(ZwitterError, ValueError):
    """A parameter is outside what is allowed.

    >>> str(ParameterError("ph", "charge", "a number in [-2, 16]", 17.5))
    "The 'ph' parameter of charge must be a number in [-2, 16]. Got 17.5 instead."
    """

    def __init__(self, parameter: str, where: str, allowed: str, got: object, hint: str = ""):
        super().__init__(parameter, where, allowed, got, hint)
        self.parameter = parameter
        self.where = where
        self.allowed = allowed
        self.got = got
        self.hint = hint

    def __str__(self) -> str:
        got = self.got if isinstance(self.got, str) and self.got.startswith("<") else repr(self.got)
        msg = (
            f"The {self.parameter!r} parameter of {self.where} must be {self.allowed}. "
            f"Got {got} instead."
        )
        return f"{msg} {self.hint}" if self.hint else msg


class SequenceError(ZwitterError, ValueError):
    """A sequence cannot be read: bad character, empty, misplaced terminator.

    ``position`` is 1-based in the cleaned sequence (whitespace removed); 0 when not tied to one.
    """

    def __init__(self, reason: str, position: int = 0, character: str = "", record: str = ""):
        super().__init__(reason, position, character, record)
        self.reason = reason
        self.position = position
        self.character = character
        self.record = record

    def __str__(self) -> str:
        where = f"record {self.record!r}: " if self.record else ""
        if self.character:
            return f"{where}{self.reason}: {self.character!r} at position {self.position}"
        if self.position:
            return f"{where}{self.reason} at position {self.position}"
        return f"{where}{self.reason}"


class ScaleError(ZwitterError, ValueError):
    """A pKa scale is unknown or a scale file is malformed (file, line and column named)."""

    def __init__(self, reason: str, path: str = "", line: int = 0, column: str = ""):
        super().__init__(reason, path, line, column)
        self.reason = reason
        self.path = path
        self.line = line
        self.column = column

    def __str__(self) -> str:
        where = []
        if self.path:
            where.append(str(self.path))
        if self.line:
            where.append(f"line {self.line}")
        if self.column:
            where.append(f"column {self.column!r}")
        return f"{', '.join(where)}: {self.reason}" if where else self.reason


class ProFormaError(ZwitterError, ValueError):
    """A ProForma string is malformed or uses a feature zwitter does not support."""

    def __init__(self, reason: str, text: str = "", position: int = 0):
        super().__init__(reason, text, position)
        self.reason = reason
        self.text = text
        self.position = position

    def __str__(self) -> str:
        if self.text:
            return f"{self.reason} at position {self.position} of {self.text!r}"
        return self.reason


class StructureError(ZwitterError, ValueError):
    """A SMILES or molecule cannot be used."""

    def __init__(self, reason: str, smiles: str = "", record: str = ""):
        super().__init__(reason, smiles, record)
        self.reason = reason
        self.smiles = smiles
        self.record = record

    def __str__(self) -> str:
        where = f"record {self.record!r}: " if self.record else ""
        what = f" (SMILES {self.smiles!r})" if self.smiles else ""
        return f"{where}{self.reason}{what}"


class ConditionsError(ZwitterError, ValueError):
    """Temperature or ionic strength outside what the corrections support."""

    def __init__(self, parameter: str, allowed: str, got: object, hint: str = ""):
        super().__init__(parameter, allowed, got, hint)
        self.parameter = parameter
        self.allowed = allowed
        self.got = got
        self.hint = hint

    def __str__(self) -> str:
        msg = f"The {self.parameter!r} condition must be {self.allowed}. Got {self.got!r} instead."
        return f"{msg} {self.hint}" if self.hint else msg


class BufferLookupError(ZwitterError, KeyError):
    """A buffer name is not in the table; close names are suggested."""

    def __init__(self, name: str, suggestions: tuple[str, ...] = ()):
        super().__init__(name, suggestions)
        self.name = name
        self.suggestions = tuple(suggestions)

    def __str__(self) -> str:
        msg = f"Unknown buffer {self.name!r}."
        if self.suggestions:
            msg += " Did you mean " + ", ".join(repr(s) for s in self.suggestions) + "?"
        return msg + " See `zwitter buffer --list` for the table."


class RecipeError(ZwitterError, ValueError):
    """A buffer recipe cannot be made (pH unreachable, impossible amounts)."""

    def __init__(self, reason: str):
        super().__init__(reason)
        self.reason = reason

    def __str__(self) -> str:
        return self.reason


class InputFileError(ZwitterError, OSError):
    """An input file is missing, unreadable, truncated or of an unknown format."""

    def __init__(self, reason: str, path: str = "", line: int = 0):
        super().__init__(reason, path, line)
        self.reason = reason
        self.path = path
        self.line = line

    def __str__(self) -> str:
        where = self.path or "input"
        if self.line:
            where += f", line {self.line}"
        return f"{where}: {self.reason}"
