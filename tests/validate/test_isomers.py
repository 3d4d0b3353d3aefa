"""Each shared real compound against isomers (same molecular formula, checked with RDKit here): the true
structure must rank strictly above every isomer, with the default install (additive increments).

The isomers are known compounds of the same formula (names and structures from common chemical
knowledge, from memory): ring-isomeric lactone/chromone, allyl/propenyl and ortho/para positional
isomers of the aromatics, double-bond and ester isomers of the unsaturated esters, amide isomers.
The MS feature is [M+H]+ of the true formula, so the mass cannot tell them apart: only the 1H spectrum can.
"""

from __future__ import annotations

from pathlib import Path

import pytest

from nmrcheck.chem.adducts import ion_mz
from nmrcheck.processing import process
from nmrcheck.validate import Candidate, MsFeature, candidates_from_file, candidates_from_strings, check_candidates, evidence_from

pytestmark = pytest.mark.refdata

ISOMERS = [
    ("91-64-5", "O=c1ccoc2ccccc12 chromone"),
    ("140-67-0", "C/C=C/c1ccc(OC)cc1 trans-anethole"),
    ("140-67-0", "C=CCc1ccccc1OC 2-allylanisole"),
    ("623-70-1", "C=CCC(=O)OCC ethyl but-3-enoate"),
    ("623-70-1", "CCCC(=O)OC=C vinyl butyrate"),
    ("623-70-1", "C/C=C(\\C)C(=O)OC methyl tiglate"),
    ("141-32-2", "C=CC(=O)OC(C)(C)C tert-butyl acrylate"),
    ("141-32-2", "C=C(C)C(=O)OCCC propyl methacrylate"),
    ("623-47-2", "CC#CC(=O)OC methyl but-2-ynoate"),
    ("50-78-2", "CC(=O)Oc1ccc(C(=O)O)cc1 4-acetoxybenzoic acid"),
    ("620-71-3", "CC(=O)N(C)c1ccccc1 N-methylacetanilide"),
    ("620-71-3", "CC(=O)Nc1ccc(C)cc1 4'-methylacetanilide"),
    ("2759-55-9", "CCC(=O)Nc1ccccc1C 2'-methylpropananilide"),
    ("2759-55-9", "CC(=O)Nc1ccc(CC)cc1 4'-ethylacetanilide"),
    ("403-40-7", "NCCc1ccc(F)cc1 2-(4-fluorophenyl)ethylamine"),
    ("403-40-7", "CNCc1ccc(F)cc1 4-fluoro-N-methylbenzylamine"),
    ("2591-86-8", "CC(=O)N1CCCC1 N-acetylpyrrolidine"),
    ("2591-86-8", "O=C1CCCCCN1 caprolactam"),
    ("2216-51-5", "CC(C)(C)C1CCC(O)CC1 4-tert-butylcyclohexanol"),
    ("2216-51-5", "CCCCCCCCC(C)=O decan-2-one"),
    ("492-62-6", "OC1C(O)C(O)C(O)C(O)C1O myo-inositol"),
    ("517920-70-6", "Nc1c(Br)cc(F)cc1[N+](=O)[O-] 2-bromo-4-fluoro-6-nitroaniline"),
]


@pytest.fixture(scope="module")
def spectra(refdata):
    root = Path(refdata) / "jcamp-fid"
    out = {}
    for name in sorted({n for n, _ in ISOMERS}):
        if (root / name / "1h.fid.dx").exists():
            (own,), _ = candidates_from_file(root / name / "structure.mol")
            out[name] = (process(root / name / "1h.fid.dx"), Candidate(f"{name} (true)", own.formula, own.mol, own.origin))
    return out


@pytest.mark.parametrize("name,isomer", ISOMERS, ids=[f"{n}-{s.split(None, 1)[1]}" for n, s in ISOMERS])
def test_true_structure_ranks_above_its_isomer(spectra, name, isomer):
    if name not in spectra:
        pytest.skip(f"{name} not found in NMRCHECK_REFDATA/jcamp-fid")
    processed, own = spectra[name]
    (iso,), problems = candidates_from_strings((), [isomer])
    assert not problems and iso.formula == own.formula, "not an isomer"
    ms = MsFeature(((ion_mz(own.formula.monoisotopic_mass, "[M+H]+"), "[M+H]+"),), ppm=1.5)
    ranked = {v.candidate.label: v for v in check_candidates([own, iso], evidence_from(processed, ms))}
    true, other = ranked[own.label], ranked[iso.label]
    assert true.rank < other.rank, (true.verdict, true.score, other.verdict, other.score, other.reasons[:2])
