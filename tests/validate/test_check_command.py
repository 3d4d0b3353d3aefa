"""The ``check`` command on a real recording: JSON layout, skipped entries and the plot file."""

from __future__ import annotations

import json
from pathlib import Path

from click.testing import CliRunner

from nmrcheck.cli import main


def test_check_json_and_plot(refdata, tmp_path):
    """Estragole (4-allylanisole, 140-67-0); [M+H]+ 149.09609 from C10H13O+ (molmass, independent)."""
    fid = Path(refdata) / "jcamp-fid" / "140-67-0" / "1h.fid.dx"
    png = tmp_path / "overlay.png"
    args = ["check", str(fid), "--smiles", "C=CCc1ccc(OC)cc1 estragole", "--formula", "C10H14O", "--formula", "C10Qq",
            "--mz", "149.09609", "--ion", "[M+H]+", "--json", "--plot", str(png)]
    result = CliRunner().invoke(main, args)
    assert result.exit_code == 0, result.output
    doc = json.loads(result.output)
    labels = [c["label"] for c in doc["candidates"]]
    assert set(labels) == {"estragole", "C10H14O"}
    wrong = next(c for c in doc["candidates"] if c["label"] == "C10H14O")
    assert wrong["verdict"] == "inconsistent"
    assert {"name", "status", "observed", "expected", "explanation"} <= set(wrong["checks"][0])
    assert doc["skipped"][0]["label"] == "C10Qq"
    assert png.stat().st_size > 1000


def test_check_without_candidates_is_a_clear_error(refdata):
    fid = Path(refdata) / "jcamp-fid" / "140-67-0" / "1h.fid.dx"
    result = CliRunner().invoke(main, ["check", str(fid), "--smiles", "C1CC"])
    assert result.exit_code == 2
    assert "no usable candidate" in result.output


def test_check_with_a_known_compound_library(refdata, tmp_path, monkeypatch):
    """Estragole's recording with a library holding estragole and its isomer anethole (both C10H12O,
    RDKit); the known compounds at the feature's mass become the candidates, genus match first."""
    monkeypatch.setenv("NMRCHECK_CACHE_DIR", str(tmp_path / "cache"))
    fid = Path(refdata) / "jcamp-fid" / "140-67-0" / "1h.fid.dx"
    library = tmp_path / "known.csv"
    library.write_text("name,smiles,genus,family\nestragole,C=CCc1ccc(OC)cc1,Artemisia,Asteraceae\n"
                       "anethole,COc1ccc(/C=C/C)cc1,Pimpinella,Apiaceae\nthymol,Cc1ccc(C(C)C)c(O)c1,Thymus,Lamiaceae\n")
    args = ["check", str(fid), "--mz", "149.09609", "--ion", "[M+H]+", "--library", str(library), "--genus", "Pimpinella", "--json"]
    result = CliRunner().invoke(main, args)
    assert result.exit_code == 0, result.output
    assert "known compounds: known (2 candidates)" in result.stderr
    doc = json.loads(result.stdout)
    labels = {c["label"] for c in doc["candidates"]}
    assert labels == {"anethole (known; genus pimpinella)", "estragole (known; other taxa artemisia)"}
    best = min(doc["candidates"], key=lambda c: c["rank"])
    assert best["label"].startswith("estragole")  # the spectrum decides, not the taxon


def test_check_with_retention_calibration(refdata, tmp_path):
    """Estragole (Crippen logP 2.68, RDKit) at 7.4 min on a synthetic gradient t = 2 + 2 logP min."""
    from rdkit import Chem
    from rdkit.Chem import Crippen

    fid = Path(refdata) / "jcamp-fid" / "140-67-0" / "1h.fid.dx"
    calibration = tmp_path / "calibration.csv"
    rows = ["name,smiles,rt_min"] + [f"{n},{s},{2 + 2 * Crippen.MolLogP(Chem.MolFromSmiles(s)):.3f}" for n, s in (
        ("ethanol", "CCO"), ("phenol", "c1ccccc1O"), ("benzene", "c1ccccc1"), ("toluene", "Cc1ccccc1"), ("naphthalene", "c1ccc2ccccc2c1"))]
    calibration.write_text("\n".join(rows) + "\n")
    base = ["check", str(fid), "--smiles", "C=CCc1ccc(OC)cc1 estragole", "--mz", "149.09609", "--ion", "[M+H]+", "--json",
            "--retention-calibration", str(calibration)]
    logp = Crippen.MolLogP(Chem.MolFromSmiles("C=CCc1ccc(OC)cc1"))
    on_time = CliRunner().invoke(main, [*base, "--rt", f"{2 + 2 * logp + 0.1:.2f}"])
    assert on_time.exit_code == 0, on_time.output
    check = next(c for c in json.loads(on_time.stdout)["candidates"][0]["checks"] if c["name"] == "retention")
    assert check["status"] == "pass"
    late = CliRunner().invoke(main, [*base, "--rt", f"{2 + 2 * logp + 3:.2f}"])
    cand = json.loads(late.stdout)["candidates"][0]
    assert next(c for c in cand["checks"] if c["name"] == "retention")["status"] == "warn"
    assert any(r.startswith("retention: ") for r in cand["reasons"])
    alone = CliRunner().invoke(main, [*base[:-2], "--rt", "7"])
    assert alone.exit_code == 2 and "give both" in alone.output
