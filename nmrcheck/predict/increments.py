"""The published additive-increment rules as plain calculators over named substituents.

Each function takes substituent classes (keys of the packaged tables, e.g. ``"OR"``, ``"COOR"``,
``"aryl"``) and returns the estimated 1H shift in ppm. :func:`nmrcheck.predict.shifts.predict_shifts`
uses them after perceiving the substituents of a structure; they are public so that a worked
textbook example can be recomputed by hand.

Rules
-----
- Beauchamp & Marquez (J. Chem. Educ. 1997): sp3 C-H, base CH3 0.9 / CH2 1.2 / CH 1.5 plus
  alpha, beta and gamma substituent terms.
- Shoolery's rule: X-CH2-Y, 0.23 + sigma(X) + sigma(Y).
- Pascual, Meier & Simon (Helv. Chim. Acta 1966): C=C-H, 5.25 + Z(gem) + Z(cis) + Z(trans).
- Benzene increments (Pretsch et al. tables): 7.26 + Z(ortho) + Z(meta) + Z(para).
"""

from __future__ import annotations

from collections.abc import Iterable

from nmrcheck.errors import ParameterError
from nmrcheck.predict import _tables

__all__ = [
    "beauchamp_marquez",
    "benzene_increment_shift",
    "pascual_meier_simon",
    "shoolery_methylene",
    "substituent_names",
]

_SP3_BASE = {3: "methyl", 2: "methylene", 1: "methine"}


def _values(table: dict, keys: Iterable[str], field: str, which: str) -> list:
    if isinstance(keys, str):
        raise ParameterError(f"{field} must be a sequence of substituent names, not the single string {keys!r}")
    out = []
    for k in keys:
        if k not in table:
            raise ParameterError(f"{field}: unknown substituent {k!r} for {which}; known: {', '.join(sorted(table))}")
        out.append(table[k])
    return out


def _additive(table: dict, base_ppm: float, positions: dict[str, Iterable[str]], which: str) -> float:
    """``base_ppm`` plus each listed substituent's increment for its position (the k-th column of ``table``)."""
    total = base_ppm
    for k, (name, keys) in enumerate(positions.items()):
        total += sum(v[k] for v in _values(table, keys, name, which))
    return total


def substituent_names(rule: str) -> tuple[str, ...]:
    """Substituent names a rule accepts.

    Parameters
    ----------
    rule : {'beauchamp-marquez', 'shoolery', 'pascual-meier-simon', 'benzene'}
    """
    tables = {
        "beauchamp-marquez": _tables.sp3_increments,
        "shoolery": _tables.shoolery_constants,
        "pascual-meier-simon": _tables.alkene_increments,
        "benzene": _tables.benzene_increments,
    }
    if rule not in tables:
        raise ParameterError(f"rule={rule!r} is not one of {', '.join(sorted(tables))}")
    return tuple(sorted(tables[rule]()))


def beauchamp_marquez(
    n_h: int, *, alpha: Iterable[str] = (), beta: Iterable[str] = (), gamma: Iterable[str] = ()
) -> float:
    """Shift (ppm) of sp3 C-H by the Beauchamp-Marquez alpha/beta/gamma increments.

    Parameters
    ----------
    n_h : {1, 2, 3}
        Hydrogens on the carbon (methine, methylene, methyl); sets the base value.
    alpha, beta, gamma : sequence of str
        Substituents on the carbon itself, on the next carbon and on the carbon after that.

    Examples
    --------
    >>> round(beauchamp_marquez(2, alpha=["C=C", "OR"]), 2)  # allyl ethyl ether, allylic OCH2
    4.1
    """
    if n_h not in _SP3_BASE:
        raise ParameterError(f"n_h={n_h!r}: an sp3 carbon carries 1, 2 or 3 hydrogens")
    positions = {"alpha": alpha, "beta": beta, "gamma": gamma}
    return _additive(_tables.sp3_increments(), _tables.base_value(_SP3_BASE[n_h]).ppm, positions, "the Beauchamp-Marquez table")


def shoolery_methylene(x: str, y: str) -> float:
    """Shift (ppm) of the CH2 in X-CH2-Y by Shoolery's rule.

    Examples
    --------
    >>> round(shoolery_methylene("Cl", "Cl"), 2)  # CH2Cl2, observed 5.30
    5.29
    """
    table = _tables.shoolery_constants()
    sx, sy = _values(table, (x, y), "substituents", "Shoolery's rule")
    return _tables.base_value("shoolery").ppm + sx + sy


def pascual_meier_simon(*, gem: Iterable[str] = (), cis: Iterable[str] = (), trans: Iterable[str] = ()) -> float:
    """Shift (ppm) of an olefinic H by the Pascual-Meier-Simon increments.

    Parameters
    ----------
    gem, cis, trans : sequence of str
        Substituents on the same carbon as the H, and on the other carbon cis or trans to it.
        Use a name ending in ``" conj"`` where the substituent or the double bond is further conjugated.

    Examples
    --------
    >>> round(pascual_meier_simon(gem=["alkyl"], cis=["COOR"]), 2)  # ethyl (E)-crotonate H-3
    6.88
    """
    positions = {"gem": gem, "cis": cis, "trans": trans}
    return _additive(_tables.alkene_increments(), _tables.base_value("ethylene").ppm, positions, "the Pascual-Meier-Simon table")


def benzene_increment_shift(
    *, ortho: Iterable[str] = (), meta: Iterable[str] = (), para: Iterable[str] = ()
) -> float:
    """Shift (ppm) of a benzene ring H from the substituents ortho, meta and para to it.

    Examples
    --------
    >>> round(benzene_increment_shift(ortho=["NO2"], meta=["OR"]), 2)  # 4-nitroanisole H-3/5
    8.12
    """
    positions = {"ortho": ortho, "meta": meta, "para": para}
    return _additive(_tables.benzene_increments(), _tables.base_value("benzene").ppm, positions, "the benzene increment table")
