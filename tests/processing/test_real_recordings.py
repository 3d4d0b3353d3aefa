"""The whole processor on the real recordings: reference position and proton count against the structure."""

from __future__ import annotations

import pytest

from nmrcheck.processing import process
from nmrcheck.processing.reference import find_peak
from nmrcheck.processing.solvents import solvent_signals

JCAMP = ["1047626-52-7", "140-67-0", "141-32-2", "16485-10-2", "2216-51-5", "2591-86-8", "2759-55-9",
         "403-40-7", "492-62-6", "50-78-2", "517920-70-6", "620-71-3", "623-47-2", "623-70-1", "91-64-5"]
BRUKER = ["aminoacid-mix-d2o-600", "aminoacid-mix-undried-1", "culture-medium-d2o", "glucose-d2o-600"]

#: Recordings whose observed total does not (yet) reach the structure's H count, with the
#: figure measured when this list was last updated. Kept visible, not tuned around.
COUNT_MISSES: dict[str, str] = {
    "1047626-52-7": "measured 16.6 H (15.7-17.4) for 18 C-H + 1 OH: overlapped aliphatic multiplets integrate low",
    "140-67-0": "measured 6.6 H (5.7-7.1) for 12 C-H: unit doubled; the vinyl CH reads 0.44 of the others (short relaxation delay), so every 2 H signal reads as 1 H",
    "2216-51-5": "measured 32.1 H (30.8-33.4) for 19 C-H + 1 OH: unit halved; overlapped CH-O multiplets read 1.4-1.6 H each",
    "492-62-6": "measured 23.9 H (22.9-24.9) for 7 C-H + 5 OH: unit halved; alpha/beta anomers split every signal into fractional parts",
    "2591-86-8": "measured 9.3 H (8.7-9.9) for 11 C-H: amide rotamers split signals into minor regions",
    "2759-55-9": "measured 7.6 H (6.7-8.2) for 12 C-H + 1 NH: unit doubled; aromatic 2 H doublets integrate 20 % low against the methyls",
    "517920-70-6": "measured 12.7 H (11.7-13.4) for 2 C-H + 2 exchangeable: most of the signal is not from the listed structure (impurities)",
}

_cache: dict[str, object] = {}


def _processed(refdata, name):
    if name not in _cache:
        path = refdata / "bruker-raw" / name if name in BRUKER else refdata / "jcamp-fid" / name / "1h.fid.dx"
        _cache[name] = process(path)
    return _cache[name]


def _structure_h(path):
    """(carbon-bound H, exchangeable H) of a molfile, counted with RDKit (the ground truth)."""
    from rdkit import Chem

    mol = Chem.AddHs(Chem.MolFromMolFile(str(path), removeHs=False))
    carbon = exch = 0
    for atom in mol.GetAtoms():
        if atom.GetSymbol() != "H":
            continue
        heavy = atom.GetNeighbors()[0].GetSymbol()
        if heavy == "C":
            carbon += 1
        else:
            exch += 1
    return carbon, exch


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
    OH/NH/SH may be broad or missing, so they widen the allowance (common practice)."""
    if name in COUNT_MISSES:
        request.applymarker(pytest.mark.xfail(reason=COUNT_MISSES[name], strict=True))
    p = _processed(refdata, name)
    carbon, exch = _structure_h(refdata / "jcamp-fid" / name / "structure.mol")
    c = p.count
    assert c is not None
    assert c.total_h_low <= carbon + exch and c.total_h_high >= carbon, (
        f"{name}: observed {c.total_h:.2f} H ({c.total_h_low:.1f}-{c.total_h_high:.1f}), structure {carbon} C-H + {exch} exchangeable"
    )
