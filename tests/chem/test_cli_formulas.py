"""The ``nmrcheck formulas`` command: table, JSON, and one-line errors for bad input."""

from __future__ import annotations

import json

import pytest
from click.testing import CliRunner

from nmrcheck.chem.adducts import ion_mz
from nmrcheck.chem.formula import parse_formula
from nmrcheck.cli import main

RUTIN = parse_formula("C27H30O16")  # rutin, formula from memory (checked against RDKit in test_formula)


def run(*args):
    return CliRunner().invoke(main, ["formulas", *args])


def rutin_args():
    m = RUTIN.monoisotopic_mass
    return [f"{ion_mz(m, '[M+H]+'):.5f}", f"{ion_mz(m, '[M+Na]+'):.5f}", "--ion", "[M+H]+", "--ion", "[M+Na]+", "--ppm", "3", "--isotopes", "100,30.5,8.0"]


def test_table():
    result = run(*rutin_args())
    assert result.exit_code == 0, result.output
    lines = result.output.splitlines()
    assert any(line.split()[:2] == ["1", "C27H30O16"] for line in lines)
    assert "isotope" in result.output and "rank" in result.output
    assert "Screening aid" in result.output


def test_json_fields():
    result = run(*rutin_args(), "--json", "--max", "3")
    assert result.exit_code == 0, result.output
    data = json.loads(result.output)
    assert isinstance(data, list) and 1 <= len(data) <= 3
    first = data[0]
    for key in ("formula", "neutral_mass", "error_ppm", "rdbe", "score", "rank", "rules_passed", "score_parts"):
        assert key in first
    assert first["formula"] == "C27H30O16" and first["rank"] == 1
    assert first["neutral_mass"] == pytest.approx(RUTIN.monoisotopic_mass, abs=1e-5)
    assert first["rdbe"] == 13.0
    assert set(first["score_parts"]) == {"mass", "isotopes", "prior"}


def test_element_option():
    m = parse_formula("C17H17ClO6").monoisotopic_mass  # griseofulvin
    result = run(f"{ion_mz(m, '[M+H]+'):.5f}", "--ion", "[M+H]+", "--elements", "C0-40 H0-60 O0-12 Cl0-2", "--json")
    assert result.exit_code == 0, result.output
    assert json.loads(result.output)[0]["formula"] == "C17H17ClO6"


@pytest.mark.parametrize(
    ("args", "fragment"),
    [
        (["-5", "--ion", "[M+H]+"], "must be positive"),
        (["123456", "--ion", "[M+H]+"], "beyond"),
        (["abc", "--ion", "[M+H]+"], "not a number"),
        (["300.1", "--ion", "[M+Foo]+"], "'Foo'"),
        (["300.1", "--ion", "M+H"], "bracket notation"),
        (["300.1"], "--ion"),
        (["300.1", "301.1", "--ion", "[M+H]+"], "one --ion per m/z"),
        (["300.1", "--ion", "[M+H]+", "--elements", "C0-80 H0-150 Q0-3"], "'Q0-3'"),
        (["300.1", "--ion", "[M+H]+", "--elements", "C9-3"], "minimum 9 is above maximum 3"),
        (["300.1", "--ion", "[M+H]+", "--isotopes", "100,x"], "isotopes"),
        (["300.1", "323.1", "--ion", "[M+H]+", "--ion", "[M+Na]+"], "disagree"),
        (["300.1", "--ion", "[M+H]+", "--ppm", "900"], "ppm"),
    ],
)
def test_bad_input_is_one_line(args, fragment):
    result = run(*args)
    assert result.exit_code == 2
    message = result.output.strip()
    assert message.startswith("nmrcheck: ") and "\n" not in message
    assert fragment in message


def test_charged_cation_with_proton_range():
    """Berberine C20H18NO4+ (PubChem) at m/z 336.1230 as [M]+, 18 H seen."""
    result = run("336.1230", "--ion", "[M]+", "--h-range", "17-19", "--json")
    assert result.exit_code == 0, result.output
    best = json.loads(result.output)[0]
    assert (best["formula"], best["charge"], best["rdbe"]) == ("C20H18NO4", 1, 12.5)
    assert "protons" in best["score_parts"]
    table = run("336.1230", "--ion", "[M]+", "--h-range", "17-19")
    assert "C20H18NO4+" in table.output and "note         proton bound" in table.output
    bad = run("336.1230", "--ion", "[M]+", "--h-range", "many")
    assert bad.exit_code == 2 and "--h-range 'many'" in bad.output
