"""The package's one solvent vocabulary: spellings to canonical names, and each solvent's signals."""

from __future__ import annotations

import pytest

from nmrcheck.data import load_table
from nmrcheck.errors import ParameterError
from nmrcheck.processing.solvents import known_solvents, normalise_solvent, require_solvent, solvent_signals


@pytest.mark.parametrize(
    ("spelling", "canonical"),
    [
        ("CDCl3", "CDCl3"),
        ("cdcl3", "CDCl3"),
        ("Chloroform-d", "CDCl3"),
        ("DMSO", "DMSO-d6"),
        ("DMSO-d6", "DMSO-d6"),
        ("dmso-d6", "DMSO-d6"),
        ("DMSO_d6", "DMSO-d6"),
        ("MeOD", "CD3OD"),
        ("CD3OD", "CD3OD"),
        ("methanol-d4", "CD3OD"),
        ("D2O", "D2O"),
        ("H2O+D2O", "H2O/D2O"),
        ("h2o/d2o", "H2O/D2O"),
        ("90%H2O/10%D2O", "H2O/D2O"),
        ("H2O", "H2O/D2O"),
        ("Acetone", "acetone-d6"),
        ("acetone-d6", "acetone-d6"),
        ("CD2Cl2", "CD2Cl2"),
        ("Methylene Chloride-d2", "CD2Cl2"),
        ("C6D6", "C6D6"),
        ("CD3CN", "CD3CN"),
        ("pyridine-d5", "pyridine-d5"),
        (" Pyridine ", "pyridine-d5"),
        ("THF", "THF-d8"),
        ("tol", "toluene-d8"),
    ],
)
def test_normalise_solvent(spelling, canonical):
    """Spellings as they appear in acquisition files, manifests and papers (common practice)."""
    assert normalise_solvent(spelling) == canonical


@pytest.mark.parametrize("bad", ["xylene-d10", "", None, 3])
def test_unknown_solvent_is_none(bad):
    assert normalise_solvent(bad) is None


@pytest.mark.parametrize("bad", ["xylene-d10", "", None])
def test_require_solvent_names_the_value(bad):
    with pytest.raises(ParameterError, match="solvent="):
        require_solvent(bad)


def test_require_solvent_among():
    assert require_solvent("dmso", among=("DMSO-d6",)) == "DMSO-d6"
    with pytest.raises(ParameterError, match=r"solvent='THF' \(THF-d8\)"):
        require_solvent("THF", among=("DMSO-d6", "CDCl3"))


def test_every_alias_names_a_solvent_of_the_signal_table():
    rows = load_table("solvent_aliases")
    assert all(r["source"].strip() for r in rows)
    assert {r["solvent"] for r in rows} <= set(known_solvents())


def test_water_suppressed_h2o_d2o_has_the_d2o_water_and_standard_rows():
    """90:10 H2O/D2O keeps D2O's HDO water line (4.79 ppm) and DSS (0 ppm, 9 H) (Gottlieb 1997 Table 1; Harris 2001; from memory).

    Its HDO residual row serves only when no DSS is seen: the presaturated bulk water never
    overrules the standard (the refdata test below checks both H2O+D2O recordings).
    """
    def rows(solvent, kinds):
        return {(s.kind, s.name, s.ppm, s.protons) for s in solvent_signals(solvent) if s.kind in kinds}

    assert rows("H2O/D2O", ("water", "reference", "impurity")) == rows("D2O", ("water", "reference", "impurity"))
    assert ("reference", "DSS", 0.0, 9) in rows("H2O/D2O", ("reference",))
    assert [s.ppm for s in solvent_signals("H2O/D2O", kind="residual")] == [4.79]
    assert normalise_solvent("D2O") == "D2O"


@pytest.mark.parametrize("name", ["aminoacid-mix-undried-1", "culture-medium-d2o"])
def test_h2o_d2o_recordings_reference_on_dss(refdata, name):
    """Both recordings' headers say H2O+D2O and their samples hold DSS (titles; refdata README)."""
    from nmrcheck.processing import process

    d = refdata / "bruker-raw" / name
    if not d.is_dir():
        pytest.skip(f"{name} not in the refdata folder")
    p = process(d)
    assert normalise_solvent(p.spectrum.solvent) == "H2O/D2O"
    assert (p.reference.kind, p.reference.ppm) == ("DSS", 0.0)


# --- reference lines identified by their pattern -----------------------------------------

def _spectrum_with(lines, *, mhz=400.0, solvent="acetone-d6", noise=2e-4, offset_ppm=0.0):
    from nmrcheck.processing.transform import fourier_transform
    from nmrcheck.synth import Line, simulate_fid

    shifted = [Line(l.ppm + offset_ppm, l.h, l.width_hz, l.j_hz) for l in lines]
    fid = simulate_fid(shifted, spectrometer_mhz=mhz, sweep_width_hz=12.0 * mhz, points=65536, carrier_ppm=4.5, noise=noise, seed=11)
    spec = fourier_transform(fid, lb_hz=0.3)
    from dataclasses import replace

    return replace(spec, acquisition=replace(spec.acquisition, solvent=solvent))


def test_chd2_quintet_recognised_and_a_singlet_beside_it_refused():
    """Acetone-d5's residual is a 1:2:3:2:1 quintet (J(H,D) about 2.2 Hz) at 2.05 ppm (Gottlieb 1997,
    from memory): with the axis 0.1 ppm off, the quintet sets the axis; a stronger analyte singlet
    0.19 ppm away is not taken for it."""
    from nmrcheck.processing.reference import reference_axis
    from nmrcheck.synth import Line

    quintet = Line(2.05, 0.3, 0.6, (2.2, 2.2, 2.2, 2.2))  # four equivalent couplings: 1:4:6:4:1 is a
    # CHD2 group's 1:2:3:2:1 only approximately, so build the 1:2:3:2:1 lines explicitly
    quintet_lines = [Line(2.05 + k * 2.2 / 400.0, 0.3 * w / 9.0, 0.6) for k, w in zip((-2, -1, 0, 1, 2), (1, 2, 3, 2, 1))]
    del quintet
    analyte = [Line(2.24, 3.0, 0.8), Line(7.20, 2.0, 1.0, (8.0,))]
    spec = _spectrum_with(quintet_lines + analyte, offset_ppm=0.1)
    _, ref = reference_axis(spec)
    assert ref.line == "acetone-d5"
    assert ref.found_ppm == pytest.approx(2.15, abs=0.005)
    # Without the quintet, the singlet alone must not set the axis.
    spec = _spectrum_with(analyte, offset_ppm=0.1)
    _, ref = reference_axis(spec)
    assert ref.kind == "none"


def test_broad_line_far_from_the_table_is_not_an_unresolved_quintet():
    """A CHD2 residual too broad to resolve is recognised only near its table value: tenths of a
    ppm away a broad analyte line (here 6 Hz wide, 0.29 ppm below acetone-d5's 2.05 ppm; Gottlieb
    1997, from memory) is as flat over +-2J(H,D) as a merged quintet, so position says nothing and
    the spectrometer's axis is kept (reference 'none')."""
    from nmrcheck.processing.reference import reference_axis
    from nmrcheck.synth import Line

    analyte = [Line(1.76, 1.0, 6.0), Line(7.20, 2.0, 1.0, (8.0,)), Line(2.60, 3.0, 0.8)]
    _, ref = reference_axis(_spectrum_with(analyte))
    assert ref.kind == "none"
    # A resolved quintet as far off is still taken, broad line or not (J(H,D) 2.2 Hz, lines 0.6 Hz).
    quintet = [Line(2.05 + k * 2.2 / 400.0, 0.3 * w / 9.0, 0.6) for k, w in zip((-2, -1, 0, 1, 2), (1, 2, 3, 2, 1))]
    _, ref = reference_axis(_spectrum_with(quintet + analyte, offset_ppm=-0.2))
    assert ref.line == "acetone-d5" and ref.found_ppm == pytest.approx(1.85, abs=0.005)


def test_a_line_of_an_analyte_triplet_is_not_taken_for_chcl3():
    """CHCl3's residual is a singlet at 7.26 ppm (Gottlieb 1997, from memory). An aromatic
    triplet (J 7.5 Hz, common practice for a ring proton between two neighbours) centred at
    7.275 ppm, with no CHCl3 at all: neither its centre nor its outer line 0.02 ppm from 7.26
    may set the axis. With a real CHCl3 singlet at 7.255 ppm beside the same triplet, the
    singlet is taken."""
    from nmrcheck.processing.reference import reference_axis
    from nmrcheck.synth import Line

    triplet = [Line(7.275, 1.0, 0.8, (7.5, 7.5)), Line(7.45, 1.0, 0.8, (7.5,)), Line(2.35, 3.0, 0.8)]
    _, ref = reference_axis(_spectrum_with(triplet, solvent="CDCl3", mhz=300.0))
    assert ref.kind == "none"
    _, ref = reference_axis(_spectrum_with(triplet + [Line(7.255, 0.3, 0.6)], solvent="CDCl3", mhz=300.0))
    assert ref.line == "CHCl3" and ref.found_ppm == pytest.approx(7.255, abs=0.003)


def test_carbon_satellite_of_dss_is_never_taken_for_dss():
    """DSS's methyl 13C satellites sit at +-59 Hz (1J(C,H) about 118 Hz; common practice) with 0.55 %
    each: with the spectrometer's axis 0.09 ppm off at 600 MHz, the satellite lies nearer to 0 ppm
    than DSS itself and must not be taken for it."""
    from nmrcheck.processing.reference import reference_axis
    from nmrcheck.synth import Line

    dss = [Line(0.0, 9.0, 0.8), Line(0.0 + 59.0 / 600.0, 9.0 * 0.0055, 0.8), Line(0.0 - 59.0 / 600.0, 9.0 * 0.0055, 0.8)]
    analyte = [Line(3.90, 3.0, 1.0), Line(1.30, 3.0, 1.0, (7.0,))]
    spec = _spectrum_with(dss + analyte, mhz=600.0, solvent="D2O", noise=1e-4, offset_ppm=-0.09)
    _, ref = reference_axis(spec)
    assert ref.kind == "DSS"
    assert ref.found_ppm == pytest.approx(-0.09, abs=0.005)


# --- the solvent a spectrum shows when its file names another ------------------------------

def _chd2_quintet(ppm, h, *, j_hz=1.9, width_hz=0.6, mhz=400.0):
    """A CHD2 residual's 1:2:3:2:1 lines (J(H,D) about 1.9 Hz for DMSO-d5; Gottlieb 1997, from memory)."""
    from nmrcheck.synth import Line

    return [Line(ppm + k * j_hz / mhz, h * w / 9.0, width_hz) for k, w in zip((-2, -1, 0, 1, 2), (1, 2, 3, 2, 1))]


def _analyte():
    from nmrcheck.synth import Line

    # An aromatic pair (J 8.5 Hz) and a methoxy singlet: nothing near any residual's table value.
    return [Line(7.95, 1.0, 0.8, (8.5,)), Line(6.90, 1.0, 0.8, (8.5,)), Line(3.85, 3.0, 0.8)]


def test_dmso_quintet_in_a_file_that_says_cdcl3():
    """DMSO-d5 at 2.50 ppm, a resolved quintet, and no CHCl3 at 7.26 (Gottlieb 1997, from memory):
    the spectrum is DMSO-d6 whatever the file says."""
    from nmrcheck.processing.reference import solvent_from_spectrum

    spec = _spectrum_with(_chd2_quintet(2.50, 0.3) + _analyte(), solvent="CDCl3")
    seen = solvent_from_spectrum(spec, besides="CDCl3")
    assert seen is not None and (seen.solvent, seen.line) == ("DMSO-d6", "DMSO-d5")
    assert seen.found_ppm == pytest.approx(2.50, abs=0.003)


def test_a_broadened_quintet_counts_only_with_its_water_line():
    """A DMSO-d5 line broadened past resolving (6 Hz) could be any broad line; DMSO's water at 3.33 ppm
    (Gottlieb 1997, from memory; hygroscopic solvent, common practice) beside it makes it DMSO."""
    from nmrcheck.processing.reference import solvent_from_spectrum
    from nmrcheck.synth import Line

    broad = [Line(2.50, 0.3, 6.0)]
    assert solvent_from_spectrum(_spectrum_with(broad + _analyte(), solvent="CDCl3"), besides="CDCl3") is None
    water = [Line(3.36, 0.6, 3.0)]
    seen = solvent_from_spectrum(_spectrum_with(broad + water + _analyte(), solvent="CDCl3"), besides="CDCl3")
    assert seen is not None and seen.solvent == "DMSO-d6" and "water" in seen.pattern


def test_nothing_is_guessed_while_a_line_stands_at_the_files_residual():
    """A line 0.01 ppm from CHCl3's 7.26 ppm (here an analyte doublet) may hide the file's own residual:
    the file is not overruled, quintet or not."""
    from nmrcheck.processing.reference import solvent_from_spectrum
    from nmrcheck.synth import Line

    spec = _spectrum_with(_chd2_quintet(2.50, 0.3) + _analyte() + [Line(7.27, 1.0, 0.8, (8.5,))], solvent="CDCl3")
    assert solvent_from_spectrum(spec, besides="CDCl3") is None


def test_sharp_analyte_singlets_at_residual_and_water_positions_are_no_solvent():
    """An aryl methyl at 2.50 ppm and a methoxy at 3.33 ppm (sharp singlets, 0.8 Hz) are not a CHD2
    line and its water: a singlet falls to a few percent 2 Hz out, a quintet's lines stand at 2/3."""
    from nmrcheck.processing.reference import solvent_from_spectrum
    from nmrcheck.synth import Line

    spec = _spectrum_with([Line(2.50, 3.0, 0.8), Line(3.33, 3.0, 0.8), Line(7.95, 1.0, 0.8, (8.5,))], solvent="CDCl3")
    assert solvent_from_spectrum(spec, besides="CDCl3") is None


def test_one_quintet_that_two_solvents_could_own_names_neither():
    """Acetone-d5 (2.05 ppm) and toluene-d8's CHD2 (2.08 ppm) are both quintets (Gottlieb 1997, from
    memory): a quintet at 2.065 ppm fits both, so no solvent is named."""
    from nmrcheck.processing.reference import solvent_from_spectrum

    spec = _spectrum_with(_chd2_quintet(2.065, 0.3, j_hz=2.2) + _analyte(), solvent="CDCl3")
    assert solvent_from_spectrum(spec, besides="CDCl3") is None


def test_process_reads_the_solvent_from_the_spectrum_and_says_so():
    """The whole processor: a file that says CDCl3 holding DMSO-d6 is referenced on DMSO-d5 (2.50 ppm),
    its water (3.33 ppm) is flagged, the spectrum carries DMSO-d6 downstream, and a warning says why.
    A water-suppressed D2O file is never relabelled (its HDO line is bleached by design)."""
    from nmrcheck.processing import process
    from nmrcheck.synth import Line, simulate_fid

    lines = _chd2_quintet(2.50, 0.3) + [Line(3.33, 0.6, 3.0)] + _analyte()
    offset = 0.02  # the spectrometer axis a little off; a solvent is named only within 0.03 ppm of its table value
    fid = simulate_fid([Line(l.ppm + offset, l.h, l.width_hz, l.j_hz) for l in lines], spectrometer_mhz=400.0,
                       sweep_width_hz=4800.0, points=65536, carrier_ppm=4.5, noise=2e-4, seed=3, solvent="CDCl3")
    p = process(fid)
    assert p.spectrum.solvent == "DMSO-d6"
    assert (p.reference.line, p.reference.ppm) == ("DMSO-d5", 2.50)
    assert p.reference.found_ppm == pytest.approx(2.50 + offset, abs=0.005)
    assert any("solvent read from the spectrum" in w and "CDCl3" in w for w in p.warnings)
    assert any(r.flag == "water" for r in p.regions if r.start_ppm >= 3.33 >= r.end_ppm)
    assert p.count is not None and p.count.total_h == pytest.approx(5.0, abs=0.3)
    fid = simulate_fid(lines, spectrometer_mhz=400.0, sweep_width_hz=4800.0, points=65536, carrier_ppm=4.5,
                       noise=2e-4, seed=3, solvent="D2O")
    p = process(fid)
    assert p.spectrum.solvent == "D2O" and p.reference.kind == "none"
    assert not any("solvent read from the spectrum" in w for w in p.warnings)


def test_chcl3_with_its_satellites_in_a_file_that_says_dmso():
    """CHCl3 at 7.26 ppm (Gottlieb 1997, from memory) with its 13C satellites at +-104.5 Hz
    (1J(C,H) 209 Hz, 0.55 % each; common practice) and no DMSO-d5 at 2.50 ppm: the spectrum is
    CDCl3. Without the satellites a singlet at 7.26 could be an analyte's: nothing is named."""
    from nmrcheck.processing.reference import solvent_from_spectrum
    from nmrcheck.synth import Line

    mhz = 400.0
    chcl3 = [Line(7.26, 1.0, 0.6)]
    satellites = [Line(7.26 + s * 104.5 / mhz, 0.0055, 0.6) for s in (-1, 1)]
    spec = _spectrum_with(chcl3 + satellites + _analyte(), solvent="DMSO-d6", mhz=mhz, noise=5e-5)
    seen = solvent_from_spectrum(spec, besides="DMSO-d6")
    assert seen is not None and (seen.solvent, seen.line) == ("CDCl3", "CHCl3")
    assert "satellites" in seen.pattern
    spec = _spectrum_with(chcl3 + _analyte(), solvent="DMSO-d6", mhz=mhz, noise=5e-5)
    assert solvent_from_spectrum(spec, besides="DMSO-d6") is None
