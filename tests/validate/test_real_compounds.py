"""The validator on real recordings: each pure compound against its own structure, +/-2 H and a neighbour in mass.

Ground truth is each folder's ``structure.mol`` (see the refdata README). The MS feature is
simulated as [M+H]+ of the true formula (m/z from nmrcheck.chem, checked against molmass in
the chem tests); NMR-only runs leave it out. Misses are marked xfail(strict) with the
reason measured when the test was written, not tuned away.
"""

from __future__ import annotations

from pathlib import Path

import pytest

from nmrcheck.chem.adducts import ion_mz
from nmrcheck.chem.formula import Formula
from nmrcheck.processing import process
from nmrcheck.validate import Candidate, MsFeature, candidates_from_file, check_candidate, evidence_from

pytestmark = pytest.mark.refdata

COMPOUNDS = [
    "1047626-52-7", "140-67-0", "141-32-2", "16485-10-2", "2216-51-5", "2591-86-8", "2759-55-9", "403-40-7",
    "492-62-6", "50-78-2", "517920-70-6", "620-71-3", "623-47-2", "623-70-1", "91-64-5",
]

#: Own structure not 'consistent' (measured): why. Empty since the assignment-based check.
OWN_MISSES: dict[str, str] = {}
#: Formulas with 2 H more or fewer that come out 'inconsistent' from the spectrum alone (no MS feature):
#: measured 18 of 30 (15 with the processing of an hour earlier) with the exchangeable H bounded by the solvent (at most one unseen in an aprotic
#: solvent). The others fail because the integrals anchor to the wrong H count about as well as to the
#: right one (integration errors of 10-20 % on these routine spectra) and the unsaturation minimum holds.
NMR_ONLY_FLOOR = 14
#: The issue's goal: at least 90 % (27 of 30) without the MS feature.
NMR_ONLY_GOAL = 27


@pytest.fixture(scope="module")
def recordings(refdata):
    root = Path(refdata) / "jcamp-fid"
    out = {}
    for name in COMPOUNDS:
        folder = root / name
        if not (folder / "1h.fid.dx").exists():
            continue
        (cand,), problems = candidates_from_file(folder / "structure.mol")
        assert not problems
        out[name] = (process(folder / "1h.fid.dx"), Candidate(name, cand.formula, cand.mol, cand.origin))
    return out


def _get(recordings, name):
    if name not in recordings:
        pytest.skip(f"{name} not found in NMRCHECK_REFDATA/jcamp-fid")
    return recordings[name]


def _ms(candidate):
    """[M+H]+ of the structure's formula, checked within 1.5 ppm."""
    return MsFeature(((ion_mz(candidate.formula.monoisotopic_mass, "[M+H]+"), "[M+H]+"),), ppm=1.5)


def _shifted(formula, dh):
    counts = dict(formula.counts)
    counts["H"] += dh
    return Formula(counts)


def _marks(name, misses):
    reason = misses.get(name) if isinstance(misses, dict) else None
    return [pytest.mark.xfail(strict=True, reason=reason)] if reason else []


@pytest.mark.parametrize("name", [pytest.param(n, marks=_marks(n, OWN_MISSES)) for n in COMPOUNDS])
def test_own_structure_is_consistent(recordings, name):
    processed, own = _get(recordings, name)
    v = check_candidate(own, evidence_from(processed, _ms(own)))
    assert v.verdict == "consistent", v.reasons


@pytest.mark.parametrize("dh", [2, -2])
@pytest.mark.parametrize("name", COMPOUNDS)
def test_two_h_more_or_fewer_is_inconsistent(recordings, name, dh):
    processed, own = _get(recordings, name)
    wrong = Candidate(f"{dh:+d}H", _shifted(own.formula, dh))
    v = check_candidate(wrong, evidence_from(processed, _ms(own)))
    assert v.verdict == "inconsistent"


def _caught_without_ms(recordings):
    caught, tried = [], 0
    for name in COMPOUNDS:
        if name not in recordings:
            continue
        processed, own = recordings[name]
        evidence = evidence_from(processed)
        for dh in (2, -2):
            tried += 1
            if check_candidate(Candidate(f"{dh:+d}H", _shifted(own.formula, dh)), evidence).verdict == "inconsistent":
                caught.append(f"{dh:+d}H {name}")
    return caught, tried


def test_two_h_more_or_fewer_from_the_spectrum_alone(recordings):
    caught, tried = _caught_without_ms(recordings)
    if not tried:
        pytest.skip("no jcamp-fid recordings in NMRCHECK_REFDATA")
    assert len(caught) >= NMR_ONLY_FLOOR * tried / 30, caught


@pytest.mark.xfail(strict=True, reason="issue goal not met: 27 of 30 (+/-2 H rejected without MS); measured 18 of 30")
def test_two_h_more_or_fewer_from_the_spectrum_alone_goal(recordings):
    caught, tried = _caught_without_ms(recordings)
    if not tried:
        pytest.skip("no jcamp-fid recordings in NMRCHECK_REFDATA")
    assert len(caught) >= NMR_ONLY_GOAL * tried / 30, caught


@pytest.mark.parametrize("with_ms", [True, False])
@pytest.mark.parametrize("name", COMPOUNDS)
def test_other_compound_of_similar_mass_is_not_consistent(recordings, name, with_ms):
    processed, own = _get(recordings, name)
    others = [c for n, (_, c) in recordings.items() if n != name and c.formula != own.formula]
    other = min(others, key=lambda c: abs(c.formula.monoisotopic_mass - own.formula.monoisotopic_mass))
    v = check_candidate(other, evidence_from(processed, _ms(own) if with_ms else None))
    assert v.verdict != "consistent"


#: True formula (no structure) 'inconsistent' from the spectrum alone, measured: why.
TRUE_FORMULA_MISSES = {
    "2759-55-9": "the broad water line at 1.65 ppm (off its 1.56 table position) is counted and reads 0.57 H at 13 H",
}


@pytest.mark.parametrize("name", [pytest.param(n, marks=_marks(n, TRUE_FORMULA_MISSES)) for n in COMPOUNDS])
def test_true_formula_is_not_inconsistent_from_the_spectrum_alone(recordings, name):
    processed, own = _get(recordings, name)
    v = check_candidate(Candidate("true formula", own.formula), evidence_from(processed))
    assert v.verdict != "inconsistent", v.reasons
