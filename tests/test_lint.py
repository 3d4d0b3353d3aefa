"""Static check of the code base: no undefined name, unused import or unused local (pyflakes).

A stage that fails inside a plate well is recorded as that well's error rather than raised, so an
undefined name in a rarely taken branch would otherwise pass the suite unseen.
"""

from __future__ import annotations

import io
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]


def test_no_pyflakes_findings():
    api = pytest.importorskip("pyflakes.api", reason="pyflakes not installed (it is in the 'test' extra)")
    from pyflakes.reporter import Reporter

    out, err = io.StringIO(), io.StringIO()
    paths = [str(ROOT / d) for d in ("nmrcheck", "tests", "bench") if (ROOT / d).is_dir()]
    count = api.checkRecursive(paths, Reporter(out, err))
    assert count == 0, out.getvalue() + err.getvalue()
