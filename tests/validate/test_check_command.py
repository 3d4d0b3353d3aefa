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
