"""Fuzz: bad recordings made from good ones must be refused in one line or, when tolerable, give the clean result.

The catalogue (tests/fuzz_catalogue.py) lists each fault with the failure class the plate
issue measured for it (traceback, hang, memory, silently wrong) and what must happen instead.
Faults are applied to synthetic recordings written by code (a Bruker directory, a JCAMP-DX FID
with the standard NMR labels only and one with the vendor labels too) and, when
NMRCHECK_REFDATA is set, to copies of shared real recordings (never to the originals).
Every case runs in this process under a time limit, so a parser that loops fails as "hang".
"""

from __future__ import annotations

import os

import pytest
from fuzz_catalogue import BRUKER, JCAMP, JCAMP_VENDOR, PDATA, VARIAN, copy_recording, judge, judge_random, processed_cleanly, random_fault, write_synthetic_bruker, write_synthetic_jcamp, write_synthetic_varian


def _ids(case):
    return f"{case.kind}: {case.name}"


@pytest.fixture(scope="module")
def synthetic(tmp_path_factory):
    """The clean synthetic recordings and their processed results."""
    base = tmp_path_factory.mktemp("fuzz-sources")
    paths = {
        "bruker": write_synthetic_bruker(base / "bruker" / "1"),
        "jcamp-standard": write_synthetic_jcamp(base / "standard.dx"),
        "jcamp-vendor": write_synthetic_jcamp(base / "vendor.dx", vendor_labels=True),
        "varian": write_synthetic_varian(base / "varian.fid"),
    }
    return paths, processed_cleanly(paths)


def _check(case, source, clean, tmp_path):
    path = case.mutate(copy_recording(source, tmp_path / "copy"))
    verdict, detail = judge(case, path, clean)
    assert verdict == "ok", f"{case.name}: {verdict}: {detail}"


@pytest.mark.parametrize("case", BRUKER, ids=_ids)
def test_synthetic_bruker(case, synthetic, tmp_path):
    paths, clean = synthetic
    _check(case, paths["bruker"], clean["bruker"], tmp_path)


@pytest.mark.parametrize("case", VARIAN, ids=_ids)
def test_synthetic_varian(case, synthetic, tmp_path):
    paths, clean = synthetic
    _check(case, paths["varian"], clean["varian"], tmp_path)


@pytest.mark.parametrize("case", JCAMP, ids=_ids)
def test_synthetic_jcamp_standard_labels(case, synthetic, tmp_path):
    paths, clean = synthetic
    _check(case, paths["jcamp-standard"], clean["jcamp-standard"], tmp_path)


@pytest.mark.parametrize("case", JCAMP + JCAMP_VENDOR, ids=_ids)
def test_synthetic_jcamp_vendor_labels(case, synthetic, tmp_path):
    paths, clean = synthetic
    _check(case, paths["jcamp-vendor"], clean["jcamp-vendor"], tmp_path)


# --- the shared real recordings: copied to tmp_path, the copy corrupted ----------------------

_REAL_BRUKER = "glucose-d2o-600"  # 600 MHz, int32 points, GRPDLY set, presaturation
_REAL_JCAMP = "50-78-2"  # DIFDUP-compressed NTUPLES FID, GRPDLY=-1 (delay from DECIM/DSPFVS)


@pytest.fixture(scope="module")
def real(refdata):
    sources = {
        "bruker": refdata / "bruker-raw" / _REAL_BRUKER,
        "jcamp": refdata / "jcamp-fid" / _REAL_JCAMP / "1h.fid.dx",
    }
    return sources, processed_cleanly(sources)


@pytest.mark.refdata
@pytest.mark.parametrize("case", [c for c in BRUKER if not c.synthetic_only], ids=_ids)
def test_real_bruker(case, real, tmp_path):
    sources, clean = real
    _check(case, sources["bruker"], clean["bruker"], tmp_path)


@pytest.mark.refdata
@pytest.mark.parametrize("case", PDATA, ids=_ids)
def test_real_processed_data(case, refdata, tmp_path):
    path = case.mutate(copy_recording(refdata / "bruker-raw" / _REAL_BRUKER, tmp_path / "copy", with_pdata=True))
    verdict, detail = judge(case, path, None)
    assert verdict == "ok", f"{case.name}: {verdict}: {detail}"


@pytest.mark.refdata
@pytest.mark.parametrize("case", [c for c in JCAMP + JCAMP_VENDOR if not c.synthetic_only], ids=_ids)
def test_real_jcamp(case, real, tmp_path):
    sources, clean = real
    _check(case, sources["jcamp"], clean["jcamp"], tmp_path)


def test_refdata_is_never_written(refdata):
    """The fuzz cases work on copies: no shared recording is newer than the test run started."""
    assert not any(os.access(p, os.W_OK) and p.stat().st_mtime > _START for p in (refdata / "bruker-raw" / _REAL_BRUKER).iterdir())


_START = __import__("time").time()


# --- random faults: header values made weird, bytes flipped, files cut, data scrambled ---------

_RANDOM_CASES = 20


@pytest.mark.parametrize("source", ["bruker", "jcamp-standard", "jcamp-vendor", "varian"])
def test_random_faults_synthetic(source, synthetic, tmp_path):
    """Random faults (fixed seeds) end refused in one line or processed, never as a traceback or a hang."""
    import numpy as np

    paths, _ = synthetic
    rng = np.random.default_rng(12)
    for k in range(_RANDOM_CASES):
        name, mutate = random_fault(rng)
        path = mutate(copy_recording(paths[source], tmp_path / f"case{k}"))
        verdict, detail = judge_random(path)
        assert verdict == "ok", f"case {k} ({name}): {verdict}: {detail}"


@pytest.mark.refdata
def test_random_faults_real(real, tmp_path):
    import numpy as np

    sources, _ = real
    rng = np.random.default_rng(13)
    for key, source in sources.items():
        for k in range(_RANDOM_CASES // 2):
            name, mutate = random_fault(rng)
            path = mutate(copy_recording(source, tmp_path / f"{key}{k}"))
            verdict, detail = judge_random(path)
            assert verdict == "ok", f"{key} case {k} ({name}): {verdict}: {detail}"
