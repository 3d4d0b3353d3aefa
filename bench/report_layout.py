"""Figures of the plate report as laid out by headless Chromium at 1400 x 900, for the demo plate.

Prints the page height per 10 wells with every well's details collapsed, where the plate map and
the attention list sit on the first screen, and the number of overlapping text boxes in the
spectra (getBBox in the page). Not a timing benchmark; needs the Debian package 'chromium'.

    python bench/report_layout.py [OUT_DIR]
"""

from __future__ import annotations

import csv
import importlib.util
import sys
import tempfile
from pathlib import Path


def main(out: Path) -> None:
    from nmrcheck.demo import run_demo

    _, report, seconds = run_demo(out, workers=2)
    here = Path(__file__).resolve().parent.parent / "tests" / "report" / "test_report_browser.py"
    spec = importlib.util.spec_from_file_location("report_browser", here)
    browser = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(browser)
    with open(out / "plate" / "manifest.csv", encoding="utf-8") as fh:
        wells = [r["well"] for r in csv.DictReader(ln for ln in fh if not ln.startswith("#"))]
    m = browser.probe(report, wells, Path(tempfile.mkdtemp()))
    labels = sum(1 for s in m["spectra"] for b in s["boxes"] if b["text"].endswith(" H"))
    overlaps = sum(len(browser._overlaps(s["boxes"])) for s in m["spectra"])
    print(f"demo plate: {len(wells)} wells screened and reported in {seconds:.1f} s")
    print(f"page height, details collapsed: {m['page_height']} px = {m['page_height'] / len(wells) * 10:.0f} px per 10 wells (goal < 1500)")
    print(f"first screen (900 px): plate map ends at {m['map']['bottom']:.0f} px, attention list from {m['attention']['top']:.0f} px, "
          f"ready list from {m['ready']['top']:.0f} px")
    print(f"spectra: {len(m['spectra'])}, proton labels {labels}, overlapping text boxes {overlaps}")
    print(f"wells not reachable from map, table and section: {[w for w, v in m['reach'].items() if not all(v.values())]}")


if __name__ == "__main__":
    main(Path(sys.argv[1]) if len(sys.argv) > 1 else Path(tempfile.mkdtemp()) / "demo")
