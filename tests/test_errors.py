"""nmrcheck.errors.human_message: one line in words for any exception (what plate wells store)."""

from __future__ import annotations

import errno

import numpy as np
import pytest

from nmrcheck.errors import InputFileError, ManifestError, human_message


def test_own_errors_keep_their_message():
    assert human_message(InputFileError("a/fid", "the fid holds only zeros")) == "a/fid: the fid holds only zeros"


def test_manifest_error_on_one_line():
    text = human_message(ManifestError("m.csv", ["line 2: well Z9 unknown", "line 3: no spectrum"]))
    assert "\n" not in text and "line 3" in text


@pytest.mark.parametrize("code, words", [(errno.ENOSPC, "the disk is full"), (errno.EROFS, "the file system is read-only")])
def test_disk_errors_in_words(code, words):
    assert human_message(OSError(code, "x", "/out/results.sqlite")) == f"/out/results.sqlite: {words}"


def test_unexpected_errors_in_words_without_the_type_name():
    try:
        np.linalg.inv(np.zeros((2, 2)))
    except np.linalg.LinAlgError as exc:
        text = human_message(exc)
    assert text.startswith("internal error (a matrix computation did not converge)")
    assert "LinAlgError" not in text
    assert human_message(ValueError("line one\nline two")) == "internal error (an invalid value): line one"
    assert human_message(MemoryError()).startswith("not enough memory")


def test_database_on_a_full_disk_in_words():
    import sqlite3

    assert human_message(sqlite3.OperationalError("database or disk is full")) == "the disk is full (results database)"
    assert "read-only" in human_message(sqlite3.OperationalError("attempt to write a readonly database"))
