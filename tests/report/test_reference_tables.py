"""`nmrcheck tables`: the reference tables a user may name, in text and JSON."""

from __future__ import annotations

import json

from click.testing import CliRunner

from nmrcheck.cli import main


def test_json_lists_standards_solvents_ions_and_experiments():
    done = CliRunner().invoke(main, ["tables", "--json"])
    assert done.exit_code == 0, done.output
    doc = json.loads(done.output)
    assert set(doc) == {"standards", "solvents", "ions", "experiments", "defaults"}
    solvents = {s["solvent"]: s for s in doc["solvents"]}
    # Gottlieb, Kotlyar & Nudelman, J. Org. Chem. 1997, 62, 7512, Table 1: CHCl3 7.26 s, DMSO-d5 2.50 quintet, CHD2OD 3.31.
    assert solvents["CDCl3"]["residual"][0]["ppm"] == 7.26
    assert solvents["DMSO-d6"]["residual"][0] == {"name": "DMSO-d5", "ppm": 2.50, "multiplicity": "quint"}
    assert solvents["CD3OD"]["residual"][0]["ppm"] == 3.31
    # TMS defines 0 ppm (IUPAC, Harris et al. 2001); DSS carries 9 equivalent methyl H (its structure).
    assert solvents["CDCl3"]["reference"][0]["ppm"] == 0.0
    dss = next(s for s in doc["standards"] if s["name"] == "DSS")
    assert dss["n_h"] == 9 and dss["signal_ppm"] == 0.0
    ions = {i["notation"]: i for i in doc["ions"]}
    assert ions["[M+H]+"]["charge"] == 1 and ions["[M-H]-"]["charge"] == -1 and ions["[2M+Na]+"]["molecules"] == 2
    exps = {e["experiment"]: e for e in doc["experiments"]}
    assert exps["1H-13C HSQC"]["go_nmol"] > exps["1H-13C HSQC"]["borderline_nmol"]
    assert doc["defaults"]["mass_tolerance_ppm"] > 0
    # Citations as users see them: no contributors' note.
    assert "from memory" not in done.output


def test_text_names_one_table():
    done = CliRunner().invoke(main, ["tables", "experiments"])
    assert done.exit_code == 0
    assert "1H-13C HSQC" in done.output and "30 nmol" in done.output and "Internal standards" not in done.output
    assert "from memory" not in done.output


def test_unknown_table_is_refused():
    done = CliRunner().invoke(main, ["tables", "colours"])
    assert done.exit_code == 2 and "colours" in done.output
