"""Enumeration: nothing in range is missed, checked against brute force on small cases."""

from __future__ import annotations

import re

import molmass
import numpy as np
import pytest

from nmrcheck.chem.enumerate import FormulaTable, Pruning, enumerate_formulas, parse_element_ranges
from nmrcheck.chem.rules import RULE_PRESETS, evaluate_rules, filter_rules, pruning_for
from nmrcheck.errors import FormulaError, ParameterError

SMALL = {"C": (0, 12), "H": (0, 26), "N": (0, 4), "O": (0, 7), "S": (0, 2), "Cl": (0, 2)}
# Masses for the brute force from molmass (independent of nmrcheck's table).
MASS = {s: molmass.ELEMENTS[s].isotopes[molmass.ELEMENTS[s].nominalmass].mass for s in ("C", "H", "N", "O", "S", "Cl", "P", "Br", "F")}


def brute_force(low, high, ranges):
    """Every composition in ``ranges`` (the full product) with mass in [low, high]: set of count tuples."""
    symbols = sorted(ranges)
    grids = np.meshgrid(*(np.arange(lo, hi + 1) for lo, hi in (ranges[s] for s in symbols)), indexing="ij")
    counts = np.stack([g.ravel() for g in grids], axis=1)
    masses = counts @ np.array([MASS[s] for s in symbols])
    inside = counts[(masses >= low) & (masses <= high)]
    return {tuple(sorted((s, int(n)) for s, n in zip(symbols, row) if n)) for row in inside}


def as_set(table: FormulaTable):
    return {tuple(sorted((s, int(n)) for s, n in zip(table.elements, row) if n)) for row in table.counts}


CASES = [(100.0, 100.2), (152.0, 152.05), (181.07, 181.08), (244.0, 244.1), (270.05, 270.06), (301.0, 301.3)]


@pytest.mark.parametrize(("low", "high"), CASES)
def test_enumeration_is_exhaustive(low, high):
    expected = brute_force(low, high, SMALL)
    found = enumerate_formulas(low, high, SMALL)
    assert len(found) == len(as_set(found))  # no duplicates
    assert as_set(found) == expected
    assert expected  # the case is not trivially empty


def test_masses_are_the_monoisotopic_masses():
    table = enumerate_formulas(180.0, 180.1, SMALL)
    for i in range(len(table)):
        assert table.masses[i] == pytest.approx(table.formula(i).monoisotopic_mass, abs=1e-9)


def test_minimum_counts_are_honoured():
    ranges = dict(SMALL, N=(1, 3), S=(1, 1))
    expected = brute_force(240.0, 241.0, ranges)
    assert as_set(enumerate_formulas(240.0, 241.0, ranges)) == expected
    assert all(dict(f).get("S") == 1 for f in expected)


def test_many_elements_take_the_split_path():
    """Eight elements: the searched group holds several of them (the meet-in-the-middle join)."""
    ranges = {"C": (0, 10), "H": (0, 20), "N": (0, 3), "O": (0, 5), "P": (0, 1), "S": (0, 2), "Cl": (0, 2), "Br": (0, 1)}
    expected = brute_force(255.0, 255.4, ranges)
    assert as_set(enumerate_formulas(255.0, 255.4, ranges)) == expected


@pytest.mark.parametrize("preset", sorted(RULE_PRESETS))
@pytest.mark.parametrize(("low", "high"), [(194.0, 194.2), (286.05, 286.15), (352.0, 352.2)])
def test_pruned_enumeration_then_rules_equals_brute_force_then_rules(preset, low, high):
    """The enumeration's rule shortcuts change speed, never the result."""
    ranges = {"C": (0, 22), "H": (0, 40), "N": (0, 4), "O": (0, 8), "S": (0, 2), "Cl": (0, 1)}
    every = enumerate_formulas(low, high, ranges)
    assert as_set(every) == brute_force(low, high, ranges)
    ratio = "extended" if preset == "extended" else "common"
    verdict = evaluate_rules(every, ratio_range=ratio)
    keep = np.ones(len(every), dtype=bool)
    for rule in RULE_PRESETS[preset]:
        keep &= verdict[rule]
    expected = as_set(every.take(keep))
    pruned = enumerate_formulas(low, high, ranges, pruning=pruning_for(preset))
    assert as_set(filter_rules(pruned, RULE_PRESETS[preset], ratio_range=ratio)) == expected
    if preset != "none":
        assert len(pruned) <= len(every)


def test_empty_and_impossible_windows():
    assert len(enumerate_formulas(0.5, 0.9, SMALL)) == 0
    assert len(enumerate_formulas(10.0, 20.0, {"C": (2, 3)})) == 0
    with pytest.raises(ParameterError, match="low <= high"):
        enumerate_formulas(200.0, 100.0, SMALL)


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        ("C0-80 H0-150 N0-10 O0-40 S0-3 Cl0-2", {"C": (0, 80), "H": (0, 150), "N": (0, 10), "O": (0, 40), "S": (0, 3), "Cl": (0, 2)}),
        ("C,H,N2-4", {"C": (0, None), "H": (0, None), "N": (2, 4)}),
        (" C  H ", {"C": (0, None), "H": (0, None)}),
    ],
)
def test_parse_element_ranges(text, expected):
    assert parse_element_ranges(text) == expected


@pytest.mark.parametrize(
    ("text", "fragment"),
    [
        ("C0-80 H0", "'H0'"),
        ("C0-80 Xx0-3", "unknown element 'Xx'"),
        ("C5-2", "minimum 5 is above maximum 2"),
        ("C0-5 C0-8", "C given twice"),
        ("C0-5000", "beyond"),
        ("", "empty"),
        ("C-5", "'C-5'"),
    ],
)
def test_malformed_element_ranges_name_the_token(text, fragment):
    with pytest.raises(FormulaError, match=re.escape(fragment)):
        parse_element_ranges(text)


def test_huge_search_space_is_refused_with_advice():
    with pytest.raises(ParameterError, match="narrow the element ranges"):
        enumerate_formulas(
            2999.0, 2999.01, {"C": (0, 250), "H": (0, 500), "N": (0, 200), "O": (0, 180), "P": (0, 90), "S": (0, 90), "Cl": (0, 80)}
        )


def test_tables_cached_on_disk_give_the_same_compositions(tmp_path, monkeypatch):
    """The sorted tables are written to the user cache (here a temporary folder) and read back
    instead of being built; a damaged cache file is rebuilt."""
    import nmrcheck.chem.enumerate as enumerate_module

    monkeypatch.setenv("NMRCHECK_CACHE_DIR", str(tmp_path))
    monkeypatch.setattr(enumerate_module, "_SAVE_AFTER_S", 0.0)
    ranges = {"C": (0, 30), "H": (0, 60), "N": (0, 5), "O": (0, 10), "S": (0, 2)}
    enumerate_module._groups.cache_clear()
    built = enumerate_formulas(400.10, 400.12, ranges)
    files = list((tmp_path / "formula-tables").glob("*.npz"))
    assert len(files) == 1
    enumerate_module._groups.cache_clear()

    def no_build(*args):
        raise AssertionError("tables were built again instead of read from the cache")

    monkeypatch.setattr(enumerate_module, "_build_groups", no_build)
    loaded = enumerate_formulas(400.10, 400.12, ranges)
    assert set(loaded.formulas()) == set(built.formulas())
    assert np.array_equal(np.sort(loaded.masses), np.sort(built.masses))
    monkeypatch.undo()
    monkeypatch.setenv("NMRCHECK_CACHE_DIR", str(tmp_path))
    files[0].write_bytes(b"not a table")
    enumerate_module._groups.cache_clear()
    assert set(enumerate_formulas(400.10, 400.12, ranges).formulas()) == set(built.formulas())
    enumerate_module._groups.cache_clear()


def test_small_first_group_skips_elements_and_stays_exact(monkeypatch):
    """With a tabulated group too small for the widest ranges, the split passes over the elements
    that do not fit and takes smaller ones after them; the compositions found are still every one
    in the window (brute force)."""
    import nmrcheck.chem.enumerate as enumerate_module

    ranges = {"C": (0, 10), "H": (0, 20), "N": (0, 6), "O": (0, 5), "P": (0, 1), "S": (0, 2), "Cl": (0, 2), "Br": (0, 1)}
    monkeypatch.setattr(enumerate_module, "_FIRST_GROUP_SIZE", 500)
    monkeypatch.setattr(enumerate_module, "_SECOND_GROUP_TARGET", 1)
    enumerate_module._groups.cache_clear()
    try:
        a, b = enumerate_module._groups(
            tuple((s, lo, hi) for s, (lo, hi) in sorted(ranges.items())), enumerate_module.Pruning(), 500.0
        )
        symbols = sorted(ranges)
        first = {symbols[i] for i in a.columns}
        assert {"C", "H"} <= first and "N" not in first and first & {"P", "Cl", "Br", "S", "O"}
        for low, high in ((255.0, 255.4), (301.0, 301.2)):
            assert as_set(enumerate_formulas(low, high, ranges)) == brute_force(low, high, ranges)
    finally:
        enumerate_module._groups.cache_clear()


@pytest.mark.parametrize("visible", [(10, 12), (17, 17), (24, 40)])
def test_proton_bound_in_the_enumeration_is_the_proton_filter(visible):
    """The proton bound (H visible from H - E to H, E = O + S + 2 N exchangeable) applied while
    enumerating keeps exactly the compositions that the bound keeps when applied afterwards."""
    from nmrcheck.chem.enumerate import Pruning

    ranges = {"C": (0, 22), "H": (0, 40), "N": (0, 4), "O": (0, 8), "S": (0, 2), "Cl": (0, 1)}
    every = enumerate_formulas(352.0, 352.2, ranges)
    h, o, n, s = (every.column(x).astype(int) for x in ("H", "O", "N", "S"))
    expected = as_set(every.take((h >= visible[0]) & (h - o - s - 2 * n <= visible[1])))
    assert expected
    assert as_set(enumerate_formulas(352.0, 352.2, ranges, pruning=Pruning(visible_h=(visible[0], visible[1], 0)))) == expected


@pytest.mark.parametrize("first_group_size", [2_500_000, 50_000, 20_000, 3_000])
def test_pruned_enumeration_keeps_only_the_element_probability_passes(monkeypatch, first_group_size):
    """Golden rule 6 (Kind & Fiehn 2007 Table 3) is applied while enumerating, wherever the split puts
    N, O, P and S (tabulated C H N O, C H O, C H P or C H alone): every composition found passes it,
    and none that passes is lost."""
    import nmrcheck.chem.enumerate as enumerate_module

    ranges = {"C": (0, 30), "H": (0, 60), "N": (0, 12), "O": (0, 24), "P": (0, 6), "S": (0, 6)}
    monkeypatch.setattr(enumerate_module, "_FIRST_GROUP_SIZE", first_group_size)
    monkeypatch.setattr(enumerate_module, "_SECOND_GROUP_TARGET", 1)
    enumerate_module._groups.cache_clear()
    enumerate_module._probability_caps.cache_clear()
    try:
        every = enumerate_formulas(650.0, 650.4, ranges)
        passing = as_set(every.take(evaluate_rules(every, rules=("element_probability",))["element_probability"]))
        assert len(passing) < len(every)
        only = Pruning(probability_groups=pruning_for("common").probability_groups)
        pruned = enumerate_formulas(650.0, 650.4, ranges, pruning=only)
        assert as_set(pruned) == passing
    finally:
        enumerate_module._groups.cache_clear()
        enumerate_module._probability_caps.cache_clear()
