"""The triage line of a well: which candidate it speaks of, its name, and the one reason."""

from __future__ import annotations

import json

from nmrcheck.data import load_table, user_citation
from nmrcheck.io.assay import AssayReadout
from nmrcheck.plate.results import WellResult
from nmrcheck.report.triage import display_units, format_amount, triage, well_line


def _result(well="A1", verdict="inconsistent", **kw):
    candidates = (
        {"key": "c1", "kind": "formula", "formula": "C10H12O2", "source": "manifest+hrms", "rank": 1},
        {"key": "c2", "kind": "structure", "formula": "C10H12O2", "name": "eugenol", "smiles": "COc1cc(CC=C)ccc1O", "source": "manifest"},
    )
    checks = (
        {"key": "c1", "label": "C10H12O2", "formula": "C10H12O2", "verdict": "consistent", "rank": 1, "counted_h": 12, "checks": [], "reasons": ["fits"]},
        {"key": "c2", "label": "eugenol", "formula": "C10H12O2", "verdict": "inconsistent", "rank": 2, "counted_h": 12,
         "checks": [{"name": "mass", "status": "pass", "explanation": "ok"}, {"name": "shift regions", "status": "fail", "explanation": "aromatic region holds 0.0 H where 3 are expected"}],
         "reasons": []},
    )
    base = dict(well=well, status="done", verdict=verdict, candidates=candidates, checks=checks,
                count={"total_h": 14.0, "total_h_low": 13.3, "total_h_high": 14.7, "integer_h": 14},
                amount={"nmol": 59.4, "ug": 9.76, "conc_mM": 1.7, "uncertainty_pct": 20.0, "method": "solvent residual", "basis": "C10H12O2 (12 H)"},
                recommendation={"decision": "go", "experiment": "1H-13C HSQC", "reasons": ["59.4 nmol (at least 35.6 at k=2) reaches the 30 nmol"],
                                "threshold_source": "common practice for microcryoprobes (from memory; varies several-fold with probe)"})
    base.update(kw)
    return WellResult(**base)


def test_contradicted_structure_is_not_hidden_behind_a_fitting_formula():
    line = well_line(_result())
    assert line.name == "eugenol" and line.concern == "contradicted" and line.category == "attention"
    assert line.reason.startswith("shift regions: aromatic region holds 0.0 H")
    assert line.count == "12 H"


def test_name_not_formula_and_units_with_symbols():
    line = well_line(_result(verdict="consistent", checks=(_result().checks[0],)))
    assert line.name == "eugenol" and line.formula == "C10H12O2"
    assert line.category == "ready" and line.next_step == "go: 1H-13C HSQC"
    assert line.amount == "9.8 µg" and "± 20 %" in line.amount_detail and "59.4 nmol" in line.amount_detail
    assert "from memory" not in line.next_detail and "varies several-fold" in line.next_detail


def test_lower_bound_count_says_at_least():
    """A count whose one-proton signals could be under the detection limit is shown as a lower bound."""
    r = _result(verdict="undecided", checks=(), count={"total_h": 12.8, "total_h_low": 11.9, "total_h_high": 29.0, "integer_h": 13, "lower_bound": True})
    line = well_line(r)
    assert line.count == "at least 12.8 H"
    assert "detection limit" in line.count_detail


def test_ambiguous_count_is_shown_both_ways():
    r = _result(verdict="consistent", count={"total_h": 7.0, "integer_h": 7, "ambiguous": True, "alternative_totals": [14.0]})
    line = well_line(r)
    assert line.count == "ambiguous: 7 or 14 H" and line.concern == "ambiguous count"


def test_active_wells_lead_each_list():
    results = {"A1": _result("A1", "consistent"), "A2": _result("A2", "consistent"), "A3": _result("A3")}
    assay = {"A2": AssayReadout("A2", 80.0, "%", 50.0), "A1": AssayReadout("A1", 10.0, "%", 50.0)}
    attention, ready = triage(results, assay)
    assert [ln.well for ln in ready] == ["A2", "A1"] and [ln.well for ln in attention] == ["A3"]


def test_purity_and_known_fields_shown_when_present():
    r = _result(verdict="consistent")
    # As the validation writes it (nmrcheck.validate.purity, as_dict: call, label, share_pct, evidence).
    object.__setattr__(r, "purity", {"call": "major compound with impurities", "share_pct": 85.0, "evidence": ["2 residual signal sets"]})
    line = well_line(r)
    assert line.purity == "major compound with impurities (about 85 %)" and line.purity_detail == "2 residual signal sets"
    object.__setattr__(r, "purity", "mixture")
    assert well_line(r).concern == "mixture"


def test_no_shipped_source_shows_from_memory_to_users():
    for name in ("solvents", "standards", "recommendation_defaults", "ion_species"):
        for row in load_table(name):
            cited = user_citation(row["source"])
            assert "memory" not in cited.lower() and cited, (name, row["source"])


def test_display_units():
    assert display_units("20.9 nmol +- 20 %, 3.2 ug in 35 uL") == "20.9 nmol ± 20 %, 3.2 µg in 35 µL"
    assert format_amount(None) == ("", None, "")


def test_related_wells_from_msms_groups():
    r = _result(verdict="consistent")
    # As the LC-MS stage writes a group (nmrcheck.ms.msms.SpectralGroup.as_dict).
    # As the plate stores the LC-MS groups (nmrcheck.plate.lcms, WellResult.lcms['related_wells']).
    r = _result(verdict="consistent", lcms={"features": [], "related_wells": [
        {"wells": ["A1", "B4", "C2"], "others": ["B4", "C2"], "relation": "related", "summary": "wells A1, B4 and C2 share fragments"}]})
    line = well_line(r)
    assert line.related == ("B4", "C2") and "share fragments" in line.related_note


def test_known_compound_search_shown_from_its_record():
    from nmrcheck.plate.results import Dereplication, KnownMatch

    # As the plate screen records it (nmrcheck.plate.screen from nmrcheck.ms.library.KnownLookup).
    r = _result(verdict="consistent", known=Dereplication(count=0, ions=("[M+H]+",), ppm=3.0))
    assert (well_line(r).known, well_line(r).known_detail) == ("no known compound at this mass", "")
    matches = tuple(KnownMatch(k, f"compound {k}", "C10H12O2", taxon) for k, taxon in enumerate(["genus", "family"] + ["other"] * 5, start=1))
    line = well_line(_result(verdict="consistent", known=Dereplication(count=7, matches=matches)))
    assert line.known == "known (7 candidates)"
    assert line.known_detail == "compound 1 (genus), compound 2 (family), compound 3, compound 4, compound 5 and 2 more"
    failed = well_line(_result(verdict="consistent", known=Dereplication(count=None, error="index.sqlite: not a known-compound index")))
    assert failed.known == "" and "not a known-compound index" in failed.known_detail
    assert well_line(_result(verdict="consistent")).known == ""


def test_results_stored_before_the_record_are_read_from_their_note():
    """A result stored when the search spoke only through its note ('known compounds: ...')."""
    old = {"well": "A1", "status": "done", "verdict": "consistent",
           "notes": ["proton count: 12 H", "known compounds: known (2 candidates)"],
           "candidates": [{"kind": "structure", "source": "library", "name": "eugenol (known; genus syzygium)", "smiles": "COc1cc(CC=C)ccc1O",
                           "known": {"name": "eugenol", "formula": "C10H12O2", "taxon_match": "genus", "error_ppm": 0.4,
                                     "inchikey_block": "RRAFCDWBNXTKKO", "smiles": "COc1cc(CC=C)ccc1O"}}]}
    r = WellResult.from_dict(old)
    assert r.known.count == 2 and [(m.rank, m.name, m.taxon_match) for m in r.known.matches] == [(1, "eugenol", "genus")]
    assert r.notes == ("proton count: 12 H",)
    assert well_line(r).known == "known (2 candidates)"
    none = WellResult.from_dict({**old, "notes": ["known compounds: no known compound at this mass"], "candidates": []})
    assert none.known.count == 0 and well_line(none).known == "no known compound at this mass"
    again = WellResult.from_dict(json.loads(r.to_json()))
    assert again.known == r.known


def test_json_outputs_cite_without_the_contributors_note(tmp_path):
    """The JSON of `process` (amount reference, thresholds) shows citations as users see them."""
    from click.testing import CliRunner

    from nmrcheck.cli import main
    from nmrcheck.io.writers import write_bruker_fid
    from nmrcheck.synth import Line, simulate_fid

    fid = simulate_fid([Line(3.81, 3, 0.9), Line(7.26, 20.0, 1.0), Line(0.0, 0.5, 0.8)], spectrometer_mhz=600.13, sweep_width_hz=9600.0,
                       points=8192, carrier_ppm=6.0, noise=0.005, seed=2, solvent="CDCl3")
    write_bruker_fid(fid, tmp_path / "1")
    done = CliRunner().invoke(main, ["process", str(tmp_path / "1"), "--json", "--solvent-reference", "--deuteration-pct", "99.8", "--volume-ul", "35"])
    assert done.exit_code == 0, done.output
    assert "Gottlieb" in done.output or "common practice" in done.output
    assert "from memory" not in done.output
