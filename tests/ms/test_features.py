"""Per-well MS features from an LC-MS run written with the PSI writer library psims, of invented compounds with known answers.

Masses and isotope patterns to compare with come from molmass (an independent library: IUPAC
isotope masses and abundances, CODATA electron mass), not from nmrcheck.chem.
"""

from __future__ import annotations

import pytest

from nmrcheck.io.mzml import read_mzml
from nmrcheck.io.timetable import FractionWindow, Timetable
from nmrcheck.ms.features import FeatureOptions, plate_features, well_features
from nmrcheck.ms.simulate import SimulatedCompound, simulate_run

molmass = pytest.importorskip("molmass", reason="molmass gives the reference masses; pip install -e '.[test]'")

DELAY = 0.25  # detector-to-collector delay of the invented set-up, minutes

# Invented compounds (formulas of plausible natural-product size; names are labels only).
COMPOUNDS = (
    SimulatedCompound("phenolic", "C15H10O5", 1.00, 6e5, (("[M+H]+", 1.0), ("[M+Na]+", 0.4), ("[2M+H]+", 0.12)),
                      fragments=(("C8H5O3", 100.0), ("C9H7O", 60.0), ("C7H5O2", 45.0), ("C6H5O", 30.0))),
    SimulatedCompound("dichloro", "C20H24Cl2O4", 2.00, 3e5, (("[M+H]+", 1.0), ("[M+NH4]+", 0.7), ("[M+H-H2O]+", 0.3))),
    SimulatedCompound("saponin-like", "C30H48O6", 3.00, 4e5, (("[M+2H]2+", 1.0), ("[M+H]+", 0.4))),
    SimulatedCompound("terpene", "C10H14O", 4.00, 8e5, (("[M+H]+", 1.0), ("[M+K]+", 0.3))),
    # Two compounds eluting together in one well: the purity evidence.
    SimulatedCompound("mix-major", "C16H12O6", 5.00, 5e5, (("[M+H]+", 1.0), ("[M+Na]+", 0.3))),
    SimulatedCompound("mix-minor", "C21H20O10", 5.02, 2.5e5, (("[M+H]+", 1.0), ("[M+Na]+", 0.3))),
    # A peak cut in half by the boundary between two wells.
    SimulatedCompound("split", "C9H8O4", 6.00, 5e5, (("[M+H]+", 1.0),), fwhm_s=9.0),
    # Seen in both polarities (polarity switching).
    SimulatedCompound("acid", "C9H8O3", 7.00, 5e5, (("[M+H]+", 0.6), ("[M-H]-", 1.0), ("[M+HCOO]-", 0.3), ("[2M-H]-", 0.15))),
)

# Collection windows on the collector's clock: the detector window plus the delay.
WINDOWS = {
    "A1": (0.90, 1.10), "A2": (1.90, 2.10), "A3": (2.90, 3.10), "A4": (3.90, 4.10),
    "B1": (4.90, 5.12), "B2": (5.80, 6.00), "B3": (6.00, 6.20), "B4": (6.90, 7.10), "B5": (7.60, 7.80),
}


@pytest.fixture(scope="module")
def run(tmp_path_factory, psims_writer):
    scans = simulate_run(COMPOUNDS, duration_min=7.9, scan_interval_s=0.5, polarities=("positive", "negative"), seed=11)
    path = psims_writer(tmp_path_factory.mktemp("lcms") / "extract.mzML", scans)
    return read_mzml(path)


@pytest.fixture(scope="module")
def wells(run):
    table = Timetable("invented", tuple(FractionWindow(w, a + DELAY, b + DELAY) for w, (a, b) in WINDOWS.items()))
    return plate_features(run, table, collector_delay_min=DELAY)


def _mass(formula: str) -> float:
    return molmass.Formula(formula).monoisotopic_mass


def _isotopes(ion_formula: str, n: int) -> list[float]:
    spectrum = molmass.Formula(ion_formula).spectrum()
    values = [item.intensity for _, item in sorted(spectrum.items())]
    return [100.0 * v / values[0] for v in values[:n]]


@pytest.mark.parametrize(
    "well, formula, species, charge",
    [
        ("A1", "C15H10O5", {"[M+H]+", "[M+Na]+", "[2M+H]+"}, 1),
        ("A2", "C20H24Cl2O4", {"[M+H]+", "[M+NH4]+", "[M+H-H2O]+"}, 1),
        ("A3", "C30H48O6", {"[M+2H]2+", "[M+H]+"}, 2),
        ("A4", "C10H14O", {"[M+H]+", "[M+K]+"}, 1),
    ],
)
def test_well_holds_its_compound_with_the_right_ions(wells, formula, well, species, charge):
    feats = wells[well].features
    top = feats[0]
    assert top.neutral_mass == pytest.approx(_mass(formula), rel=2e-6)
    assert {i.species for i in top.ions} == species
    assert top.charge == charge
    assert not top.species_assumed
    assert top.share > 0.8
    for ion in top.ions:
        assert abs(ion.mass_error_ppm) < 3


def test_isotope_envelopes_match_molmass(wells):
    """M+1 and M+2 of the protonated ions within 3 % (points of M+0 = 100) of molmass's pattern; Cl2 gives M+2 about 2/3."""
    a1 = next(i for i in wells["A1"].features[0].ions if i.species == "[M+H]+")
    for got, want in zip(a1.isotopes[:3], _isotopes("[C15H11O5]+", 3)):
        assert got == pytest.approx(want, abs=3.0)
    a2 = next(i for i in wells["A2"].features[0].ions if i.species == "[M+H]+")
    want = _isotopes("[C20H25Cl2O4]+", 3)
    assert want[2] > 60  # two chlorines (37Cl 24.2 % abundance, IUPAC)
    for got, w in zip(a2.isotopes[:3], want):
        assert got == pytest.approx(w, abs=3.0)


def test_two_co_eluting_compounds_are_two_major_features(wells):
    b1 = wells["B1"]
    masses = sorted(f.neutral_mass for f in b1.major_features)
    assert masses == pytest.approx(sorted([_mass("C16H12O6"), _mass("C21H20O10")]), rel=2e-6)
    shares = {round(f.neutral_mass): f.share for f in b1.features}
    # Set up as 2:1 in ion current (same ion species ratios): shares follow.
    assert shares[round(_mass("C16H12O6"))] / shares[round(_mass("C21H20O10"))] == pytest.approx(2.0, rel=0.25)


def test_a_peak_cut_by_a_well_boundary_is_shared_between_the_wells(wells):
    mass = _mass("C9H8O4")
    got = []
    for w in ("B2", "B3"):
        f = [f for f in wells[w].features if abs(f.neutral_mass - mass) < 0.002]
        assert f, f"{w} lacks the split compound"
        got.append(f[0].main_ion.intensity)
    assert got[0] == pytest.approx(got[1], rel=0.3)


def test_both_polarities_make_one_feature(wells):
    """Polarity switching: [M-H]-, [M+HCOO]-, [2M-H]- and [M+H]+ of one compound are one feature, not a mixture."""
    feats = wells["B4"].features
    assert len(wells["B4"].major_features) == 1
    f = feats[0]
    assert f.polarity == "both" and not f.species_assumed
    assert {i.species for i in f.ions} == {"[M-H]-", "[M+HCOO]-", "[2M-H]-", "[M+H]+"}
    assert f.charge == -1  # the negative ions carry the larger share here
    assert f.neutral_mass == pytest.approx(_mass("C9H8O3"), rel=2e-6)


def test_without_the_delay_the_wrong_stretch_is_searched(run):
    window = FractionWindow("A1", 0.90 + DELAY, 1.10 + DELAY)

    def current(delay):
        found = [f for f in well_features(run, window, collector_delay_min=delay).features if abs(f.neutral_mass - _mass("C15H10O5")) < 0.01]
        return sum(i.intensity for i in found[0].ions) if found else 0.0

    # Without the delay only the tail of the peak (3.5 standard deviations out) is in the window.
    assert current(0.0) < 0.01 * current(DELAY)


def test_empty_stretch_and_window_outside_the_run(run, wells):
    assert not wells["B5"].features and wells["B5"].notes
    outside = well_features(run, FractionWindow("H12", 30.0, 31.0), collector_delay_min=DELAY)
    assert outside.survey_scans == 0 and "outside the run" in outside.notes[0]


def test_as_dict_is_json_ready(wells):
    import json

    d = wells["A1"].as_dict()
    assert json.loads(json.dumps(d)) == d
    assert d["features"][0]["ions"][0]["species"] == "[M+H]+"


def test_options_are_checked():
    from nmrcheck.errors import ParameterError

    with pytest.raises(ParameterError, match="tolerance_ppm"):
        FeatureOptions(tolerance_ppm=0)
    with pytest.raises(Exception, match="not bracket notation"):
        FeatureOptions(species=("M+H",))


def test_ms2_spectra_belong_to_their_feature(wells):
    """The MS/MS of the protonated ion carries the planted fragments at their molmass m/z (within 5 ppm)."""
    top = wells["A1"].features[0]
    spectra = {s.species: s for s in top.ms2}
    assert "[M+H]+" in spectra
    s = spectra["[M+H]+"]
    assert s.precursor_mz == pytest.approx(molmass.Formula("[C15H11O5]+").monoisotopic_mass, rel=5e-6)
    for frag in ("C8H5O3", "C9H7O", "C7H5O2", "C6H5O"):
        want = molmass.Formula(f"[{frag}]+").monoisotopic_mass
        assert min(abs(m - want) for m in s.mz) < want * 5e-6, frag
    # MS/MS of other wells' compounds is not attached here.
    assert all(abs(sp.precursor_mz - i.mz) < 0.01 for sp in top.ms2 for i in top.ions if i.species == sp.species)


def test_fragments_support_the_true_formula_and_contradict_one_with_too_little_oxygen(wells):
    from nmrcheck.ms.msms import check_fragments

    s = next(sp for sp in wells["A1"].features[0].ms2 if sp.species == "[M+H]+")
    assert check_fragments("C15H10O5", s.species, s.mz, s.intensity, precursor_mz=s.precursor_mz).status == "supported"
    wrong = check_fragments("C19H10O2", s.species, s.mz, s.intensity, precursor_mz=s.precursor_mz)
    assert wrong.status == "contradicted"
    c8h5o3 = molmass.Formula("[C8H5O3]+").monoisotopic_mass
    assert any(f"m/z {c8h5o3:.4f}"[:-1] in r and "1 more O" in r for r in wrong.reasons), wrong.reasons


def test_grouping_species_table():
    """Every row of lcms_ion_species.csv parses, its polarity column agrees with its charge, protonation first."""
    from nmrcheck.chem import parse_ion
    from nmrcheck.data import load_table
    from nmrcheck.ms.features import grouping_species

    for row in load_table("lcms_ion_species"):
        assert parse_ion(row["notation"]).polarity == row["polarity"]
    assert grouping_species("positive")[0].notation == "[M+H]+"
    assert grouping_species("negative")[0].notation == "[M-H]-"


def test_profile_scans_are_centroided_and_unknown_polarity_is_taken_as_positive():
    """Profile survey scans (Gaussian peaks on a 2 mDa grid) give the same feature as centroids; a run without
    polarity terms is read as positive, with a note."""
    import numpy as np

    from nmrcheck.io.mzml import LcmsRun, Scan

    want = molmass.Formula("[C15H11O5]+").monoisotopic_mass
    iso = _isotopes("[C15H11O5]+", 3)
    grid = np.arange(250.0, 300.0, 0.002)
    scans = []
    for k in range(60):
        t = 0.5 + k / 120.0
        height = 1e6 * np.exp(-0.5 * ((t - 0.75) / 0.03) ** 2)
        y = np.zeros_like(grid)
        for j, rel in enumerate(iso):
            y += height * rel / 100.0 * np.exp(-0.5 * ((grid - (want + j * 1.003355)) / 0.004) ** 2)
        scans.append(Scan(k, f"scan={k + 1}", t, 1, None, grid, y + 50.0, False))
    run = LcmsRun("profile", tuple(scans))
    result = well_features(run, FractionWindow("A1", 0.6, 0.9))
    f = result.features[0]
    assert f.main_ion.mz == pytest.approx(want, rel=3e-6)
    assert f.main_ion.isotopes[1] == pytest.approx(iso[1], abs=2.0)
    assert f.polarity == "positive" and "positive assumed" in result.notes[0]
