"""The whole processor on the real recordings: reference position and proton count against the structure."""

from __future__ import annotations

import pytest

from nmrcheck.processing import process
from nmrcheck.processing.reference import find_peak
from nmrcheck.processing.solvents import solvent_signals

from recordings import count_holds, structure_h

JCAMP = ["1047626-52-7", "140-67-0", "141-32-2", "16485-10-2", "2216-51-5", "2591-86-8", "2759-55-9",
         "403-40-7", "492-62-6", "50-78-2", "517920-70-6", "620-71-3", "623-47-2", "623-70-1", "91-64-5"]
BRUKER = ["aminoacid-mix-d2o-600", "aminoacid-mix-undried-1", "culture-medium-d2o", "glucose-d2o-600"]

#: Recordings whose observed total does not (yet) reach the structure's H count, with the
#: figure measured when this list was last updated. Kept visible, not tuned around.
COUNT_MISSES: dict[str, str] = {}

_cache: dict[str, object] = {}


def _processed(refdata, name):
    if name not in _cache:
        path = refdata / "bruker-raw" / name if name in BRUKER else refdata / "jcamp-fid" / name / "1h.fid.dx"
        _cache[name] = process(path)
    return _cache[name]


@pytest.mark.parametrize("name", JCAMP + BRUKER)
def test_reference_signal_at_table_value(refdata, name):
    """After referencing, the signal that set the axis sits within 0.01 ppm of its table value
    (solvents.csv: Gottlieb 1997 / Fulmer 2010 residual-solvent tables, from memory)."""
    p = _processed(refdata, name)
    if p.reference.kind == "none":
        pytest.xfail(f"no reference line found: {p.reference.name}")
    at = find_peak(p.spectrum, p.reference.ppm, window_ppm=0.05, min_snr=5.0)
    assert at is not None and abs(at - p.reference.ppm) <= 0.01
    listed = {s.ppm for s in solvent_signals(p.spectrum.solvent)}
    assert p.reference.ppm in listed


@pytest.mark.parametrize("name", JCAMP)
def test_total_h_matches_structure(refdata, name, request):
    """Observed total H range overlaps [carbon-bound H, all H] of structure.mol (RDKit count):
    OH/NH/SH may be broad or missing, so they widen the allowance (common practice). An
    ambiguous count is right only when its offered totals bracket the truth (140-67-0: 6 or
    13 H for 12, every 2 H signal of the relaxation-weighted spectrum reading about 1 H)."""
    if name in COUNT_MISSES:
        request.applymarker(pytest.mark.xfail(reason=COUNT_MISSES[name], strict=True))
    p = _processed(refdata, name)
    carbon, exch = structure_h(refdata / "jcamp-fid" / name / "structure.mol")
    c = p.count
    assert c is not None
    assert count_holds(c, carbon, exch), (
        f"{name}: observed {c.total_h:.2f} H ({c.total_h_low:.1f}-{c.total_h_high:.1f}), ambiguous {c.alternative_totals}, "
        f"structure {carbon} C-H + {exch} exchangeable"
    )


def test_glucose_beta_anomer_beside_presaturated_water_is_not_the_water_foot(refdata):
    """glucose-d2o-600 (presaturated D2O): the beta-anomeric H1 doublet at 4.64 ppm stands on the
    foot of the residual water. Glucose at equilibrium is about 36 % alpha and 64 % beta (Angyal,
    Adv. Carbohydr. Chem. Biochem. 1984, from memory), so beta-H1/alpha-H1 should be about 1.8;
    presaturation 90 Hz away bleaches the beta doublet somewhat, so anything from 0.5 to 2.2 is
    accepted. Integrated without a local baseline the water foot made it 5.5."""
    p = _processed(refdata, "glucose-d2o-600")
    alpha = [r for r in p.regions if r.counted and r.peak_ppm is not None and 5.19 <= r.peak_ppm <= 5.25]
    beta = [r for r in p.regions if r.counted and r.peak_ppm is not None and 4.60 <= r.peak_ppm <= 4.68]
    assert alpha and beta
    ratio = sum(r.integral for r in beta) / sum(r.integral for r in alpha)
    assert 0.5 <= ratio <= 2.2, ratio
