"""Kill trials: a plate run killed with SIGKILL at random moments, then resumed; counts what was lost, duplicated or left running.

For each worker count, every trial starts ``nmrcheck plate run`` on the same output folder,
waits until a random number of further wells are stored, kills the run (the main process
alone on even trials, the whole process group on odd ones), then looks for any process of
that run still alive. After the trials one uninterrupted rerun completes the plate; then

* lost: wells of the manifest without a result,
* duplicated: results recorded beyond one per well (the history table counts every save),
* left behind: processes of killed runs still alive 5 s after the kill.

    python bench/trial_kills.py [--trials 10] [--wells 24] [--points 16384] [--out DIR]
"""

from __future__ import annotations

import argparse
import os
import random
import signal
import subprocess
import sys
import tempfile
import time
import uuid
from pathlib import Path


def _stored(out: Path) -> int:
    from nmrcheck.plate import ResultsStore

    if not (out / "results.sqlite").exists():
        return 0
    try:
        with ResultsStore(out, readonly=True) as store:
            return store.count_history()
    except Exception:  # noqa: BLE001 - being created right now
        return 0


def _alive_with_tag(tag: str) -> list[int]:
    needle = f"NMRCHECK_TRIAL_TAG={tag}".encode()
    found = []
    for entry in os.listdir("/proc"):
        if not entry.isdigit():
            continue
        try:
            env = Path(f"/proc/{entry}/environ").read_bytes()
            state = Path(f"/proc/{entry}/stat").read_text().rsplit(")", 1)[1].split()[0]
        except OSError:
            continue
        if needle in env.split(b"\0") and state != "Z":
            found.append(int(entry))
    return found


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--trials", type=int, default=10, help="kills per worker count")
    ap.add_argument("--wells", type=int, default=24)
    ap.add_argument("--points", type=int, default=16384)
    ap.add_argument("--seed", type=int, default=None)
    ap.add_argument("--out", default=None)
    args = ap.parse_args()

    from nmrcheck.demo import build_demo_plate, demo_wells
    from nmrcheck.plate import ResultsStore

    seed = args.seed if args.seed is not None else random.randrange(1_000_000)
    rng = random.Random(seed)
    root = Path(args.out or tempfile.mkdtemp(prefix="nmrcheck-kills-"))
    manifest = build_demo_plate(root, points=args.points, wells=tuple(demo_wells()[: args.wells]))
    print(f"plate: {args.wells} wells x {args.points} points; seed {seed}; {root}")
    for workers in (1, 2):
        out = root / f"results-{workers}"
        command = [sys.executable, "-m", "nmrcheck", "plate", "run", str(manifest), "--out", str(out), "--workers", str(workers), "--no-report"]
        kills = left = 0
        for trial in range(args.trials):
            tag = uuid.uuid4().hex
            env = dict(os.environ, NMRCHECK_TRIAL_TAG=tag)
            target = _stored(out) + rng.randint(1, 3)
            proc = subprocess.Popen(command, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, start_new_session=True, env=env)
            deadline = time.monotonic() + 120
            while proc.poll() is None and _stored(out) < target and time.monotonic() < deadline:
                time.sleep(0.01)
            time.sleep(rng.uniform(0, 0.2))
            if proc.poll() is None:
                if trial % 2 == 0:
                    os.kill(proc.pid, signal.SIGKILL)
                else:
                    os.killpg(proc.pid, signal.SIGKILL)
                kills += 1
            proc.wait()
            time.sleep(5.0)
            left += len(_alive_with_tag(tag))
            if _stored(out) >= args.wells:
                break
        final = subprocess.run(command, capture_output=True, text=True)
        with ResultsStore(out, readonly=True) as store:
            current = store.current(with_trace=False)
            history = store.count_history()
            ok = store.integrity_ok()
        lost = args.wells - len(current)
        duplicated = history - len(current)
        print(f"workers {workers}: {kills} kills (main process alone and whole group alternately); final rerun exit {final.returncode}; "
              f"lost {lost}, duplicated {duplicated}, processes left behind {left}; database integrity {'ok' if ok else 'FAILED'}")


if __name__ == "__main__":
    main()
