"""Solvent names and the positions of their residual, water, standard and impurity signals."""

from __future__ import annotations

from dataclasses import dataclass

from nmrcheck.data import load_table
from nmrcheck.errors import ParameterError

__all__ = ["SolventSignal", "normalise_solvent", "solvent_signals", "known_solvents"]


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


def known_solvents() -> tuple[str, ...]:
    return tuple(dict.fromkeys(r["solvent"] for r in load_table("solvents")))


def normalise_solvent(name: str | None) -> str | None:
    """The table's name for a solvent as written in a file or by a user ('DMSO' -> 'DMSO-d6'); None if unknown."""
    if not name:
        return None
    key = "".join(name.split()).lower()
    known = {s.lower(): s for s in known_solvents()}
    if key in known:
        return known[key]
    for row in load_table("solvent_names"):
        if row["alias"] == key:
            return row["solvent"]
    return None


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
