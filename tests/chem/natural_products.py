"""Known natural products for the formula-engine validation: name, class, SMILES and molecular formula.

The SMILES and formulas were written from memory; the tests take the formula and exact mass
that RDKit computes from each SMILES as the truth, and check that it agrees with the formula
written here (so a slip in either is caught).
"""

from __future__ import annotations

# Peptides written residue by residue; each entry is the SMILES of -NH-CHR-CO- with the
# backbone nitrogen first and the carbonyl carbon last.
_RESIDUE = {
    "G": "NCC(=O)",
    "A": "NC(C)C(=O)",
    "V": "NC(C(C)C)C(=O)",
    "L": "NC(CC(C)C)C(=O)",
    "I": "NC(C(C)CC)C(=O)",
    "F": "NC(Cc1ccccc1)C(=O)",
    "Y": "NC(Cc1ccc(O)cc1)C(=O)",
    "Q": "NC(CCC(N)=O)C(=O)",
    "N": "NC(CC(N)=O)C(=O)",
    "O": "NC(CCCN)C(=O)",  # ornithine
    "Abu": "NC(CC)C(=O)",
    "Sar": "N(C)CC(=O)",
    "MeL": "N(C)C(CC(C)C)C(=O)",
    "MeV": "N(C)C(C(C)C)C(=O)",
    "MeBmt": "N(C)C(C(O)C(C)CC=CC)C(=O)",
}


def _cyclic(residues: list[str]) -> str:
    """SMILES of a head-to-tail cyclic peptide (Pro written as 'P')."""
    parts = []
    ring = 2
    for k, r in enumerate(residues):
        if r == "P":
            frag = f"N{ring}CCCC{ring}C(=O)"
            ring += 1
        else:
            frag = _RESIDUE[r]
        if k == 0:
            frag = frag[0] + "9" + frag[1:]  # ring bond from the first backbone N ...
        parts.append(frag)
    last = parts[-1]
    parts[-1] = last[: -len("C(=O)")] + "C9=O"  # ... to the last carbonyl carbon
    return "".join(parts)


_GRAMICIDIN_S = _cyclic(["V", "O", "L", "F", "P"] * 2)
_CYCLOSPORIN_A = _cyclic(["MeBmt", "Abu", "Sar", "MeL", "V", "MeL", "A", "A", "MeL", "MeL", "MeV"])
# Oxytocin: Cys-Tyr-Ile-Gln-Asn-Cys-Pro-Leu-Gly-NH2, disulfide between the two Cys.
_OXYTOCIN = (
    "NC(CS1)C(=O)" + _RESIDUE["Y"] + _RESIDUE["I"] + _RESIDUE["Q"] + _RESIDUE["N"]
    + "NC(CS1)C(=O)" + "N2CCCC2C(=O)" + _RESIDUE["L"] + "NCC(N)=O"
)
_LEU_ENKEPHALIN = _RESIDUE["Y"] + _RESIDUE["G"] + _RESIDUE["G"] + _RESIDUE["F"] + _RESIDUE["L"] + "O"
_GLUC = "OC1C(O)C(O)C(CO)OC1"  # glucopyranosyl, attached through its anomeric carbon (last C)

NATURAL_PRODUCTS: tuple[tuple[str, str, str, str], ...] = (
    # name, class, SMILES, formula (from memory)
    ("nicotine", "alkaloid", "CN1CCCC1c1cccnc1", "C10H14N2"),
    ("caffeine", "alkaloid", "Cn1cnc2c1c(=O)n(C)c(=O)n2C", "C8H10N4O2"),
    ("morphine", "alkaloid", "CN1CCC23c4c5ccc(O)c4OC2C(O)C=CC3C1C5", "C17H19NO3"),
    ("strychnine", "alkaloid", "O=C1CC2OCC=C3CN4CCC56C4CC3C2C6N1c1ccccc15", "C21H22N2O2"),
    ("colchicine", "alkaloid", "COc1cc2c(c(OC)c1OC)-c1ccc(OC)c(=O)cc1C(NC(C)=O)CC2", "C22H25NO6"),
    ("reserpine", "alkaloid",
     "COC(=O)C1C(OC)C(OC(=O)c2cc(OC)c(OC)c(OC)c2)CC2CN3CCc4c([nH]c5cc(OC)ccc45)C3CC21", "C33H40N2O9"),
    ("apigenin", "flavonoid", "O=c1cc(-c2ccc(O)cc2)oc2cc(O)cc(O)c12", "C15H10O5"),
    ("quercetin", "flavonoid", "O=c1c(O)c(-c2ccc(O)c(O)c2)oc2cc(O)cc(O)c12", "C15H10O7"),
    ("epigallocatechin gallate", "flavonoid",
     "O=C(OC1Cc2c(O)cc(O)cc2OC1c1cc(O)c(O)c(O)c1)c1cc(O)c(O)c(O)c1", "C22H18O11"),
    ("rutin", "flavonoid glycoside",
     "CC1OC(OCC2OC(Oc3c(-c4ccc(O)c(O)c4)oc4cc(O)cc(O)c4c3=O)C(O)C(O)C2O)C(O)C(O)C1O", "C27H30O16"),
    ("naringin", "flavonoid glycoside",
     "CC1OC(OC2C(Oc3cc(O)c4c(c3)OC(c3ccc(O)cc3)CC4=O)OC(CO)C(O)C2O)C(O)C(O)C1O", "C27H32O14"),
    ("menthol", "terpenoid", "CC(C)C1CCC(C)CC1O", "C10H20O"),
    ("artemisinin", "terpenoid", "CC1CCC2C(C)C(=O)OC3OC4(C)CCC1C32OO4", "C15H22O5"),
    ("oleanolic acid", "terpenoid",
     "CC1(C)CCC2(C(=O)O)CCC3(C)C(=CCC4C5(C)CCC(O)C(C)(C)C5CCC43C)C2C1", "C30H48O3"),
    ("paclitaxel", "terpenoid",
     "CC(=O)OC1C(=O)C2(C)C(O)CC3OCC3(OC(C)=O)C2C(OC(=O)c2ccccc2)C2(O)CC(OC(=O)C(O)C(NC(=O)c3ccccc3)c3ccccc3)C(C)=C1C2(C)C",
     "C47H51NO14"),
    ("salicin", "glycoside", "OCc1ccccc1O" + "C1OC(CO)C(O)C(O)C1O", "C13H18O7"),
    ("amygdalin", "cyanogenic glycoside",
     "N#CC(OC1OC(COC2OC(CO)C(O)C(O)C2O)C(O)C(O)C1O)c1ccccc1", "C20H27NO11"),
    ("digitoxin", "cardiac glycoside",
     "CC1OC(OC2C(O)CC(OC3C(O)CC(OC4CCC5(C)C(CCC6C5CCC5(C)C(C7=CC(=O)OC7)CCC65O)C4)OC3C)OC2C)CC(O)C1O",
     "C41H64O13"),
    ("stevioside", "diterpenoid glycoside",
     "CC12CCCC(C)(C1CCC13CC(=C)C(C1)(OC1OC(CO)C(O)C(O)C1OC1OC(CO)C(O)C(O)C1O)CCC23)C(=O)OC1OC(CO)C(O)C(O)C1O",
     "C38H60O18"),
    ("glutathione", "peptide", "NC(CCC(=O)NC(CS)C(=O)NCC(=O)O)C(=O)O", "C10H17N3O6S"),
    ("leucine enkephalin", "peptide", _LEU_ENKEPHALIN, "C28H37N5O7"),
    ("oxytocin", "peptide", _OXYTOCIN, "C43H66N12O12S2"),
    ("gramicidin S", "cyclic peptide", _GRAMICIDIN_S, "C60H92N12O10"),
    ("cyclosporin A", "cyclic peptide", _CYCLOSPORIN_A, "C62H111N11O12"),
    ("griseofulvin", "halogenated polyketide", "COC1=CC(=O)CC(C)C12Oc1c(Cl)c(OC)cc(OC)c1C2=O", "C17H17ClO6"),
    ("chloramphenicol", "halogenated", "OCC(NC(=O)C(Cl)Cl)C(O)c1ccc([N+](=O)[O-])cc1", "C11H12Cl2N2O5"),
    ("salinosporamide A", "halogenated", "ClCCC1C(=O)NC2(C(O)C3CCCC=C3)C(=O)OC12C", "C15H20ClNO4"),
    ("6,6'-dibromoindigo", "halogenated", "O=C1C(=C2Nc3cc(Br)ccc3C2=O)Nc2cc(Br)ccc21", "C16H8Br2N2O2"),
    ("psammaplin A", "halogenated, sulfur",
     "ON=C(Cc1ccc(O)c(Br)c1)C(=O)NCCSSCCNC(=O)C(=NO)Cc1ccc(O)c(Br)c1", "C22H24Br2N4O6S2"),
    ("penicillin G", "sulfur", "CC1(C)SC2C(NC(=O)Cc3ccccc3)C(=O)N2C1C(=O)O", "C16H18N2O4S"),
    ("sulforaphane", "sulfur", "CS(=O)CCCCN=C=S", "C6H11NOS2"),
    ("biotin", "sulfur", "OC(=O)CCCCC1SCC2NC(=O)NC12", "C10H16N2O3S"),
    ("gliotoxin", "sulfur", "CN1C(=O)C23CC4=CC=CC(O)C4N2C(=O)C1(CO)SS3", "C13H14N2O4S2"),
    ("sinigrin", "sulfur glycoside", "C=CCC(=NOS(=O)(=O)O)SC1OC(CO)C(O)C(O)C1O", "C10H17NO9S2"),
    # Halogenated and sulfur natural products added for the envelope inference (formulas as
    # PubChem lists them under these names, from memory; the RDKit check below catches slips).
    ("pyoluteorin", "halogenated polyketide", "O=C(c1cc(Cl)c(Cl)[nH]1)c1c(O)cccc1O", "C11H7Cl2NO3"),
    ("pentachloropseudilin", "halogenated", "Oc1c(Cl)cc(Cl)cc1-c1[nH]c(Cl)c(Cl)c1Cl", "C10H4Cl5NO"),
    ("2,4,6-tribromophenol", "halogenated, marine", "Oc1c(Br)cc(Br)cc1Br", "C6H3Br3O"),
    ("6-bromotryptamine", "halogenated alkaloid, marine", "NCCc1c[nH]c2cc(Br)ccc12", "C10H11BrN2"),
    ("oroidin", "halogenated alkaloid, marine", "NC1=NC=C(N1)/C=C/CNC(=O)c1cc(Br)c(Br)[nH]1", "C11H11Br2N5O"),
    ("allicin", "sulfur", "C=CCSS(=O)CC=C", "C6H10OS2"),
    ("ergothioneine", "sulfur, betaine", "C[N+](C)(C)C(Cc1c[nH]c(=S)[nH]1)C(=O)[O-]", "C9H15N3O2S"),
    ("lincomycin", "sulfur glycoside", "CCCC1CC(N(C)C1)C(=O)NC(C(C)O)C1OC(SC)C(O)C(O)C1O", "C18H34N2O6S"),
    ("alliin", "sulfur amino acid", "C=CCS(=O)CC(N)C(=O)O", "C6H11NO3S"),
)

CHARGED_NATURAL_PRODUCTS: tuple[tuple[str, str, str, str], ...] = (
    # Permanently charged cations, observed as [M]+: name, class, SMILES, formula of the cation
    # (as PubChem lists them under these names, from memory; checked against RDKit below).
    ("berberine", "protoberberine alkaloid", "COc1ccc2cc3[n+](cc2c1OC)CCc1cc2OCOc2cc1-3", "C20H18NO4+"),
    ("palmatine", "protoberberine alkaloid", "COc1ccc2cc3[n+](cc2c1OC)CCc1cc(OC)c(OC)cc1-3", "C21H22NO4+"),
    ("coptisine", "protoberberine alkaloid", "C1Oc2ccc3cc4[n+](cc3c2O1)CCc1cc2OCOc2cc1-4", "C19H14NO4+"),
    ("sanguinarine", "benzophenanthridine alkaloid", "C[n+]1cc2c3OCOc3ccc2c2ccc3cc4OCOc4cc3c12", "C20H14NO4+"),
    ("magnoflorine", "aporphine alkaloid", "C[N+]1(C)CCc2cc(OC)c(O)c3c2C1Cc1ccc(OC)c(O)c1-3", "C20H24NO4+"),
    ("choline", "quaternary ammonium", "C[N+](C)(C)CCO", "C5H14NO+"),
)


def simulated_feature(formula, ions, rng, *, ppm_error=(1.0, 3.0), isotope_noise=(0.02, 0.05), min_relative=1.0):
    """An MS feature of ``formula`` as an instrument would report it.

    Each ion's m/z gets a relative error of random sign and magnitude uniform in
    ``ppm_error`` (ppm); the isotope intensities of the first ion (M+0 .. the last peak of at
    least ``min_relative`` % of M+0, at most six) get Gaussian noise whose relative standard
    deviation is drawn uniformly from ``isotope_noise``.

    Returns
    -------
    features : list of (float, str)
    intensities : list of float
    """
    import numpy as np

    from nmrcheck.chem.adducts import ion_mz
    from nmrcheck.chem.isotopes import isotope_pattern

    mass = formula.monoisotopic_mass
    features = []
    for ion in ions:
        err = rng.uniform(*ppm_error) * rng.choice([-1.0, 1.0])
        features.append((ion_mz(mass, ion) * (1.0 + err * 1e-6), ion))
    pattern = np.array(isotope_pattern(formula, ion=ions[0]).abundances[:6])
    relative = 100.0 * pattern / pattern[0]
    keep = max(2, int(np.count_nonzero(relative >= min_relative)))
    noise = rng.uniform(*isotope_noise)
    observed = relative[:keep] * (1.0 + rng.normal(0.0, noise, keep))
    return features, [float(x) for x in observed]
