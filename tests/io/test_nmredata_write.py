"""NMReDATA records written for each well: tags of NMReDATA 1.1 (Pupier et al., Magn. Reson. Chem. 2018, 56, 703;
from memory) and assignments that name the hydrogens RDKit finds on the assigned atoms."""

from __future__ import annotations

from rdkit import Chem

from nmrcheck.io.nmredata import NmredataSignal, format_nmredata, read_nmredata, write_nmredata


def test_record_round_trips_through_the_reader(tmp_path):
    smiles = "COC(=O)c1ccc(O)cc1"  # methyl 4-hydroxybenzoate
    signals = [NmredataSignal(7.86, "s1", 2.0, (7.89, 7.83)), NmredataSignal(6.82, "s2", 2.0), NmredataSignal(3.85, "s3", 3.0)]
    # Heavy-atom indices as RDKit numbers the SMILES: 0 is the methyl C, 5/10 and 6/9 the ring CH pairs.
    text = format_nmredata(smiles=smiles, solvent="CD3OD", larmor_mhz=600.13, signals=signals,
                           assignments={"s1": (5, 10), "s2": (6, 9), "s3": (0,)}, title="A1 methyl 4-hydroxybenzoate",
                           notes={"NMRCHECK_NOTE": "proposed from estimated shifts"})
    for tag in ("NMREDATA_VERSION", "NMREDATA_SOLVENT", "NMREDATA_ASSIGNMENT", "NMREDATA_1D_1H"):
        assert f">  <{tag}>" in text
    path = write_nmredata(tmp_path / "A1.nmredata.sdf", [text])
    rec = read_nmredata(path)
    assert rec.tags["NMREDATA_VERSION"] == "1.1" and rec.solvent == "CD3OD"
    assert rec.spectra["1H"].parameters["Larmor"].startswith("600.13")
    peaks = rec.spectra["1H"].peaks
    assert [p.shift_ppm for p in peaks] == [7.86, 6.82, 3.85]
    assert dict(peaks[2].attributes) == {"L": "s3", "N": "3"}
    by_label = {a.label: a for a in rec.assignments}
    assert by_label["s3"].atoms == (0,) and by_label["s3"].hydrogen
    assert set(by_label["s1"].atoms) == {5, 10}
    # Independent count: RDKit's hydrogens on the assigned carbons equal the signals' N.
    mol = Chem.MolFromSmiles(smiles)
    for label, n in (("s1", 2), ("s2", 2), ("s3", 3)):
        assert sum(mol.GetAtomWithIdx(a).GetTotalNumHs() for a in by_label[label].atoms) == n
    assert Chem.MolToSmiles(Chem.RemoveHs(rec.mol)) == Chem.MolToSmiles(mol)
