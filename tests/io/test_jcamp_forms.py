"""JCAMP-DX FIDs in every ASDF form (AFFN, PAC, SQZ, DIF, DIFDUP) read to the same numbers.

The header of a real recording is kept and its two data tables are replaced by integers of
our own, written in each form by the encoders below (forms as defined in McDonald & Wilks,
Appl. Spectrosc. 1988, 42, 151, the JCAMP-DX spectroscopy standard; from memory).
"""

from __future__ import annotations

import re

import numpy as np
import pytest

from nmrcheck.io import read_fid

SQZ_POS = "@ABCDEFGHI"
SQZ_NEG = "@abcdefghi"
DIF_POS = "%JKLMNOPQR"
DIF_NEG = "%jklmnopqr"
DUP = "STUVWXYZs"


def _squeeze(v: int, pos: str, neg: str) -> str:
    s = str(abs(v))
    table = pos if v >= 0 else neg
    return table[int(s[0])] + s[1:]


def _dup(count: int) -> str:
    s = str(count)
    return DUP[int(s[0]) - 1] + s[1:]


def _lines(values: np.ndarray, form: str, per_line: int = 10) -> list[str]:
    out = []
    i = 0
    n = values.size
    while i < n:
        chunk = values[i : i + per_line]
        if form == "AFFN":
            out.append(f"{i} " + " ".join(str(int(v)) for v in chunk))
        elif form == "PAC":
            out.append(f"{i}" + "".join(("+" if v >= 0 else "-") + str(abs(int(v))) for v in chunk))
        elif form == "SQZ":
            out.append(f"{i}" + "".join(_squeeze(int(v), SQZ_POS, SQZ_NEG) for v in chunk))
        elif form in ("DIF", "DIFDUP"):
            # Each line but the last ends with one extra value, repeated as the next
            # line's first (the Y-value check of the DIF form).
            stop = min(i + per_line, n - 1) if i + per_line < n else n - 1
            seg = values[i : stop + 1]
            tokens = [_squeeze(int(seg[0]), SQZ_POS, SQZ_NEG)]
            diffs = np.diff(seg).astype(int)
            if form == "DIF":
                tokens += [_squeeze(int(d), DIF_POS, DIF_NEG) for d in diffs]
            else:
                k = 0
                while k < diffs.size:
                    run = 1
                    while k + run < diffs.size and diffs[k + run] == diffs[k]:
                        run += 1
                    tokens.append(_squeeze(int(diffs[k]), DIF_POS, DIF_NEG) + (_dup(run) if run > 1 else ""))
                    k += run
            out.append(f"{i}" + "".join(tokens))
            if stop == n - 1:
                break
            i = stop
            continue
        i += per_line
    return out


def _rewrite(src_text: str, real: np.ndarray, imag: np.ndarray, form: str) -> str:
    lines = src_text.splitlines()
    out: list[str] = []
    k = 0
    which = 0
    while k < len(lines):
        line = lines[k]
        out.append(line)
        if line.startswith("##DATA TABLE="):
            out.extend(_lines(real if which == 0 else imag, form))
            which += 1
            k += 1
            while k < len(lines) and not lines[k].startswith("##") and not lines[k].startswith("$$"):
                k += 1
            continue
        k += 1
    text = "\n".join(out) + "\n"
    text = re.sub(r"(##FACTOR=\s*[^,]+),.*", r"\1, 1, 1", text)
    return text


@pytest.fixture(scope="module")
def values():
    rng = np.random.default_rng(7)
    n = 8192  # VAR_DIM of the 91-64-5 recording
    t = np.arange(n)
    decay = np.exp(-t / 1500.0)
    real = np.round(2e5 * decay * np.cos(0.3 * t) + rng.normal(0, 40, n)).astype(int)
    imag = np.round(2e5 * decay * np.sin(0.3 * t) + rng.normal(0, 40, n)).astype(int)
    real[4000:4012] = 17  # a run of equal values: DUP compresses it
    return real, imag


@pytest.mark.parametrize("form", ["AFFN", "PAC", "SQZ", "DIF", "DIFDUP"])
def test_every_form_reads_the_same_numbers(refdata, tmp_path, values, form):
    real, imag = values
    src = (refdata / "jcamp-fid" / "91-64-5" / "1h.fid.dx").read_text(errors="replace")
    path = tmp_path / f"{form}.dx"
    path.write_text(_rewrite(src, real, imag, form))
    fid = read_fid(path)
    np.testing.assert_array_equal(fid.data.real, real)
    np.testing.assert_array_equal(fid.data.imag, imag)
