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


# Plain words for failures nmrcheck did not raise on purpose, by exception type name.
_KINDS = {
    "LinAlgError": "a matrix computation did not converge",
    "ZeroDivisionError": "a division by zero",
    "FloatingPointError": "a floating-point overflow or invalid value",
    "OverflowError": "a number too large to handle",
    "IndexError": "an index out of range",
    "KeyError": "a missing entry",
    "ValueError": "an invalid value",
    "TypeError": "a value of the wrong kind",
    "AttributeError": "a missing attribute",
    "RecursionError": "too deep a recursion",
    "BrokenProcessPool": "a worker process died",
    "TimeoutError": "a time limit was reached",
}

_OS_PROBLEMS = {
    "ENOSPC": "the disk is full",
    "EDQUOT": "the disk quota is exhausted",
    "EROFS": "the file system is read-only",
    "EACCES": "permission denied",
    "EPERM": "permission denied",
    "ENOENT": "no such file or directory",
    "EISDIR": "is a directory",
    "ENOTDIR": "a part of the path is not a directory",
    "EMFILE": "too many open files",
    "EIO": "input/output error (a failing disk or network share?)",
}


def _first_line(text: str) -> str:
    for line in str(text).splitlines():
        if line.strip():
            return " ".join(line.split())
    return ""


def human_message(exc: BaseException) -> str:
    """One line for people about any exception: the message of nmrcheck's own, plain words for the rest.

    An :class:`NmrcheckError` keeps its message (which names the file, row or field); an
    ``OSError`` says which file and what went wrong in words ("the disk is full"); a
    ``MemoryError`` says so; anything else is an ``internal error`` described by what kind of
    step failed, with its message, never as a raw ``TypeName: ...`` representation.
    """
    import errno

    if isinstance(exc, ManifestError):
        return f"{exc.path}: {len(exc.problems)} problem(s) in the manifest: " + "; ".join(exc.problems)
    if isinstance(exc, NmrcheckError):
        return _first_line(str(exc)) or "error"
    if isinstance(exc, MemoryError):
        return "not enough memory for this recording or option (out of memory)"
    database = None if isinstance(exc, OSError) else environment_problem(exc)
    if database is not None:
        return database
    if isinstance(exc, OSError):
        code = errno.errorcode.get(exc.errno or -1, "")
        problem = _OS_PROBLEMS.get(code) or (exc.strerror or _first_line(str(exc)) or "operating-system error")
        where = exc.filename if exc.filename is not None else None
        return f"{where}: {problem}" if where is not None else problem
    kind = _KINDS.get(type(exc).__name__, "an unexpected failure")
    detail = _first_line(str(exc))
    return f"internal error ({kind}){': ' + detail if detail else ''}"


class OutputError(NmrcheckError):
    """An output folder or file cannot be written (disk full, read-only, in use by another run); names it."""


# What SQLite says when the disk, not the program, is the problem (its errors are not OSErrors).
_DATABASE_PROBLEMS = (
    ("disk is full", "the disk is full (results database)"),
    ("readonly database", "the results database cannot be written (read-only file system or file)"),
    ("unable to open database", "the results database cannot be opened (missing folder or no permission)"),
    ("disk i/o error", "input/output error writing the results database (a failing disk or network share?)"),
    ("database is locked", "the results database is locked by another process"),
)


def environment_problem(exc: BaseException) -> str | None:
    """Words for a failure of the machine rather than of nmrcheck or its input (a full or read-only disk), else None."""
    if isinstance(exc, OSError):
        return human_message(exc)
    if type(exc).__module__ == "sqlite3" or type(exc).__name__ in ("OperationalError", "DatabaseError"):
        text = str(exc).lower()
        for fragment, words in _DATABASE_PROBLEMS:
            if fragment in text:
                return words
    return None
