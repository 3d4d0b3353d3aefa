"""A well's MS feature looked up in a known-compound library: matches become checked structure candidates.

The recording is synthetic (nmrcheck.synth): methyl tert-butyl ether (1.19 ppm 9 H, 3.22 ppm
3 H; textbook values, from memory) in CDCl3. The library, written in the test, holds MTBE
and two isomers (C5H12O, formulas from RDKit) under invented taxa.
"""

from __future__ import annotations

import pytest
from rdkit import Chem
from rdkit.Chem.Descriptors import ExactMolWt

from nmrcheck.chem import ion_mz
from nmrcheck.io.writers import write_bruker_fid
from nmrcheck.ms.library import open_library
from nmrcheck.plate import read_manifest
from nmrcheck.plate.screen import ScreenOptions, screen_well
from nmrcheck.synth import Line, simulate_fid

MTBE = "COC(C)(C)C"


@pytest.fixture(scope="module")
def screened(tmp_path_factory):
    root = tmp_path_factory.mktemp("known")
    write_bruker_fid(simulate_fid([Line(1.19, 0.9), Line(3.22, 0.3), Line(7.26, 0.05)], noise=0.002, solvent="CDCl3", seed=3), root / "fids" / "A1")
    mz = ion_mz(ExactMolWt(Chem.MolFromSmiles(MTBE)), "[M+H]+") * (1 + 1e-6)
    (root / "manifest.csv").write_text(
        f"well,spectrum,ms_feature\nA1,fids/A1,{mz:.5f} [M+H]+\nA2,fids/A1,{mz + 7.0:.5f} [M+H]+\n", encoding="utf-8"
    )
    (root / "known.csv").write_text(
        "name,smiles,genus,family\n"
        f"tertbutylin,{MTBE},Calyxia,Calyxiidae\n"
        "pentanolin,CCCCCO,Umbrella,Umbrellidae\n"
        "propylethylin,CCCOCC,Nocturnella,Calyxiidae\n",
        encoding="utf-8",
    )
    index = open_library(root / "known.csv", cache_dir=root / "cache")
    options = ScreenOptions(library=index.database, genus="Calyxia", family="Calyxiidae")
    plate = read_manifest(root / "manifest.csv")
    return {w.well: screen_well(w, plate.directory, options) for w in plate.wells}


def test_known_compounds_join_the_candidates_ranked_by_taxon(screened):
    r = screened["A1"]
    assert r.status == "done", r.error
    assert r.known.count == 3 and r.known.summary == "known (3 candidates)"
    assert [(m.rank, m.name, m.taxon_match) for m in r.known.matches] == [(1, "tertbutylin", "genus"), (2, "propylethylin", "family"), (3, "pentanolin", "other")]
    assert r.known.ions == ("[M+H]+",) and r.known.genus == "Calyxia"
    assert not [n for n in r.notes if n.startswith("known compounds")]
    known = [c for c in r.candidates if c["source"] == "library"]
    assert [c["known"]["name"] for c in known] == ["tertbutylin", "propylethylin", "pentanolin"]
    assert [c["known"]["taxon_match"] for c in known] == ["genus", "family", "other"]
    checked = {c["key"]: c for c in r.checks}
    assert all(c["key"] in checked for c in known)
    # The spectrum (9 H + 3 H singlets) fits MTBE better than its isomers.
    best = min((checked[c["key"]] for c in known), key=lambda c: c["rank"])
    assert best["label"].startswith("tertbutylin")


def test_no_known_compound_at_this_mass(screened):
    r = screened["A2"]
    assert r.known.count == 0 and r.known.matches == () and r.known.summary == "no known compound at this mass"
    assert not [c for c in r.candidates if c["source"] == "library"]


def test_the_search_record_round_trips_through_the_results_store(screened, tmp_path):
    from nmrcheck.plate.store import ResultsStore

    with ResultsStore(tmp_path / "out") as store:
        run_id = store.start_run(manifest="manifest.csv", options={}, software_version="test")
        for r in screened.values():
            store.save(run_id, r)
        back = store.current(with_trace=False)
    assert back["A1"].known == screened["A1"].known and back["A2"].known == screened["A2"].known


def test_a_well_without_ms_feature_or_library_has_no_search_record():
    from nmrcheck.plate.results import WellResult

    plain = WellResult.from_dict({"well": "A3", "status": "done", "verdict": "undecided", "notes": ["something else"]})
    assert plain.known is None and plain.notes == ("something else",)
