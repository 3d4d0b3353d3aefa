"""Many plates on a Dask cluster (a LocalCluster of two worker processes): same results as the local run, nothing lost when a worker dies."""

from __future__ import annotations

import os
import signal
import sys
import threading
import time

import pytest

distributed = pytest.importorskip("distributed", reason="Dask distributed is not installed (pip install 'nmrcheck[test]')")

from nmrcheck.plate import ResultsStore, read_manifest, run_plate  # noqa: E402
from nmrcheck.plate.runner import run_plates  # noqa: E402

PLATE_WELLS = ("A1", "A2", "B1", "B2")


@pytest.fixture(scope="module")
def client():
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True, dashboard_address=":0") as cluster, distributed.Client(cluster) as c:
        yield c


def _comparable(out):
    """Every stored field of every well, except wall times and the run that stored it."""
    with ResultsStore(out) as store:
        return {w: {k: v for k, v in r.as_dict().items() if k != "timings"} for w, r in store.current().items()}, store.count_history()


def test_several_plates_on_the_cluster_match_the_local_run(client, small_plate, tmp_path):
    manifests = [read_manifest(small_plate(PLATE_WELLS, name=f"plate{k}")) for k in range(3)]
    summaries = run_plates([(m, tmp_path / f"dask{k}") for k, m in enumerate(manifests)], executor=client.get_executor(pure=False))
    assert [s.status for s in summaries] == ["complete"] * 3
    for k, m in enumerate(manifests):
        run_plate(m, tmp_path / f"local{k}", workers=2)
        on_cluster, history = _comparable(tmp_path / f"dask{k}")
        local, _ = _comparable(tmp_path / f"local{k}")
        assert history == len(PLATE_WELLS)
        assert on_cluster == local


def test_a_worker_killed_mid_run_loses_nothing(client, small_plate, tmp_path):
    manifest = read_manifest(small_plate(tuple(f"{r}{c}" for r in "ABC" for c in range(1, 9)), points=16384))
    out = tmp_path / "out"
    pids = client.run(os.getpid)
    killed = []

    def kill_one_when_started():
        deadline = time.monotonic() + 60
        while time.monotonic() < deadline:
            try:
                with ResultsStore(out) as store:
                    if store.count_history() >= 2:
                        break
            except Exception:  # noqa: BLE001 - the database may not exist yet
                pass
            time.sleep(0.02)
        pid = next(iter(pids.values()))
        os.kill(pid, signal.SIGKILL)
        with ResultsStore(out) as store:
            killed.append((pid, store.count_history()))

    killer = threading.Thread(target=kill_one_when_started)
    killer.start()
    summary = run_plate(manifest, out, executor=client.get_executor(pure=False))
    killer.join()
    assert killed, "no worker was killed"
    assert killed[0][1] < len(manifest.wells) - 2, "the worker was killed after the plate was nearly done"
    assert summary.status == "complete"
    with ResultsStore(out) as store:
        current = store.current()
        assert store.count_history() == len(manifest.wells), "a well was lost or screened twice"
    # The well in flight on the killed worker was retried elsewhere, not recorded as failed.
    assert all(r.status == "done" for r in current.values()), {w: r.error for w, r in current.items() if r.status != "done"}


def test_command_line_points_at_a_scheduler(client, small_plate, tmp_path):
    """`plate run --scheduler ADDRESS` screens on that cluster (the address a lab gives for its own)."""
    from click.testing import CliRunner

    from nmrcheck.cli import main

    manifest = small_plate(PLATE_WELLS)
    result = CliRunner().invoke(main, ["plate", "run", str(manifest), "--out", str(tmp_path / "out"), "--no-report", "--scheduler", client.scheduler.address])
    assert result.exit_code == 0, result.output
    with ResultsStore(tmp_path / "out") as store:
        assert store.count_history() == len(PLATE_WELLS)
        assert all(r.status == "done" for r in store.current().values())


def _hang_on_a2():
    """Run in each worker process: the recording reader never returns for well A2 (as a parser stuck in a loop would)."""
    import time as _time

    import nmrcheck.io

    real = nmrcheck.io.read_any

    def reader(path, *args, **kwargs):
        if str(path).rstrip("/").endswith("/A2"):
            _time.sleep(3600)
        return real(path, *args, **kwargs)

    reader.real = real
    nmrcheck.io.read_any = reader


def _unpatch():
    import nmrcheck.io

    nmrcheck.io.read_any = getattr(nmrcheck.io.read_any, "real", nmrcheck.io.read_any)


def test_a_stuck_well_is_stopped_and_its_worker_replaced(client, small_plate, tmp_path):
    import cloudpickle

    from nmrcheck.plate.workers import WellLimits

    cloudpickle.register_pickle_by_value(sys.modules[__name__])
    before = set(client.run(os.getpid).values())
    client.run(_hang_on_a2)
    try:
        manifest = read_manifest(small_plate(PLATE_WELLS))
        summary = run_plate(manifest, tmp_path / "out", executor=client.get_executor(pure=False), limits=WellLimits(time_s=1.5))
        assert summary.status == "complete"
        with ResultsStore(tmp_path / "out") as store:
            current = store.current()
            assert store.count_history() == len(PLATE_WELLS)
        assert current["A2"].status == "error" and current["A2"].error.startswith("took longer than 1.5 s")
        assert all(current[w].status == "done" for w in PLATE_WELLS if w != "A2")
        # The worker stuck in A2 ends itself a little after the limit; its nanny starts a new one.
        deadline = time.monotonic() + 60
        while time.monotonic() < deadline:
            pids = set(client.run(os.getpid).values())
            if len(pids) == 2 and pids != before:
                break
            time.sleep(0.25)
        assert len(pids) == 2 and len(pids & before) == 1, (before, pids)
    finally:
        client.run(_unpatch)
        cloudpickle.unregister_pickle_by_value(sys.modules[__name__])
