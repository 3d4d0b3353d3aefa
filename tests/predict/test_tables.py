"""The predict package's reference tables: present, sourced, consistent with each other."""

from __future__ import annotations

import pytest

from nmrcheck.data import load_table
from nmrcheck.predict import _tables

TABLES = [
    "sp3_increments",
    "shoolery_constants",
    "alkene_increments",
    "benzene_increments",
    "heteroaromatic_shifts",
    "shift_base_values",
    "shift_classes",
    "shift_tolerance_widening",
    "exchangeable_classes",
    "shift_regions",
    "solvent_exchange",
]


@pytest.mark.parametrize("name", TABLES)
def test_every_row_names_its_source(name):
    rows = load_table(name)
    assert rows
    assert all(r["source"].strip() for r in rows)


def test_base_value_classes_have_tolerances():
    for bv in _tables.base_values().values():
        assert _tables.class_tolerance(bv.shift_class) > 0


def test_heteroaromatic_patterns_compile_and_map_one_atom():
    rows = _tables.heteroaromatic_rows()
    assert {r.ring for r in rows} >= {"pyridine", "furan", "thiophene", "pyrrole", "indole"}


def test_increment_tables_are_numeric():
    for table in (_tables.sp3_increments(), _tables.alkene_increments(), _tables.benzene_increments()):
        assert all(len(v) == 3 for v in table.values())
