"""What a structure should look like in a 1H spectrum: estimated shifts, shift regions, exchangeable H."""

from nmrcheck.predict.exchange import (
    SOLVENTS,
    ExchangeableSite,
    ExchangeRule,
    VisibleHydrogens,
    exchangeable_bound,
    exchangeable_hydrogens,
    expected_visible_h,
    solvent_exchange_rules,
)
from nmrcheck.predict.regions import SHIFT_REGIONS, ShiftRegion, bin_by_region, region_of
from nmrcheck.predict.shifts import Environment, PredictedShift, group_environments, predict_shifts

__all__ = [
    "SHIFT_REGIONS",
    "SOLVENTS",
    "Environment",
    "ExchangeRule",
    "ExchangeableSite",
    "PredictedShift",
    "ShiftRegion",
    "VisibleHydrogens",
    "bin_by_region",
    "exchangeable_bound",
    "exchangeable_hydrogens",
    "expected_visible_h",
    "group_environments",
    "predict_shifts",
    "region_of",
    "solvent_exchange_rules",
]
