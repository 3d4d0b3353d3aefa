"""Formula engine: molecular formulas, ion species, isotope patterns and ranked formula candidates from HRMS features."""

from nmrcheck.chem.adducts import IonSpecies, ion_composition, ion_mz, known_ions, neutral_mass, parse_ion
from nmrcheck.chem.candidates import (
    FormulaCandidate,
    FormulaSearch,
    IonMatch,
    formula_candidates,
    formula_search,
)
from nmrcheck.chem.enumerate import FormulaTable, enumerate_formulas, parse_element_ranges
from nmrcheck.chem.formula import Formula, parse_formula, rdbe
from nmrcheck.chem.isotopes import IsotopeFit, IsotopePattern, isotope_pattern
from nmrcheck.chem.rules import RULE_NAMES, RULE_PRESETS, RuleReport, check_rules

__all__ = [
    "Formula",
    "FormulaCandidate",
    "FormulaSearch",
    "FormulaTable",
    "IonMatch",
    "IonSpecies",
    "IsotopeFit",
    "IsotopePattern",
    "RULE_NAMES",
    "RULE_PRESETS",
    "RuleReport",
    "check_rules",
    "enumerate_formulas",
    "formula_candidates",
    "formula_search",
    "ion_composition",
    "ion_mz",
    "isotope_pattern",
    "known_ions",
    "neutral_mass",
    "parse_element_ranges",
    "parse_formula",
    "parse_ion",
    "rdbe",
]
