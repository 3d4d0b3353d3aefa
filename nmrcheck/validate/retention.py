"""Retention time against lipophilicity: does a candidate elute where its logP says it should?

On a reversed-phase gradient, retention rises roughly linearly with the octanol-water
partition coefficient. Each candidate structure gets Crippen's atom-contribution logP
(Wildman & Crippen, J. Chem. Inf. Comput. Sci. 1999, 39, 868; RDKit's ``Crippen.MolLogP``).
The plate's own relation, retention time (minutes) = intercept + slope * logP, is fitted
robustly (Theil-Sen: the median of pairwise slopes, resistant to the wrong wells) over the
wells whose candidate the other checks call consistent, or taken from a calibration of
reference compounds run on the same gradient. The tolerance is three robust standard
deviations of the fit's residuals (1.4826 x their median absolute deviation), never below
:data:`MIN_TOLERANCE_MIN`. A candidate whose predicted time misses the observed one by
more than that gets a warning: the retention check never contradicts on its own, since
logP ignores ionisation and shape.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from nmrcheck.errors import ParameterError
from nmrcheck.validate.records import CheckResult

__all__ = [
    "RetentionModel",
    "crippen_logp",
    "fit_retention",
    "check_retention",
    "MIN_POINTS",
    "MIN_TOLERANCE_MIN",
    "RETENTION_WEIGHT",
]

MIN_POINTS = 5
"""Wells (or reference compounds) a fit needs at least."""
MIN_TOLERANCE_MIN = 0.3
"""Smallest tolerance, minutes: about the width of a fraction-collector window and of an
LC peak on a 10-20 min gradient (common practice)."""
RETENTION_WEIGHT = 1.0
"""Weight of the retention check among the validator's checks (a supporting check)."""


@dataclass(frozen=True)
class RetentionModel:
    """retention time = intercept + slope * logP, with a tolerance.

    Attributes
    ----------
    slope_min : float
        Minutes per logP unit.
    intercept_min : float
        Minutes at logP 0.
    tolerance_min : float
        Largest miss, minutes, still called agreeing.
    points : int
        Wells or reference compounds the fit used.
    source : str
        What it was fitted on ('plate: 14 wells with a consistent candidate', 'calibration FILE').
    """

    slope_min: float
    intercept_min: float
    tolerance_min: float
    points: int
    source: str

    def predict(self, logp: float) -> float:
        """Retention time, minutes, of a compound of this logP."""
        return self.intercept_min + self.slope_min * logp

    def describe(self) -> str:
        return (f"t = {self.intercept_min:.2f} + {self.slope_min:.2f} x logP min, +/- {self.tolerance_min:.2f} min "
                f"({self.source})")

    def as_dict(self) -> dict:
        return {"slope_min": round(self.slope_min, 4), "intercept_min": round(self.intercept_min, 4),
                "tolerance_min": round(self.tolerance_min, 4), "points": self.points, "source": self.source}


def crippen_logp(mol) -> float:
    """Crippen logP of an RDKit molecule (Wildman & Crippen 1999, as implemented in RDKit)."""
    from rdkit.Chem import Crippen

    return float(Crippen.MolLogP(mol))


def fit_retention(points: Sequence[tuple[float, float]], *, source: str = "plate") -> RetentionModel:
    """Theil-Sen fit of retention time (minutes) against logP.

    Parameters
    ----------
    points : sequence of (logP, minutes)
    source : str
        Said in the model's description.

    Raises
    ------
    ParameterError
        Fewer than :data:`MIN_POINTS` points, no spread in logP, or retention that does not
        rise with logP (not a reversed-phase relation to check against).
    """
    from scipy.stats import theilslopes

    data = np.asarray(points, dtype=np.float64).reshape(-1, 2)
    data = data[np.all(np.isfinite(data), axis=1)]
    if data.shape[0] < MIN_POINTS:
        raise ParameterError(f"retention fit: {data.shape[0]} points; at least {MIN_POINTS} are needed")
    logp, rt = data[:, 0], data[:, 1]
    if np.ptp(logp) < 1.0:
        raise ParameterError(f"retention fit: logP spans only {np.ptp(logp):.2f}; at least one unit is needed")
    # "joint": the intercept is the median of t - slope * logP, robust like the slope itself.
    slope, intercept, _, _ = theilslopes(rt, logp, method="joint")
    if not slope > 0:
        raise ParameterError(f"retention fit: retention does not rise with logP (slope {slope:.3f} min per unit)")
    residuals = rt - (intercept + slope * logp)
    sigma = 1.4826 * float(np.median(np.abs(residuals - np.median(residuals))))
    return RetentionModel(float(slope), float(intercept), max(3.0 * sigma, MIN_TOLERANCE_MIN), int(data.shape[0]), source)


def check_retention(mol, rt_min: float | None, model: RetentionModel | None) -> CheckResult:
    """The 'retention' check of one candidate structure observed at ``rt_min`` minutes.

    Not applicable without a structure (a formula has no logP), without an observed time
    or without a model; 'warn' when the miss exceeds the model's tolerance, 'pass' otherwise.
    """
    name = "retention"
    if mol is None:
        return CheckResult(name, "not-applicable", "-", "-", "a formula without a structure has no logP to predict retention from", RETENTION_WEIGHT)
    if rt_min is None or not math.isfinite(rt_min):
        return CheckResult(name, "not-applicable", "-", "-", "no retention time given for this well", RETENTION_WEIGHT)
    if model is None:
        return CheckResult(name, "not-applicable", "-", "-", "no retention model (too few consistent wells and no calibration)", RETENTION_WEIGHT)
    logp = crippen_logp(mol)
    predicted = model.predict(logp)
    miss = rt_min - predicted
    status = "pass" if abs(miss) <= model.tolerance_min else "warn"
    direction = "later" if miss > 0 else "earlier"
    text = (f"elutes at {rt_min:.2f} min, {abs(miss):.2f} min {direction} than its Crippen logP {logp:.2f} predicts "
            f"({predicted:.2f} min), {'within' if status == 'pass' else 'beyond'} the {model.tolerance_min:.2f} min tolerance")
    return CheckResult(
        name, status, f"{rt_min:.2f} min", f"{predicted:.2f} +/- {model.tolerance_min:.2f} min (logP {logp:.2f})", text,
        RETENTION_WEIGHT, {"logp": logp, "predicted_min": predicted, "miss_min": miss},
    )


def calibration_model(path) -> RetentionModel:
    """The retention model of a calibration file (:mod:`nmrcheck.io.retention_calibration`).

    Raises
    ------
    InputFileError
        Unreadable file, or a SMILES RDKit cannot read (the message names the line).
    ParameterError
        Too few references or no usable fit.
    """
    from pathlib import Path

    from nmrcheck.errors import InputFileError
    from nmrcheck.io.retention_calibration import read_retention_calibration
    from nmrcheck.io.structures import mol_from_smiles

    points = []
    for ref in read_retention_calibration(path):
        logp = ref.logp
        if logp is None:
            mol, problem = mol_from_smiles(ref.smiles)
            if problem:
                raise InputFileError(path, f"line {ref.line}: {problem}")
            logp = crippen_logp(mol)
        points.append((logp, ref.rt_min))
    return fit_retention(points, source=f"calibration {Path(path).name}")


def with_retention(verdicts, rt_min: float | None, model: RetentionModel | None) -> tuple:
    """The verdicts with each candidate's 'retention' check added (a warning joins its reasons; verdicts unchanged)."""
    import dataclasses

    out = []
    for v in verdicts:
        result = check_retention(v.candidate.mol, rt_min, model)
        reasons = v.reasons + ((f"retention: {result.explanation}",) if result.status == "warn" else ())
        out.append(dataclasses.replace(v, checks=v.checks + (result,), reasons=reasons))
    return tuple(out)
