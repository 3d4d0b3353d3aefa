"""fixtures/make_synthetic_fids.py writes recordings whose known answers nmrcheck recovers."""

from __future__ import annotations

import runpy
from pathlib import Path

from nmrcheck.processing import process

SCRIPT = Path(__file__).resolve().parents[1] / "fixtures" / "make_synthetic_fids.py"


def test_written_recordings_give_their_known_answers(tmp_path, capsys):
    module = runpy.run_path(str(SCRIPT))
    module["main"](str(tmp_path))
    strong = process(tmp_path / "known-14H")
    assert strong.count.integer_h == 14  # 1 + 1 + 1 + 3 + 2 + 6 H by construction
    assert process(tmp_path / "noise-only").count is None
