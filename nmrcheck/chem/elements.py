"""Element data for the formula engine: isotope masses and abundances, valences, constants.

Everything comes from the packaged tables ``isotopes.csv`` (NIST SRD 144), ``valences.csv``
and ``constants.csv``; nothing here is typed in twice.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache

from nmrcheck.data import load_table
from nmrcheck.errors import FormulaError, TableError

__all__ = [
    "Element",
    "element",
    "known_elements",
    "electron_mass",
    "proton_mass",
    "hill_sort_key",
]


@dataclass(frozen=True)
class Element:
    """One element: its stable isotopes and its valence.

    Attributes
    ----------
    symbol : str
    mass_numbers : tuple of int
        Stable isotopes, lightest first.
    masses : tuple of float
        Isotope masses, u.
    abundances : tuple of float
        Mole fractions, summing to 1 (renormalised from the table).
    valence : int
        Lowest common valence, as used for RDBE.
    """

    symbol: str
    mass_numbers: tuple[int, ...]
    masses: tuple[float, ...]
    abundances: tuple[float, ...]
    valence: int

    @property
    def monoisotopic_index(self) -> int:
        """Index of the most abundant isotope (the one a monoisotopic mass uses)."""
        return max(range(len(self.abundances)), key=self.abundances.__getitem__)

    @property
    def monoisotopic_mass(self) -> float:
        """Mass of the most abundant isotope, u."""
        return self.masses[self.monoisotopic_index]

    @property
    def nominal_mass(self) -> int:
        """Mass number of the most abundant isotope."""
        return self.mass_numbers[self.monoisotopic_index]


@lru_cache(maxsize=None)
def _elements() -> dict[str, Element]:
    rows = load_table("isotopes")
    grouped: dict[str, list[tuple[int, float, float]]] = {}
    for row in rows:
        try:
            entry = (int(row["mass_number"]), float(row["mass"]), float(row["abundance"]))
        except ValueError:
            raise TableError(f"isotopes.csv: bad number in row {row}") from None
        grouped.setdefault(row["element"], []).append(entry)
    valences = {}
    for row in load_table("valences"):
        valences[row["element"]] = int(row["valence"])
    out = {}
    for symbol, isotopes in grouped.items():
        if symbol not in valences:
            raise TableError(f"valences.csv: no valence for {symbol}")
        isotopes.sort()
        total = sum(a for _, _, a in isotopes)
        if abs(total - 1.0) > 1e-3:
            raise TableError(f"isotopes.csv: abundances of {symbol} sum to {total}, not 1")
        out[symbol] = Element(
            symbol=symbol,
            mass_numbers=tuple(n for n, _, _ in isotopes),
            masses=tuple(m for _, m, _ in isotopes),
            abundances=tuple(a / total for _, _, a in isotopes),
            valence=valences[symbol],
        )
        if out[symbol].monoisotopic_index != 0:
            # The isotope-pattern code counts peaks upwards from M+0; an element whose most
            # abundant isotope is not its lightest (Li, B, Se, ...) would need M-1, M-2 peaks.
            raise TableError(f"isotopes.csv: {symbol}: most abundant isotope is not the lightest")
    return out


def known_elements() -> tuple[str, ...]:
    """Symbols of every element the engine knows, in Hill order."""
    return tuple(sorted(_elements(), key=hill_sort_key))


def element(symbol: str) -> Element:
    """The :class:`Element` for ``symbol``; :class:`FormulaError` names an unknown one."""
    try:
        return _elements()[symbol]
    except KeyError:
        known = ", ".join(known_elements())
        raise FormulaError(f"unknown element {symbol!r} (known: {known})") from None


@lru_cache(maxsize=None)
def _constants() -> dict[str, float]:
    return {row["name"]: float(row["value"]) for row in load_table("constants")}


def electron_mass() -> float:
    """Electron mass, u (CODATA 2018, from ``constants.csv``)."""
    return _constants()["electron_mass"]


def proton_mass() -> float:
    """Proton mass, u (CODATA 2018, from ``constants.csv``)."""
    return _constants()["proton_mass"]


def hill_sort_key(symbol: str) -> tuple[int, str]:
    """Sort key for Hill order when carbon is present: C, H, then alphabetical."""
    return ({"C": 0, "H": 1}.get(symbol, 2), symbol)
