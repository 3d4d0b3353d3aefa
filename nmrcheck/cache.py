"""The per-user cache folder nmrcheck keeps derived tables in (formula tables, library indexes)."""

from __future__ import annotations

import os
from pathlib import Path

__all__ = ["user_cache_dir"]


def user_cache_dir(*parts: str) -> Path | None:
    """``$NMRCHECK_CACHE_DIR`` (empty: no disk cache), else ``$XDG_CACHE_HOME/nmrcheck`` or ``~/.cache/nmrcheck``; joined with ``parts``."""
    override = os.environ.get("NMRCHECK_CACHE_DIR")
    if override is not None:
        if not override.strip():
            return None
        base = Path(override)
    else:
        base = Path(os.environ.get("XDG_CACHE_HOME") or os.path.join(os.path.expanduser("~"), ".cache")) / "nmrcheck"
    return base.joinpath(*parts)
