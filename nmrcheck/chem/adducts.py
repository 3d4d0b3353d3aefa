"""Ion species in bracket notation (``[M+H]+``, ``[2M+Na]+``, ``[M+HCOO]-``) and the m/z <-> neutral-mass conversion.

m/z = (n*M + gain - loss - z*m_e) / |z|, with gain and loss as neutral-atom masses and the
electron mass ``m_e`` from ``constants.csv``: the electron bookkeeping is exact.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from functools import lru_cache

from nmrcheck.chem.elements import electron_mass
from nmrcheck.chem.formula import Formula, parse_formula
from nmrcheck.data import load_table
from nmrcheck.errors import FormulaError, ParameterError, TableError

__all__ = ["IonSpecies", "parse_ion", "neutral_mass", "ion_mz", "known_ions", "ion_composition"]

_BRACKET = re.compile(r"^\[(\d*)M((?:[+-][^+\-\]]+)*)\](\d*)([+-])([.\u2022\u00b7]?)$")
_TERM = re.compile(r"([+-])(\d*)([^+\-]+)")


@dataclass(frozen=True)
class IonSpecies:
    """An ion species: how the observed ion is made from the neutral molecule M.

    Attributes
    ----------
    notation : str
        Canonical bracket notation, e.g. ``'[M+H]+'``, ``'[M+2H]2+'``, ``'[M]+.'``.
    molecules : int
        Copies of M in the ion (2 for ``[2M+H]+``).
    gain, loss : Formula
        Atoms added to / removed from the ``molecules`` copies of M (neutral-atom basis).
    charge : int
        Signed charge number z.
    electrons : str
        ``'even'`` or ``'odd'``: electron parity of the ion made from an even-electron M.
    intrinsic : bool
        The molecule carries the charge itself (``[M]+`` of a quaternary ammonium or an
        aromatic iminium such as berberine): M is then the even-electron ion, written as its
        neutral-atom composition, and the ion is M less (or plus) ``charge`` electrons.
    """

    notation: str
    molecules: int
    gain: Formula
    loss: Formula
    charge: int
    electrons: str
    intrinsic: bool = False

    @property
    def polarity(self) -> str:
        """``'positive'`` or ``'negative'``."""
        return "positive" if self.charge > 0 else "negative"

    @property
    def mass_shift(self) -> float:
        """gain - loss - z*m_e, u: what the ion weighs beyond ``molecules`` copies of M."""
        return self.gain.monoisotopic_mass - self.loss.monoisotopic_mass - self.charge * electron_mass()

    def __str__(self) -> str:
        return self.notation


@lru_cache(maxsize=None)
def _fragments() -> dict[str, tuple[Formula, int]]:
    out = {}
    for row in load_table("ion_fragments"):
        try:
            out[row["name"]] = (parse_formula(row["formula"]), int(row["charge"]))
        except (FormulaError, ValueError) as exc:
            raise TableError(f"ion_fragments.csv row {row['name']!r}: {exc}") from None
    return out


def _fragment(text: str, ion_text: str) -> tuple[Formula, int]:
    table = _fragments()
    if text in table:
        return table[text]
    try:
        formula = parse_formula(text)
    except FormulaError as exc:
        detail = str(exc).replace(f"formula {text!r}: ", "")
        raise FormulaError(f"ion {ion_text!r}: {text!r} is neither a known group nor a formula ({detail})") from None
    # A formula spelled differently from a tabled charged group (C2H3O2 for acetate) is
    # still that group.
    for formula_t, charge in table.values():
        if charge and formula_t == formula:
            return formula, charge
    return formula, 0


def _format_term(sign: str, count: int, name: str) -> str:
    return f"{sign}{count if count > 1 else ''}{name}"


@lru_cache(maxsize=512)
def parse_ion(text: str) -> IonSpecies:
    """Parse an ion species written in bracket notation.

    Accepted: ``[nM(+|-)[k]GROUP...]`` followed by the charge (``+``, ``2+``, ``-``, ``3-``)
    and, for a radical ion, a dot (``[M]+.``). GROUP is a tabled group (H, Na, K, NH4, Cl,
    Br, HCOO, CH3COO, FA, ACN, MeOH, Hex, ...; see ``ion_fragments.csv``) or any neutral
    formula (``H2O``, ``CO2``, ``C6H10O5``). The charges the groups bring must add up to the
    stated charge (a radical ion differs by one electron). ``[M]+`` (``[M]2+``, ``[M]-``)
    without a dot is a permanently charged molecule: M is the even-electron ion itself.

    Raises
    ------
    FormulaError
        Malformed notation, an unknown group or element, or a charge that does not match.

    Examples
    --------
    >>> parse_ion("[M+Na]+").gain.hill
    'Na'
    >>> parse_ion("[M+FA-H]-").charge
    -1
    """
    if not isinstance(text, str):
        raise FormulaError(f"ion species must be text such as '[M+H]+', got {text!r}")
    s = re.sub(r"\s+", "", text)
    m = _BRACKET.match(s)
    if m is None:
        hint = ""
        if not s.startswith("["):
            hint = " (write it in brackets with the charge outside, e.g. '[M+H]+')"
        raise FormulaError(f"ion {text!r}: not bracket notation such as '[M+H]+' or '[M-H]-'{hint}")
    mult_txt, terms_txt, z_txt, z_sign, radical = m.groups()
    molecules = int(mult_txt) if mult_txt else 1
    if molecules < 1 or molecules > 4:
        raise FormulaError(f"ion {text!r}: {molecules} molecules of M; 1 to 4 are supported")
    z_abs = int(z_txt) if z_txt else 1
    if z_abs < 1 or z_abs > 10:
        raise FormulaError(f"ion {text!r}: charge {z_abs} is outside 1 to 10")
    charge = z_abs if z_sign == "+" else -z_abs
    gain = Formula()
    loss = Formula()
    brought = 0
    parts = []
    for sign, count_txt, name in _TERM.findall(terms_txt):
        count = int(count_txt) if count_txt else 1
        if count < 1:
            raise FormulaError(f"ion {text!r}: zero count in {sign}{count_txt}{name}")
        formula, q = _fragment(name, text)
        if sign == "+":
            gain = gain + formula * count
            brought += q * count
        else:
            loss = loss + formula * count
            brought -= q * count
        parts.append(_format_term(sign, count, name))
    electrons_moved = charge - brought
    if not terms_txt and not radical and molecules == 1 and abs(charge) <= 3:
        # '[M]+': no group brings the charge, so the molecule is itself the (even-electron) ion.
        return IonSpecies(
            notation=f"[M]{z_abs if z_abs > 1 else ''}{z_sign}", molecules=1, gain=Formula(), loss=Formula(),
            charge=charge, electrons="even", intrinsic=True,
        )
    if electrons_moved == 0:
        if radical:
            raise FormulaError(f"ion {text!r}: the groups already carry charge {charge:+d}; drop the radical dot")
        electrons = "even"
    elif abs(electrons_moved) == 1 and radical:
        electrons = "odd"
    else:
        what = f"{brought:+d}" if brought else "0"
        raise FormulaError(
            f"ion {text!r}: the groups bring charge {what} but the ion is marked {z_txt}{z_sign}"
            + ("" if brought else " (a radical ion needs the dot, e.g. '[M]+.')")
        )
    # Atoms that are both gained and lost cancel in the composition but stay in the notation.
    common = {s: min(gain.count(s), loss.count(s)) for s in gain.counts if loss.count(s)}
    if common:
        both = Formula(common)
        gain, loss = gain - both, loss - both
    z_label = f"{z_abs if z_abs > 1 else ''}{z_sign}"
    notation = f"[{molecules if molecules > 1 else ''}M{''.join(parts)}]{z_label}{'.' if radical else ''}"
    return IonSpecies(
        notation=notation, molecules=molecules, gain=gain, loss=loss, charge=charge, electrons=electrons
    )


def known_ions(polarity: str | None = None) -> tuple[IonSpecies, ...]:
    """The usual ion species of ``ion_species.csv`` (optionally of one polarity)."""
    if polarity not in (None, "positive", "negative"):
        raise ParameterError(f"polarity: must be 'positive' or 'negative', got {polarity!r}")
    out = []
    for row in load_table("ion_species"):
        ion = parse_ion(row["notation"])
        if polarity is None or ion.polarity == polarity:
            out.append(ion)
    return tuple(out)


def _check_mz(mz: float, what: str = "m/z") -> float:
    try:
        value = float(mz)
    except (TypeError, ValueError):
        raise ParameterError(f"{what}: not a number: {mz!r}") from None
    if not value > 0 or value != value:
        raise ParameterError(f"{what}: must be positive, got {mz!r}")
    if value > MZ_MAX:
        raise ParameterError(f"{what}: {value:g} is beyond the {MZ_MAX:g} this engine handles")
    return value


MZ_MAX = 5000.0
"""Largest m/z (and neutral mass) accepted: beyond it element ranges and rules run out."""


def neutral_mass(mz: float, ion: IonSpecies | str) -> float:
    """Monoisotopic mass of the neutral M, u, from the observed ``mz`` of ``ion``.

    Raises
    ------
    ParameterError
        Non-positive or absurd m/z, or one that leaves no positive neutral mass.

    Examples
    --------
    >>> round(neutral_mass(195.087652, "[M+H]+"), 6)
    194.080376
    """
    species = parse_ion(ion) if isinstance(ion, str) else ion
    value = _check_mz(mz)
    mass = (value * abs(species.charge) - species.mass_shift) / species.molecules
    if not mass > 0:
        raise ParameterError(
            f"m/z {value:g} as {species.notation}: leaves no positive neutral mass ({mass:.4f} u)"
        )
    return mass


def ion_mz(neutral_mass: float, ion: IonSpecies | str) -> float:
    """m/z of ``ion`` made from a neutral molecule of monoisotopic mass ``neutral_mass``, u.

    Examples
    --------
    >>> round(ion_mz(180.063388, "[M+Na]+"), 6)
    203.052609
    """
    species = parse_ion(ion) if isinstance(ion, str) else ion
    mass = _check_mz(neutral_mass, "neutral mass")
    return (species.molecules * mass + species.mass_shift) / abs(species.charge)


def ion_composition(formula: Formula, ion: IonSpecies | str) -> Formula:
    """Elemental composition of the ion made from ``formula``.

    Raises
    ------
    FormulaError
        The ion takes away atoms ``formula`` does not have (``[M-H2O+H]+`` of a formula
        without O).
    """
    species = parse_ion(ion) if isinstance(ion, str) else ion
    return formula * species.molecules + species.gain - species.loss
