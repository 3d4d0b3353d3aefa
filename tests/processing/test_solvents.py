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
