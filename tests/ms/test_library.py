"""Known-compound library: indexing, look-up by ion species, taxon ranking, duplicates, charged molecules."""

from __future__ import annotations

import csv
import re
import sqlite3

import molmass
import numpy as np
import pytest
from rdkit import Chem
from rdkit.Chem.Descriptors import ExactMolWt
from rdkit.Chem.rdMolDescriptors import CalcMolFormula

from nmrcheck.chem import ion_mz
from nmrcheck.errors import InputFileError, ParameterError
import nmrcheck.ms.library as library_module
from nmrcheck.ms.library import (
    KnownCompoundLibrary,
    index_library,
    library_structures,
    open_library,
    structure_formula_and_key,
)

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


# name, SMILES, formula, InChIKey: PubChem compound records (from memory); the formula is RDKit's
# notation of the molecule as written (acetate and the glycine zwitterion as charged/ionic forms).
PUBLISHED = [
    ("caffeine", "Cn1cnc2c1c(=O)n(C)c(=O)n2C", "C8H10N4O2", "RYYVLZVUVIJVGH-UHFFFAOYSA-N"),
    ("quercetin", "O=C1C(O)=C(Oc2cc(O)cc(O)c12)c1ccc(O)c(O)c1", "C15H10O7", "REFJWTPEDVJJIY-UHFFFAOYSA-N"),
    ("morphine", "CN1CC[C@]23c4c5ccc(O)c4O[C@H]2[C@@H](O)C=C[C@H]3[C@H]1C5", "C17H19NO3", "BQJCRHHNABKAKU-KBQPJGBKSA-N"),
    ("berberine", "COc1ccc2cc3[n+](cc2c1OC)CCc1cc2OCOc2cc1-3", "C20H18NO4+", "YBHILYKTIRIUTE-UHFFFAOYSA-N"),
    ("D-glucose", "OC[C@H]1OC(O)[C@H](O)[C@@H](O)[C@@H]1O", "C6H12O6", "WQZGKKKJIJFFOK-GASJEMHNSA-N"),
    ("(S)-nicotine", "CN1CCC[C@H]1c1cccnc1", "C10H14N2", "SNICXCGAKADSCV-JTQLQIEISA-N"),
    ("(R)-limonene", "CC1=CC[C@@H](CC1)C(C)=C", "C10H16", "XMGQYMWWDOXHJM-JTQLQIEISA-N"),
    ("aspirin", "CC(=O)Oc1ccccc1C(=O)O", "C9H8O4", "BSYNRYMUTXBXSQ-UHFFFAOYSA-N"),
    ("glycine (zwitterion)", "[NH3+]CC(=O)[O-]", "C2H5NO2", "DHMQDGOQFOQNFH-UHFFFAOYSA-N"),
    ("acetate", "CC(=O)[O-]", "C2H3O2-", "QTBSBXVTEAMEQO-UHFFFAOYSA-M"),
]


@pytest.mark.parametrize(("name", "smiles", "formula", "inchikey"), PUBLISHED, ids=[p[0] for p in PUBLISHED])
def test_formula_and_key_block_match_published_records(name, smiles, formula, inchikey):
    """The indexer's light parse and stereo-free InChI give the published formula and first key block."""
    assert structure_formula_and_key(smiles) == (formula, inchikey[:14])


def _random_structures(n, seed):
    """Natural-product-like SMILES from fragments (stereocentres, heteroaromatics, zwitterions) plus broken ones."""
    fragments = ["C", "O", "N", "C(=O)", "c1ccc(O)cc1", "[C@@H](O)", "[C@H](C)", "C1CCC(CC1)", "c1ccncc1",
                 "c1cc[nH]c1", "C/C=C/C", "C(Cl)", "C1OC(CO)C(O)C1O", "c1ccc2occc2c1", "C(=O)N", "S(=O)(=O)", "P(=O)(O)O"]
    rng = np.random.default_rng(seed)
    out = ["".join(rng.choice(fragments, size=int(rng.integers(2, 10)))) for _ in range(n)]
    out[::17] = ["[NH3+]" + s + "C(=O)[O-]" for s in out[::17]]
    return out + ["C1CC(", "c1cccc1", "C(C)(C)(C)(C)C", "[NH4]", "[CH2]C", "[Na+].[O-]C(=O)C", "[2H]C([2H])([2H])O"]


def test_light_parse_agrees_with_rdkits_full_sanitisation():
    """Independent reference: RDKit's fully sanitised molecule, its formula and its standard InChIKey."""
    for smiles in _random_structures(300, seed=5):
        mol = Chem.MolFromSmiles(smiles)
        want = None if mol is None else (CalcMolFormula(mol), Chem.MolToInchiKey(mol)[:14] or None)
        assert structure_formula_and_key(smiles) == want, smiles


def test_worker_processes_give_the_same_index_in_file_order(tmp_path, monkeypatch):
    monkeypatch.setattr(library_module, "_CHUNK", 40)
    structures = _random_structures(230, seed=8)
    path = tmp_path / "known.csv"
    with open(path, "w", newline="") as fh:
        w = csv.writer(fh)
        w.writerow(["name", "smiles", "genus"])
        w.writerows([f"compound {i}", s, f"Genus{i % 7}"] for i, s in enumerate(structures + structures[:50]))
    one = index_library(path, tmp_path / "one.sqlite", workers=1)
    library_module.structure_formula_and_key.cache_clear()  # the forked workers work it out themselves
    two = index_library(path, tmp_path / "two.sqlite", workers=2)
    assert (two.entries, two.skipped, two.problems) == (one.entries, one.skipped, one.problems)
    assert one.skipped == sum(Chem.MolFromSmiles(s) is None for s in structures + structures[:50])

    def rows(info):
        con = sqlite3.connect(info.database)
        try:
            return con.execute("SELECT id, name, smiles, formula, charge, mass, key14, genus, line FROM compounds ORDER BY id").fetchall()
        finally:
            con.close()

    assert rows(two) == rows(one)
    lines = [r[-1] for r in rows(one)]
    assert lines == sorted(lines)


def test_a_failed_build_leaves_the_previous_index_and_no_partial_file(tmp_path):
    good = index_library(write_library(tmp_path / "known.csv", ENTRIES[:3]), tmp_path / "known.sqlite")
    broken = tmp_path / "broken.csv"
    broken.write_text("name,smiles\nx,C1CC(\n")
    with pytest.raises(InputFileError, match="no usable entry"):
        index_library(broken, tmp_path / "known.sqlite")
    with KnownCompoundLibrary(good.database) as lib:
        assert len(lib) == 3
    assert sorted(p.name for p in tmp_path.iterdir()) == ["broken.csv", "known.csv", "known.sqlite"]
