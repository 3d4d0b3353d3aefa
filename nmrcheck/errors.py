"""The exceptions nmrcheck raises; the CLI turns every one of them into a one-line message."""

from __future__ import annotations


class NmrcheckError(Exception):
    """Base class of every error nmrcheck raises on purpose."""


class InputFileError(NmrcheckError):
    """A file is missing, unreadable, truncated, of an unknown format or of the wrong nucleus."""

    def __init__(self, path: object, problem: str) -> None:
        self.path = str(path)
        self.problem = problem
        super().__init__(f"{self.path}: {problem}")


class ParameterError(NmrcheckError, ValueError):
    """An option or argument is out of range or malformed; the message names it."""


class ProcessingError(NmrcheckError):
    """Processing could not produce a usable spectrum (e.g. no signal above noise)."""


class TableError(NmrcheckError):
    """A packaged or user-supplied reference table is malformed (names the file and row)."""


class FormulaError(NmrcheckError, ValueError):
    """A molecular formula, element range or ion species is malformed or unknown."""


class CandidateError(NmrcheckError):
    """A candidate structure or formula could not be read (names the entry)."""


class ManifestError(NmrcheckError):
    """A plate manifest has problems; ``problems`` lists every one by row and column."""

    def __init__(self, path: object, problems: list[str]) -> None:
        self.path = str(path)
        self.problems = list(problems)
        head = f"{self.path}: {len(self.problems)} problem(s) in the manifest"
        super().__init__(head + "".join(f"\n  {p}" for p in self.problems))


class QuantificationError(NmrcheckError):
    """A reference or analyte signal cannot be used to quantify (missing, overlapped, not positive); names it."""
