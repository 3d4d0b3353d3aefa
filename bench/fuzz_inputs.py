"""Count the bad inputs of the fuzz catalogue per failure class and outcome (no timing; a tally, not a test).

Applies every fault in tests/fuzz_catalogue.py to the synthetic recordings (a Bruker folder,
a Varian folder, a JCAMP-DX FID with the standard labels only and one with vendor labels) and, when
NMRCHECK_REFDATA is set, to copies of shared real recordings; tries the bad options of
``nmrcheck process``. Prints, per class the plate issue names (traceback, hang, memory,
silently wrong; "tolerance" for faults that must be accepted; "extra" for option cases
beyond the issue's examples; "random" for random faults, judged only on ending as a one-line
refusal or a processed result), how many were refused in one line (or accepted with the clean
result) and how many still end as tracebacks, hangs, wrong results or unclear messages.

    NMRCHECK_REFDATA=../shared/refdata python -W error bench/fuzz_inputs.py [-v] [--random 50]
"""

from __future__ import annotations

import argparse
import collections
import os
import sys
import tempfile
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "tests"))

import numpy as np  # noqa: E402

import fuzz_catalogue as fc  # noqa: E402


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("-v", "--verbose", action="store_true", help="Print every case and its message.")
    parser.add_argument("--random", type=int, default=50, help="Random faults per recording (header value, flipped bytes, cut, scrambled data) [50].")
    args = parser.parse_args()
    tally: dict[str, collections.Counter] = collections.defaultdict(collections.Counter)
    with tempfile.TemporaryDirectory() as tmp:
        root = Path(tmp)
        sources = {
            "synthetic Bruker": (fc.write_synthetic_bruker(root / "src" / "bruker"), fc.BRUKER, False),
            "synthetic JCAMP-DX (standard labels)": (fc.write_synthetic_jcamp(root / "src" / "std.dx"), fc.JCAMP, False),
            "synthetic JCAMP-DX (vendor labels)": (fc.write_synthetic_jcamp(root / "src" / "vendor.dx", vendor_labels=True), fc.JCAMP + fc.JCAMP_VENDOR, False),
            "synthetic Varian": (fc.write_synthetic_varian(root / "src" / "varian.fid"), fc.VARIAN, False),
        }
        refdata = os.environ.get("NMRCHECK_REFDATA")
        if refdata and Path(refdata).is_dir():
            ref = Path(refdata)
            for name in sorted(p.name for p in (ref / "bruker-raw").iterdir() if (p / "fid").exists()):
                sources[f"real Bruker {name}"] = (ref / "bruker-raw" / name, fc.BRUKER, True)
                sources[f"real pdata {name}"] = (ref / "bruker-raw" / name, fc.PDATA, True)
            for name in ("50-78-2", "2216-51-5", "403-40-7"):
                sources[f"real JCAMP-DX {name}"] = (ref / "jcamp-fid" / name / "1h.fid.dx", fc.JCAMP + fc.JCAMP_VENDOR, True)
        else:
            print("NMRCHECK_REFDATA not set: synthetic recordings only")
        n = 0
        for label, (source, cases, real) in sources.items():
            pdata = cases is fc.PDATA
            clean = None if pdata else fc.processed_cleanly({label: source})[label]
            for case in cases:
                if real and case.synthetic_only:
                    continue
                n += 1
                work = root / f"case{n}"
                path = case.mutate(fc.copy_recording(source, work, with_pdata=pdata))
                verdict, detail = fc.judge(case, path, clean)
                tally[case.kind][verdict] += 1
                if args.verbose or verdict != "ok":
                    print(f"[{verdict}] {label}: {case.name}: {detail[:160]}")
            if pdata:
                continue
            rng = np.random.default_rng(n)
            for k in range(args.random):
                n += 1
                name, mutate = fc.random_fault(rng)
                path = mutate(fc.copy_recording(source, root / f"case{n}"))
                verdict, detail = fc.judge_random(path)
                tally[f"random: {name}"][verdict] += 1
                if args.verbose or verdict != "ok":
                    print(f"[{verdict}] {label}: random {name}: {detail[:160]}")
        experiment = fc.write_synthetic_bruker(root / "src" / "options")
        for kind, options, fragment in fc.PROCESS_OPTIONS:
            verdict, detail = fc.judge_options(experiment, options, fragment)
            tally[f"option: {kind}"][verdict] += 1
            if args.verbose or verdict != "ok":
                print(f"[{verdict}] process {' '.join(options)}: {detail[:160]}")
    verdicts = ["ok", "traceback", "hang", "silently wrong", "bad message"]
    print()
    print(f"{'class':<34}" + "".join(f"{v:>16}" for v in ["tried"] + verdicts))
    for kind in sorted(tally):
        c = tally[kind]
        print(f"{kind:<34}" + f"{sum(c.values()):>16}" + "".join(f"{c[v]:>16}" for v in verdicts))
    total = collections.Counter()
    for c in tally.values():
        total.update(c)
    print(f"{'all':<34}" + f"{sum(total.values()):>16}" + "".join(f"{total[v]:>16}" for v in verdicts))


if __name__ == "__main__":
    main()
