"""Known-compound library: indexing, look-up by ion species, taxon ranking, duplicates, charged molecules."""

from __future__ import annotations

import csv
import re

import molmass
import pytest
from rdkit import Chem
from rdkit.Chem.Descriptors import ExactMolWt
from rdkit.Chem.rdMolDescriptors import CalcMolFormula

from nmrcheck.chem import ion_mz
from nmrcheck.errors import InputFileError, ParameterError
from nmrcheck.ms.library import KnownCompoundLibrary, index_library, library_structures, open_library

# name, SMILES, genus, family: structures written from memory; formulas and masses are taken from
# RDKit and molmass in the tests, not typed here.
ENTRIES = [
    ("eugenol", "COc1cc(CC=C)ccc1O", "Syzygium", "Myrtaceae"),
    ("isoeugenol", "COc1cc(/C=C/C)ccc1O", "Myristica", "Myristicaceae"),
    ("chavibetol", "COc1ccc(CC=C)cc1O", "Piper", "Piperaceae"),
    ("methyl cinnamate", "COC(=O)/C=C/c1ccccc1", "Ocimum", "Lamiaceae"),
    ("caffeine", "Cn1cnc2c1c(=O)n(C)c(=O)n2C", "Coffea", "Rubiaceae"),
    ("theine", "CN1C=NC2=C1C(=O)N(C)C(=O)N2C", "Camellia", "Theaceae"),  # caffeine again, other SMILES and name
    ("berberine", "COc1ccc2cc3[n+](cc2c1OC)CCc1cc2OCOc2cc1-3", "Berberis", "Berberidaceae"),
    ("broken", "C1CC(", "Nowhere", "Noneaceae"),
]


def write_library(path, entries=ENTRIES, *, extra_columns=False):
    with open(path, "w", newline="") as fh:
        w = csv.writer(fh)
        head = ["name", "smiles", "genus", "family"] + (["formula", "inchikey"] if extra_columns else [])
        w.writerow(head)
        for name, smiles, genus, family in entries:
            row = [name, smiles, genus, family]
            if extra_columns:
                mol = Chem.MolFromSmiles(smiles)
                row += [CalcMolFormula(mol), Chem.MolToInchiKey(mol)] if mol is not None else ["", ""]
            w.writerow(row)
    return path


@pytest.fixture(scope="module")
def library(tmp_path_factory):
    folder = tmp_path_factory.mktemp("library")
    info = index_library(write_library(folder / "known.csv"), folder / "known.sqlite")
    with KnownCompoundLibrary(info.database) as lib:
        yield info, lib


def test_index_keeps_readable_rows_and_says_why_others_are_left_out(library):
    info, lib = library
    assert info.entries == 7 and len(lib) == 7
    assert info.skipped == 1 and re.search(r"line 9: SMILES 'C1CC\(' cannot be read", info.problems[0])


@pytest.mark.parametrize("name", ["eugenol", "methyl cinnamate", "caffeine"])
def test_stored_masses_agree_with_rdkit_and_molmass(library, name):
    """Independent libraries: RDKit ExactMolWt of the structure, molmass of the formula."""
    _, lib = library
    smiles = next(s for n, s, _, _ in ENTRIES if n == name)
    mol = Chem.MolFromSmiles(smiles)
    exact = ExactMolWt(mol)
    found = lib.lookup([(ion_mz(exact, "[M+H]+"), "[M+H]+")], ppm=3).matches
    hit = next(m for m in found if m.name == name or name in m.synonyms)
    # RDKit's periodic table predates the current NIST masses by up to ~5e-8 u per atom.
    assert hit.monoisotopic_mass == pytest.approx(exact, abs=5e-6)
    assert hit.monoisotopic_mass == pytest.approx(molmass.Formula(hit.formula).monoisotopic_mass, abs=1e-8)


def test_taxon_ranking_genus_then_family_then_the_rest(library):
    """Eugenol, isoeugenol and chavibetol are isomers (C10H12O2): same mass, ranked by taxon."""
    _, lib = library
    mz = ion_mz(ExactMolWt(Chem.MolFromSmiles("COc1cc(CC=C)ccc1O")), "[M+Na]+")
    found = lib.lookup([(mz, "[M+Na]+")], ppm=3, genus="piper", family="Myristicaceae")
    assert [m.name for m in found.matches] == ["chavibetol", "isoeugenol", "eugenol"]
    assert [m.taxon_match for m in found.matches] == ["genus", "family", "other"]
    assert found.summary == "known (3 candidates)"
    plain = lib.lookup([(mz, "[M+Na]+")], ppm=3)
    assert {m.taxon_match for m in plain.matches} == {"other"}


def test_entries_sharing_an_inchikey_block_are_one_compound(library):
    _, lib = library
    mz = ion_mz(ExactMolWt(Chem.MolFromSmiles("Cn1cnc2c1c(=O)n(C)c(=O)n2C")), "[M+H]+")
    found = lib.lookup([(mz, "[M+H]+")], ppm=3, genus="Camellia")
    assert len(found.matches) == 1
    hit = found.matches[0]
    assert hit.inchikey_block == "RYYVLZVUVIJVGH"  # caffeine's InChIKey (PubChem), first block
    assert hit.taxon_match == "genus" and hit.synonyms == ("theine",)
    assert hit.genera == ("camellia", "coffea")


def test_several_ions_must_all_fit(library):
    _, lib = library
    m = ExactMolWt(Chem.MolFromSmiles("COC(=O)/C=C/c1ccccc1"))
    both = lib.lookup([(ion_mz(m, "[M+H]+"), "[M+H]+"), (ion_mz(m, "[M+Na]+"), "[M+Na]+")], ppm=3)
    assert [x.name for x in both.matches] == ["methyl cinnamate"]
    apart = lib.lookup([(ion_mz(m, "[M+H]+"), "[M+H]+"), (ion_mz(m, "[M+Na]+") + 0.01, "[M+Na]+")], ppm=3)
    assert apart.matches == () and apart.summary == "no known compound at this mass"


def test_charged_molecules_match_only_as_such(library):
    """Berberine C20H18NO4+ at m/z 336.1230 (PubChem monoisotopic mass 336.12303)."""
    _, lib = library
    cation = lib.lookup([(336.1230, "[M]+")], ppm=3)
    assert [m.name for m in cation.matches] == ["berberine"] and cation.matches[0].charge == 1
    assert cation.matches[0].formula == "C20H18NO4"
    # A neutral compound of the same composition less H would be [M+H]+ at the same m/z: not berberine.
    assert lib.lookup([(336.1230, "[M+H]+")], ppm=3).matches == ()


def test_candidate_structures_for_the_validator(library):
    _, lib = library
    mz = ion_mz(ExactMolWt(Chem.MolFromSmiles("COc1cc(CC=C)ccc1O")), "[M+H]+")
    structures = library_structures(lib.lookup([(mz, "[M+H]+")], ppm=3, genus="Syzygium"))
    assert structures[0] == ("eugenol (known; genus syzygium)", "COc1cc(CC=C)ccc1O")
    assert all(Chem.MolFromSmiles(s) is not None for _, s in structures)


def test_formula_and_inchikey_columns_give_the_same_index(tmp_path, library):
    """Open natural-product exports carry formula and InChIKey: indexed without parsing structures."""
    _, lib = library
    info = index_library(write_library(tmp_path / "known.csv", ENTRIES[:-1], extra_columns=True), tmp_path / "fast.sqlite")
    with KnownCompoundLibrary(info.database) as fast:
        for mz, ion in ((336.1230, "[M]+"), (ion_mz(194.080376, "[M+H]+"), "[M+H]+"), (187.0730, "[M+Na]+")):
            assert fast.lookup([(mz, ion)]).as_dict() == lib.lookup([(mz, ion)]).as_dict()


def test_formula_column_that_disagrees_with_the_structure_is_refused(tmp_path):
    path = tmp_path / "known.csv"
    path.write_text("name,smiles,formula\neugenol,COc1cc(CC=C)ccc1O,C10H14O2\nthymol,Cc1ccc(C(C)C)c(O)c1,C10H14O\n")
    info = index_library(path, tmp_path / "k.sqlite")
    assert info.entries == 1 and "formula C10H14O2 disagrees with the structure (C10H12O2)" in info.problems[0]


def test_sd_file_with_taxa_as_properties(tmp_path):
    path = tmp_path / "known.sdf"
    writer = Chem.SDWriter(str(path))
    for name, smiles, genus, family in ENTRIES[:3]:
        mol = Chem.MolFromSmiles(smiles)
        mol.SetProp("_Name", name)
        mol.SetProp("genus", genus)
        mol.SetProp("family", family)
        writer.write(mol)
    writer.close()
    info = index_library(path, tmp_path / "sd.sqlite")
    with KnownCompoundLibrary(info.database) as lib:
        mz = ion_mz(ExactMolWt(Chem.MolFromSmiles(ENTRIES[0][1])), "[M+H]+")
        assert lib.lookup([(mz, "[M+H]+")], genus="Myristica").matches[0].name == "isoeugenol"


def test_open_library_indexes_once_into_the_cache(tmp_path):
    source = write_library(tmp_path / "known.csv", ENTRIES[:3])
    first = open_library(source, cache_dir=tmp_path / "cache")
    again = open_library(source, cache_dir=tmp_path / "cache")
    assert first.seconds > 0 and again.seconds == 0 and again.database == first.database and again.entries == 3
    assert open_library(first.database).entries == 3
    write_library(source, ENTRIES[:4])
    assert open_library(source, cache_dir=tmp_path / "cache").entries == 4


@pytest.mark.parametrize(
    ("content", "fragment"),
    [("name,formula\nx,C6H6\n", "'smiles' column"), ("name,smiles\nx,C1CC(\n", "no usable entry")],
)
def test_bad_library_names_the_problem(tmp_path, content, fragment):
    path = tmp_path / "bad.csv"
    path.write_text(content)
    with pytest.raises(InputFileError, match=re.escape(fragment)):
        index_library(path, tmp_path / "bad.sqlite")


def test_bad_lookup_is_refused(library):
    _, lib = library
    with pytest.raises(ParameterError, match="ppm"):
        lib.lookup([(300.0, "[M+H]+")], ppm=0)
    with pytest.raises(ParameterError, match="permanently charged"):
        lib.lookup([(336.1230, "[M]+"), (359.11, "[M+Na]+")])
