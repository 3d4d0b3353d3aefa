"""`nmrcheck process`: the fields the issue names, the exports, and one-line errors for bad input."""

from __future__ import annotations

import json

import numpy as np
import pytest
from click.testing import CliRunner

from nmrcheck.cli import main
from nmrcheck.io.writers import write_bruker_fid
from nmrcheck.synth import Line, simulate_fid

# An invented spin system in CDCl3 with the residual CHCl3 line at 7.26 ppm (Gottlieb 1997, from memory).
LINES = [Line(7.80, 1.0, 1.0, (8.0,)), Line(3.85, 3.0, 1.0), Line(1.20, 6.0, 1.0, (6.8,)), Line(7.26, 0.05, 0.8)]


@pytest.fixture(scope="module")
def experiment(tmp_path_factory):
    d = tmp_path_factory.mktemp("exp") / "10"
    fid = simulate_fid(LINES, points=16384, noise=0.0005, p0_deg=35.0, p1_deg=10.0, group_delay_points=67.98)
    write_bruker_fid(fid, d)
    return d


def test_json_fields(experiment):
    result = CliRunner().invoke(main, ["process", str(experiment), "--json"])
    assert result.exit_code == 0, result.output
    out = json.loads(result.output)
    for key in ("solvent", "reference", "phase", "snr", "regions", "total_h", "total_h_range"):
        assert key in out
    assert out["solvent"] == "CDCl3"
    assert out["reference"]["kind"] == "solvent" and out["reference"]["ppm"] == 7.26
    assert set(out["phase"]) >= {"p0_deg", "p1_deg"}
    assert {"start_ppm", "end_ppm", "integral", "h", "flag"} <= set(out["regions"][0])
    assert round(out["total_h"]) == 10  # 1 + 3 + 6 H by construction
    lo, hi = out["total_h_range"]
    assert lo <= 10 <= hi
    # a clean spectrum: every one-proton signal is seen, so the count is not a lower bound
    assert isinstance(out["ambiguous"], bool) and isinstance(out["alternative_totals"], list)
    assert out["lower_bound"] is False


def test_exports(experiment, tmp_path):
    npz, png = tmp_path / "s.npz", tmp_path / "s.png"
    result = CliRunner().invoke(main, ["process", str(experiment), "--size", "32768", "--lb", "1.0",
                                       "--save-spectrum", str(npz), "--plot", str(png)])
    assert result.exit_code == 0, result.output
    with np.load(npz) as z:
        assert z["ppm"].size == z["real"].size == z["imag"].size == 32768
        assert z["ppm"][0] > z["ppm"][-1]  # high ppm first, as instrument software stores spectra
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert "Screening aid, not an identification" in result.output


@pytest.mark.parametrize(
    "make, fragment",
    [
        (lambda p: p / "missing.dx", "no such file"),
        (lambda p: (p / "notes.txt").write_text("hello") and p / "notes.txt", "unknown format"),
        (lambda p: (p / "cut.dx").write_text("##TITLE=x\n##DATA TYPE= NMR FID\n##END=\n") and p / "cut.dx", "cut.dx"),
    ],
)
def test_bad_input_is_one_line(tmp_path, make, fragment):
    path = make(tmp_path)
    result = CliRunner().invoke(main, ["process", str(path)])
    assert result.exit_code == 2
    lines = [ln for ln in result.output.splitlines() if ln.strip()]
    assert len(lines) == 1 and fragment in lines[0] and "Traceback" not in result.output


def test_truncated_binary_is_one_line(experiment, tmp_path):
    import shutil

    d = tmp_path / "cut"
    shutil.copytree(experiment, d)
    data = (d / "fid").read_bytes()
    (d / "fid").write_bytes(data[: len(data) // 2])
    result = CliRunner().invoke(main, ["process", str(d)])
    assert result.exit_code == 2 and "truncated" in result.output and "Traceback" not in result.output


def test_bad_option_names_the_field(experiment):
    result = CliRunner().invoke(main, ["process", str(experiment), "--size", "1000"])
    assert result.exit_code == 2 and "size" in result.output
