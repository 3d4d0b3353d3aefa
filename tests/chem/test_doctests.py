"""The Examples in the formula engine's docstrings run and give what they show."""

from __future__ import annotations

import doctest

import pytest

import nmrcheck.chem.adducts
import nmrcheck.chem.candidates
import nmrcheck.chem.formula


@pytest.mark.parametrize("module", [nmrcheck.chem.formula, nmrcheck.chem.adducts, nmrcheck.chem.candidates])
def test_docstring_examples(module):
    result = doctest.testmod(module, optionflags=doctest.NORMALIZE_WHITESPACE)
    assert result.attempted > 0
    assert result.failed == 0
