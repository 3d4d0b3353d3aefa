"""Solvent names and the positions of their residual, water, standard and impurity signals."""

from __future__ import annotations

import re
from collections.abc import Iterable
from dataclasses import dataclass
from functools import lru_cache

from nmrcheck.data import load_table
from nmrcheck.errors import ParameterError, TableError

__all__ = ["AQUEOUS", "SolventSignal", "normalise_solvent", "require_solvent", "solvent_signals", "known_solvents"]

#: Water-based solvents: HDO moves with temperature and is distorted by suppression, so it
#: never overrules an internal standard, and the water band is left out when counting.
AQUEOUS = frozenset({"D2O", "H2O/D2O"})


@dataclass(frozen=True)
class SolventSignal:
    solvent: str
    kind: str
    """'residual', 'water', 'reference' or 'impurity'."""
    name: str
    ppm: float
    multiplicity: str
    protons: int
    source: str


@lru_cache(maxsize=None)
def known_solvents() -> tuple[str, ...]:
    """Canonical names of the solvents in ``solvents.csv``, in table order."""
    return tuple(dict.fromkeys(r["solvent"] for r in load_table("solvents")))


def _alias_key(name: str) -> str:
    return re.sub(r"[\s_]+", "", name.strip().lower())


@lru_cache(maxsize=None)
def _aliases() -> dict[str, str]:
    known = set(known_solvents())
    out = {_alias_key(s): s for s in known}
    for row in load_table("solvent_aliases"):
        if row["solvent"] not in known:
            raise TableError(f"solvent_aliases.csv: alias {row['alias']!r} names {row['solvent']!r}, which solvents.csv does not list")
        out.setdefault(_alias_key(row["alias"]), row["solvent"])
    return out


def normalise_solvent(name: str | None) -> str | None:
    """The table's name for a solvent as written in a file or by a user; None if unknown.

    Matching ignores case, spaces and underscores ('DMSO' -> 'DMSO-d6', 'MeOD' -> 'CD3OD',
    'H2O+D2O' -> 'H2O/D2O'). This is the one solvent vocabulary of the package.

    Examples
    --------
    >>> normalise_solvent("dmso"), normalise_solvent("MeOD"), normalise_solvent("H2O+D2O"), normalise_solvent("xylene")
    ('DMSO-d6', 'CD3OD', 'H2O/D2O', None)
    """
    if not isinstance(name, str) or not name.strip():
        return None
    return _aliases().get(_alias_key(name))


def require_solvent(name: str | None, *, among: Iterable[str] | None = None) -> str:
    """Like :func:`normalise_solvent`, but an unknown name (or one outside ``among``) is an error.

    Raises
    ------
    ParameterError
        Naming the value and the solvents accepted.
    """
    allowed = tuple(among) if among is not None else known_solvents()
    solvent = normalise_solvent(name)
    if solvent is None:
        raise ParameterError(f"solvent={name!r} is not a known NMR solvent; known: {', '.join(allowed)}")
    if solvent not in allowed:
        raise ParameterError(f"solvent={name!r} ({solvent}) is not one of {', '.join(allowed)}")
    return solvent


def solvent_signals(solvent: str, *, kind: str | None = None) -> tuple[SolventSignal, ...]:
    """Signals listed for ``solvent`` (a name as accepted by :func:`normalise_solvent`)."""
    name = normalise_solvent(solvent)
    if name is None:
        raise ParameterError(f"solvent: {solvent!r} is not in the solvent table ({', '.join(known_solvents())})")
    rows = [
        SolventSignal(r["solvent"], r["kind"], r["name"], float(r["ppm"]), r["multiplicity"], int(r["protons"]), r["source"])
        for r in load_table("solvents")
        if r["solvent"] == name
    ]
    if kind is not None:
        rows = [r for r in rows if r.kind == kind]
    return tuple(rows)
