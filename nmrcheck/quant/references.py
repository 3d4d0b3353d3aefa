"""What an amount is measured against: an internal standard, the residual solvent signal, or an external calibration.

Each is a frozen record of what the user knows about the reference (its amount
or concentration, proton count, where its signal is); :mod:`nmrcheck.quant.amount`
turns it into an amount for the analyte.
"""

from __future__ import annotations

import logging
from dataclasses import dataclass
from functools import lru_cache

from nmrcheck.data import load_table
from nmrcheck.errors import ParameterError
from nmrcheck.processing.solvents import normalise_solvent

__all__ = [
    "StandardInfo",
    "StandardReference",
    "SolventReference",
    "SolventInfo",
    "ExternalCalibration",
    "standard_info",
    "known_standards",
    "solvent_info",
    "molar_mass_of",
]

log = logging.getLogger("nmrcheck")


def _positive(name: str, value: float | None, *, allow_none: bool = True) -> None:
    if value is None:
        if not allow_none:
            raise ParameterError(f"{name}: a value is required")
        return
    if not (value > 0) or value != value or value == float("inf"):
        raise ParameterError(f"{name}: must be a positive finite number, got {value!r}")


def checked_range(name: str, value: tuple[float, float] | None) -> tuple[float, float] | None:
    """``value`` as (high, low) ppm; ``name`` is the field an error names."""
    if value is None:
        return None
    try:
        a, b = (float(v) for v in value)
    except (TypeError, ValueError):
        raise ParameterError(f"{name}: expected two shifts (ppm), got {value!r}") from None
    if a == b:
        raise ParameterError(f"{name}: the two ends are equal ({a} ppm)")
    return (max(a, b), min(a, b))


def molar_mass_of(smiles: str) -> float:
    """Average molar mass (g/mol) of a SMILES through RDKit (isotope labels count with their isotope mass)."""
    from rdkit import Chem, RDLogger
    from rdkit.Chem import Descriptors

    RDLogger.DisableLog("rdApp.*")
    mol = Chem.MolFromSmiles(smiles)
    if mol is None:
        raise ParameterError(f"smiles: RDKit cannot read {smiles!r}")
    return float(Descriptors.MolWt(mol))


@dataclass(frozen=True)
class StandardInfo:
    """One signal of a tabulated internal standard in one solvent."""

    name: str
    solvent: str
    signal_ppm: float
    search_ppm: float
    half_width_ppm: float
    n_h: int
    molar_mass: float
    t1_s: float | None
    source: str


@lru_cache(maxsize=None)
def _standards() -> tuple[StandardInfo, ...]:
    out = []
    for row in load_table("standards"):
        out.append(
            StandardInfo(
                name=row["name"],
                solvent=row["solvent"],
                signal_ppm=float(row["signal_ppm"]),
                search_ppm=float(row["search_ppm"]),
                half_width_ppm=float(row["half_width_ppm"]),
                n_h=int(row["n_h"]),
                molar_mass=molar_mass_of(row["smiles"]),
                t1_s=float(row["t1_s"]) if row["t1_s"] else None,
                source=row["source"],
            )
        )
    return tuple(out)


@lru_cache(maxsize=None)
def _aliases() -> dict[str, str]:
    names: dict[str, str] = {}
    for row in load_table("standards"):
        names[row["name"].lower()] = row["name"]
        for alias in filter(None, (a.strip() for a in row["aliases"].split(";"))):
            names.setdefault(alias.lower(), row["name"])
    return names


def known_standards() -> tuple[str, ...]:
    """Names of the tabulated internal standards."""
    return tuple(sorted({s.name for s in _standards()}))


def standard_info(name: str, solvent: str | None = None) -> tuple[StandardInfo, ...]:
    """Table rows of standard ``name`` (or an alias) in ``solvent``, most protons first.

    When the solvent has no row, the rows of every solvent are returned (the
    caller warns that the shift is a guess there).
    """
    key = _aliases().get(name.strip().lower())
    if key is None:
        raise ParameterError(f"standard: {name!r} is not in the standards table (known: {', '.join(known_standards())}); give range_ppm, n_h and molar_mass for another standard")
    rows = [s for s in _standards() if s.name == key]
    solv = normalise_solvent(solvent) if solvent else None
    in_solvent = [s for s in rows if s.solvent == solv]
    chosen = in_solvent or rows
    return tuple(sorted(chosen, key=lambda s: -s.n_h))


@dataclass(frozen=True)
class StandardReference:
    """An internal standard of known amount (``nmol``) or concentration (``conc_mM``) in the tube.

    A tabulated standard needs only its ``name``; any other is defined by
    ``range_ppm``, ``n_h`` and ``molar_mass`` (or ``smiles``). ``purity`` is the
    mass fraction of the standard material (certificate value), applied when the
    amount was worked out from a weighed mass; ``uncertainty_pct`` is the relative
    standard uncertainty of the stated amount (weighing, volume, purity).
    """

    name: str
    nmol: float | None = None
    conc_mM: float | None = None
    volume_ul: float | None = None
    """Volume of the solution in the tube, microlitres (links nmol and mM)."""
    range_ppm: tuple[float, float] | None = None
    n_h: int | None = None
    molar_mass: float | None = None
    smiles: str | None = None
    purity: float = 1.0
    uncertainty_pct: float = 1.0
    t1_s: float | None = None

    def __post_init__(self) -> None:
        if (self.nmol is None) == (self.conc_mM is None):
            raise ParameterError("standard: give exactly one of nmol or conc_mM for the standard's amount")
        _positive("standard nmol", self.nmol)
        _positive("standard conc_mM", self.conc_mM)
        _positive("volume_ul", self.volume_ul)
        _positive("standard molar_mass", self.molar_mass)
        if not (0 < self.purity <= 1):
            raise ParameterError(f"purity: must be a mass fraction in (0, 1], got {self.purity}")
        if self.uncertainty_pct < 0:
            raise ParameterError(f"uncertainty_pct: must not be negative, got {self.uncertainty_pct}")
        if self.n_h is not None and self.n_h <= 0:
            raise ParameterError(f"n_h: the standard's signal must hold at least one proton, got {self.n_h}")
        object.__setattr__(self, "range_ppm", checked_range("standard range_ppm", self.range_ppm))
        if self.range_ppm is not None and self.n_h is None:
            raise ParameterError("n_h: a standard given by range_ppm needs the number of protons of that signal")

    @classmethod
    def from_mass(cls, name: str, *, mass_ug: float, molar_mass: float | None = None, purity: float = 1.0, **kw) -> "StandardReference":
        """A standard of which ``mass_ug`` micrograms (weighed, times ``purity``) are in the tube."""
        _positive("mass_ug", mass_ug, allow_none=False)
        mm = molar_mass
        if mm is None:
            smiles = kw.get("smiles")
            mm = molar_mass_of(smiles) if smiles else standard_info(name)[0].molar_mass
        return cls(name, nmol=mass_ug * purity / mm * 1000.0, molar_mass=mm, purity=purity, **kw)


@dataclass(frozen=True)
class SolventInfo:
    solvent: str
    molar_mass: float
    density_g_ml: float
    d_positions: int
    residual_name: str
    residual_ppm: float
    half_width_ppm: float
    typical_atom_pct_d: float
    reliable: bool
    source: str


def solvent_info(solvent: str) -> SolventInfo:
    """The quantitative data of a deuterated solvent (density, deuterated positions, residual signal)."""
    name = normalise_solvent(solvent)
    for row in load_table("quant_solvents"):
        if row["solvent"] == name:
            return SolventInfo(
                solvent=name,
                molar_mass=molar_mass_of(row["smiles"]),
                density_g_ml=float(row["density_g_ml"]),
                d_positions=int(row["d_positions"]),
                residual_name=row["residual_name"],
                residual_ppm=float(row["residual_ppm"]),
                half_width_ppm=float(row["half_width_ppm"]),
                typical_atom_pct_d=float(row["typical_atom_pct_d"]),
                reliable=row["reliable"] == "yes",
                source=row["source"],
            )
    known = ", ".join(r["solvent"] for r in load_table("quant_solvents"))
    raise ParameterError(f"solvent: {solvent!r} has no quantitative solvent data (known: {known})")


@dataclass(frozen=True)
class SolventReference:
    """The residual protio signal of the deuterated solvent as the reference.

    The residual proton amount is ``density * volume / M * positions * (1 - D)``,
    with ``D`` the lot's deuteration grade (atom % D / 100): the result depends on
    the solvent lot, and on water uptake and proton exchange since the bottle was
    opened. ``uncertainty_pct`` is the relative uncertainty of the residual
    protons; the default of 20 % reflects a stated grade of e.g. 99.8 % being a
    minimum (common practice; measure the lot against a standard to do better).
    """

    solvent: str
    deuteration_pct: float
    volume_ul: float
    range_ppm: tuple[float, float] | None = None
    uncertainty_pct: float = 20.0

    def __post_init__(self) -> None:
        if not (50.0 <= self.deuteration_pct < 100.0):
            raise ParameterError(f"deuteration_pct: atom % D must lie in [50, 100), got {self.deuteration_pct}")
        _positive("volume_ul", self.volume_ul, allow_none=False)
        if normalise_solvent(self.solvent) is None:
            raise ParameterError(f"solvent: {self.solvent!r} is not in the solvent table")
        object.__setattr__(self, "range_ppm", checked_range("solvent range_ppm", self.range_ppm))

    def residual_nmol_h(self) -> float:
        """nmol of residual protons of the solvent in the tube."""
        info = solvent_info(self.solvent)
        mol_solvent = info.density_g_ml * self.volume_ul * 1e-3 / info.molar_mass
        return mol_solvent * info.d_positions * (1.0 - self.deuteration_pct / 100.0) * 1e9


@dataclass(frozen=True)
class ExternalCalibration:
    """A calibration spectrum of a known sample on the same probe, transferred by reciprocity (PULCON).

    ``calibration`` is the processed calibration recording; ``conc_mM`` the
    concentration of the calibration compound in its tube, ``n_h`` and
    ``range_ppm`` its signal; ``volume_ul`` the analyte tube's solution volume
    (needed for nmol). ``uncertainty_pct`` is the relative uncertainty of the
    calibration concentration; the transfer itself adds ``transfer_pct``
    (agreement of about 1-2 % reported by Wider & Dreier, J. Am. Chem. Soc. 2006,
    128, 2571, from memory, for matched tubes and tuned probes).
    """

    calibration: object
    conc_mM: float
    range_ppm: tuple[float, float]
    n_h: int
    volume_ul: float | None = None
    uncertainty_pct: float = 1.0
    transfer_pct: float = 2.0

    def __post_init__(self) -> None:
        _positive("calibration conc_mM", self.conc_mM, allow_none=False)
        _positive("volume_ul", self.volume_ul)
        if self.n_h <= 0:
            raise ParameterError(f"n_h: the calibration signal must hold at least one proton, got {self.n_h}")
        object.__setattr__(self, "range_ppm", checked_range("calibration range_ppm", self.range_ppm))
        if not hasattr(self.calibration, "spectrum"):
            raise ParameterError("calibration: expected a processed calibration recording (nmrcheck.processing.process result)")
