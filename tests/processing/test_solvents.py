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
