"""Text table and JSON of formula candidates."""

from __future__ import annotations

import json

from nmrcheck.chem.adducts import ion_mz
from nmrcheck.chem.candidates import formula_search
from nmrcheck.chem.formula import parse_formula
from nmrcheck.report.formulas_text import candidate_record, format_search, search_json

CAFFEINE = parse_formula("C8H10N4O2")  # caffeine (common practice formula)


def caffeine_search(**kwargs):
    mz = ion_mz(CAFFEINE.monoisotopic_mass, "[M+H]+")
    return formula_search([(mz, "[M+H]+")], ppm=3, **kwargs)


def test_table_lists_candidates_with_score_parts():
    text = format_search(caffeine_search(isotopes=[100, 10.2, 0.7]))
    assert "C8H10N4O2" in text
    header = next(line for line in text.splitlines() if line.strip().startswith("rank"))
    for column in ("formula", "ppm", "RDBE", "score", "mass", "isotope", "prior", "failed rules"):
        assert column in header
    assert "-0.00" not in text  # no minus sign on zero


def test_table_without_isotopes_or_candidates():
    text = format_search(caffeine_search(prior=None))
    header = next(line for line in text.splitlines() if line.strip().startswith("rank"))
    assert "isotope" not in header and "prior" not in header
    empty = format_search(formula_search([(300.0, "[M+H]+")], ppm=1, elements="C H"))
    assert "no formula within tolerance" in empty


def test_json_is_a_list_of_candidates_and_full_record_on_request():
    search = caffeine_search(isotopes=[100, 10.2, 0.7])
    data = json.loads(search_json(search))
    assert data[0] == json.loads(json.dumps(candidate_record(search.candidates[0])))
    assert data[0]["isotopes"]["agrees"] is True
    full = json.loads(search_json(search, full=True))
    assert full["n_passed"] == len(full["candidates"]) == len(data)
    assert full["features"] == [{"mz": search.features[0][0], "ion": "[M+H]+"}]
