"""Purity per well: synthetic binary mixtures (generated here with nmrcheck.synth) and the real mixtures."""

from __future__ import annotations

from pathlib import Path

import pytest

from nmrcheck.processing import process
from nmrcheck.synth import Line, simulate_fid
from nmrcheck.validate import WellFeature, candidates_from_file, candidates_from_strings, check_candidates, evidence_from
from nmrcheck.validate.purity import purity_of, residual_sets

#: 4-Allylanisole (estragole) in CDCl3, first-order textbook data (from memory): 7.10 (d, 8.6), 6.83 (d, 8.6),
#: 5.95 (ddt 16.9, 10.1, 6.7 x2), 5.07 (m, 2H), 3.79 (s), 3.33 (d, 6.7).
ESTRAGOLE = [Line(7.10, 2, 1.0, (8.6,)), Line(6.83, 2, 1.0, (8.6,)), Line(5.95, 1, 1.0, (16.9, 10.1, 6.7, 6.7)),
             Line(5.07, 2, 1.0, (13.0, 1.6)), Line(3.79, 3, 1.0), Line(3.33, 2, 1.0, (6.7, 1.5, 1.5))]
#: Ethyl butanoate in CDCl3 (12 H, as many as estragole): 4.12 (q), 2.28 (t), 1.66 (sext), 1.25 (t), 0.95 (t),
#: J 7.1-7.4 Hz (textbook values, from memory). Not a solvent impurity the processing flags.
ETHYL_BUTANOATE = [Line(4.12, 2, 1.0, (7.1,) * 3), Line(2.28, 2, 1.0, (7.4,) * 2), Line(1.66, 2, 1.0, (7.4,) * 5),
                   Line(1.25, 3, 1.0, (7.1,) * 2), Line(0.95, 3, 1.0, (7.4,) * 2)]
RESIDUAL = [Line(7.26, 0.05, 1.0)]


def _mixture(minor_fraction, seed=0):
    lines = [Line(l.ppm, l.h * (1 - minor_fraction), l.width_hz, l.j_hz) for l in ESTRAGOLE]
    lines += [Line(l.ppm, l.h * minor_fraction, l.width_hz, l.j_hz) for l in ETHYL_BUTANOATE]
    fid = simulate_fid(lines + RESIDUAL, scale=0.05, noise=0.0005, points=32768, sweep_width_hz=7200.0, seed=seed)
    return process(fid)


def _estragole():
    (c,), _ = candidates_from_strings((), ["C=CCc1ccc(OC)cc1 estragole"])
    return c


@pytest.mark.parametrize("minor", [0.1, 0.2, 0.3, 0.5])
def test_binary_mixture_detected_and_minor_share_within_five_points(minor):
    """Estragole with ethyl butanoate as an unnamed second compound: the minor compound's molar share (here
    equal to its share of the integral, both having 12 H) is recovered within 5 percentage points."""
    ev = evidence_from(_mixture(minor))
    p = purity_of(check_candidates([_estragole()], ev), ev)
    assert p.call in ("major compound with impurities", "mixture"), p.evidence
    proton_share = 100 * minor
    assert abs((100 - p.share_pct) - proton_share) <= 5.0, p.evidence
    assert p.main_mol_pct is not None and abs((100 - p.main_mol_pct) - 100 * minor) <= 5.0, p.evidence
    if minor >= 0.5:
        assert p.call == "mixture"


def test_pure_synthetic_compound_is_single():
    ev = evidence_from(_mixture(0.0))
    p = purity_of(check_candidates([_estragole()], ev), ev)
    assert p.call == "single compound" and p.share_pct > 97, p.evidence


def test_several_major_ms_features_contradict_a_single_compound():
    proc = _mixture(0.0)
    ev = evidence_from(proc, ms_features=(WellFeature(149.0961, 70.0), WellFeature(89.0597, 25.0)))
    p = purity_of(check_candidates([_estragole()], ev), ev)
    assert p.call == "major compound with impurities"
    assert any("2 major MS features" in e for e in p.evidence)


def test_residual_sets_find_their_own_unit():
    """3:2:3 integrals at 0.4 per H group into one set of 8 H; a lone line stays alone."""
    sets = residual_sets([(4.12, 0.8), (2.05, 1.2), (1.26, 1.2), (9.8, 0.25)], main_unit=1.0)
    assert sets[0].h == (2, 3, 3) and abs(sets[0].unit - 0.4) < 1e-9
    assert sets[1].unit is None and sets[1].ppm == (9.8,)


def test_no_structure_is_undecided():
    ev = evidence_from(_mixture(0.3))
    (f,), _ = candidates_from_strings(["C10H12O"])
    assert purity_of(check_candidates([f], ev), ev).call == "undecided"


@pytest.mark.refdata
@pytest.mark.parametrize("name", ["aminoacid-mix-d2o-600", "culture-medium-d2o", "aminoacid-mix-undried-1"])
def test_real_mixtures_are_mixtures(refdata, name):
    """The amino-acid mixes and the culture medium (titles in the recordings) claimed as D-glucose."""
    folder = Path(refdata) / "bruker-raw" / name
    if not folder.exists():
        pytest.skip(f"{name} not found in NMRCHECK_REFDATA/bruker-raw")
    ev = evidence_from(process(folder))
    (g,), _ = candidates_from_strings((), ["OC[C@H]1O[C@H](O)[C@H](O)[C@@H](O)[C@@H]1O alpha-D-glucose"])
    p = purity_of(check_candidates([g], ev), ev)
    assert p.call == "mixture", p.evidence


@pytest.mark.refdata
def test_no_shared_pure_compound_is_flagged(refdata):
    """Each shared recording is one compound (refdata README). 517920-70-6's file says CDCl3 while its
    lines at 3.36 and 2.51 ppm are DMSO's water and DMSO-d5: read as DMSO-d6, it is one compound too."""
    root = Path(refdata) / "jcamp-fid"
    folders = sorted(p for p in root.iterdir() if (p / "1h.fid.dx").exists()) if root.exists() else []
    if not folders:
        pytest.skip("no jcamp-fid recordings in NMRCHECK_REFDATA")
    flagged = {}
    for folder in folders:
        (c,), _ = candidates_from_file(folder / "structure.mol")
        ev = evidence_from(process(folder / "1h.fid.dx"))
        p = purity_of(check_candidates([c], ev), ev)
        if p.call != "single compound":
            flagged[folder.name] = p.label
    assert not flagged, flagged


def test_well_features_from_a_stored_lcms_record():
    """The plate stores each well's LC-MS features as records with shares of the ion current (0-1)."""
    from nmrcheck.validate.purity import well_features_from

    record = {"features": [{"neutral_mass": 148.0888, "share": 0.7, "ions": [{"species": "[M+H]+", "mz": 149.0961}]},
                           {"neutral_mass": 88.0524, "share": 0.2, "ions": [{"species": "[M+H]+", "mz": 89.0597}]}]}
    got = well_features_from(record)
    assert [(f.mz, round(f.share_pct)) for f in got] == [(149.0961, 70), (89.0597, 20)]
