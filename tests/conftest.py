"""Shared fixtures: where the real recordings are (or a clear skip when they are not)."""

from __future__ import annotations

import os
from pathlib import Path

import pytest


def _refdata_dir() -> Path | None:
    value = os.environ.get("NMRCHECK_REFDATA")
    if not value:
        return None
    p = Path(value)
    return p if p.is_dir() else None


@pytest.fixture(scope="session")
def refdata() -> Path:
    """The folder of real recordings named by NMRCHECK_REFDATA (skip when unset or missing)."""
    p = _refdata_dir()
    if p is None:
        pytest.skip("real recordings not available: set NMRCHECK_REFDATA to the shared refdata folder")
    return p


def jcamp_recordings() -> list[str]:
    """Names of the JCAMP-DX recording folders, for parametrising (empty when refdata is absent)."""
    p = _refdata_dir()
    if p is None or not (p / "jcamp-fid").is_dir():
        return []
    return sorted(d.name for d in (p / "jcamp-fid").iterdir() if (d / "1h.fid.dx").exists())


def bruker_recordings() -> list[str]:
    p = _refdata_dir()
    if p is None or not (p / "bruker-raw").is_dir():
        return []
    return sorted(d.name for d in (p / "bruker-raw").iterdir() if (d / "fid").exists())
