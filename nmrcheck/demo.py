"""The demo plate: an invented screening plate built from synthetic FIDs, screened end to end.

Scenario (fictional throughout): micro-fractions of the methanol extract of *Calyxia
nocturna*, an invented sponge "collected" on the invented Tidewater Shoal. The wells hold
small, well-known natural-product-like compounds whose 1H spectra are synthesised from
hand-written shift tables (first-order multiplets), in CDCl3, CD3OD or DMSO-d6 with their
residual solvent and water signals, TMS in some, realistic noise and phase errors. A few
wells are deliberately inconsistent (their MS formula disagrees with what the spectrum
shows), one holds noise only and one recording is truncated.
"""

from __future__ import annotations

import csv
import logging
import os
import time
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from nmrcheck.synth import Line, simulate_fid

__all__ = ["COMPOUNDS", "DemoWell", "demo_assay", "demo_wells", "build_demo_plate", "build_demo_lcms", "run_demo", "SCENARIO", "DEMO_DELAY_MIN"]

log = logging.getLogger("nmrcheck")

SCENARIO = (
    "Invented demo plate: micro-fractions of the methanol extract of Calyxia nocturna, a fictional "
    "sponge from the fictional Tidewater Shoal. Spectra are synthetic."
)


@dataclass(frozen=True)
class Compound:
    """A structure and the 1H lines the demo draws for it in one solvent."""

    name: str
    smiles: str
    formula: str
    solvent: str
    lines: tuple[Line, ...]


# Shifts (ppm), proton counts, couplings (Hz): hand-written approximations of the usual
# literature values for these compounds (from memory); good enough for a demo, not reference data.
# Exchangeable OH are drawn broad in DMSO-d6 and CDCl3 and left out in CD3OD (exchanged with OD).
COMPOUNDS: dict[str, Compound] = {
    c.name: c
    for c in (
        Compound("methyl 4-hydroxybenzoate", "COC(=O)c1ccc(O)cc1", "C8H8O3", "CD3OD",
                 (Line(7.86, 2, 1.0, (8.8,)), Line(6.82, 2, 1.0, (8.8,)), Line(3.85, 3, 0.9))),
        Compound("vanillin", "COc1cc(C=O)ccc1O", "C8H8O3", "CDCl3",
                 (Line(9.83, 1, 0.9), Line(7.43, 2, 1.4, (1.8,)), Line(7.04, 1, 1.0, (8.2,)),
                  Line(6.20, 1, 14.0), Line(3.97, 3, 0.9))),
        Compound("coumarin", "O=c1ccc2ccccc2o1", "C9H6O2", "CDCl3",
                 (Line(7.72, 1, 1.0, (9.5,)), Line(7.52, 2, 2.0, (7.8,)), Line(7.30, 2, 2.0, (7.8,)),
                  Line(6.43, 1, 1.0, (9.5,)))),
        Compound("umbelliferone", "O=c1ccc2ccc(O)cc2o1", "C9H6O3", "DMSO-d6",
                 (Line(10.55, 1, 18.0), Line(7.92, 1, 1.0, (9.5,)), Line(7.51, 1, 1.0, (8.5,)),
                  Line(6.78, 1, 1.0, (8.5, 2.2)), Line(6.71, 1, 1.0, (2.2,)), Line(6.19, 1, 1.0, (9.5,)))),
        Compound("methyl cinnamate", "COC(=O)/C=C/c1ccccc1", "C10H10O2", "CDCl3",
                 (Line(7.70, 1, 1.0, (16.0,)), Line(7.52, 2, 2.0), Line(7.38, 3, 2.0),
                  Line(6.44, 1, 1.0, (16.0,)), Line(3.81, 3, 0.9))),
        Compound("thymol", "Cc1ccc(C(C)C)c(O)c1", "C10H14O", "CDCl3",
                 (Line(7.10, 1, 1.0, (7.8,)), Line(6.75, 1, 1.0, (7.8,)), Line(6.60, 1, 1.2),
                  Line(4.62, 1, 10.0), Line(3.18, 1, 1.0, (6.9,) * 6), Line(2.28, 3, 0.9), Line(1.25, 6, 1.0, (6.9,)))),
        Compound("eugenol", "COc1cc(CC=C)ccc1O", "C10H12O2", "CDCl3",
                 (Line(6.86, 1, 1.0, (8.0,)), Line(6.69, 2, 1.5), Line(5.96, 1, 2.0, (17.0, 10.0, 6.7, 6.7)),
                  Line(5.55, 1, 10.0), Line(5.08, 2, 2.0, (13.0,)), Line(3.87, 3, 0.9), Line(3.33, 2, 1.0, (6.7,)))),
        Compound("caffeine", "Cn1c(=O)c2c(ncn2C)n(C)c1=O", "C8H10N4O2", "CDCl3",
                 (Line(7.51, 1, 1.0), Line(3.99, 3, 0.9), Line(3.57, 3, 0.9), Line(3.40, 3, 0.9))),
        Compound("tyrosol", "OCCc1ccc(O)cc1", "C8H10O2", "CD3OD",
                 (Line(7.02, 2, 1.0, (8.5,)), Line(6.70, 2, 1.0, (8.5,)), Line(3.69, 2, 1.0, (7.1, 7.1)),
                  Line(2.73, 2, 1.0, (7.1, 7.1)))),
        Compound("methyl gallate", "COC(=O)c1cc(O)c(O)c(O)c1", "C8H8O5", "CD3OD",
                 (Line(7.05, 2, 1.0), Line(3.80, 3, 0.9))),
        Compound("p-coumaric acid", "OC(=O)/C=C/c1ccc(O)cc1", "C9H8O3", "DMSO-d6",
                 (Line(9.95, 1, 16.0), Line(7.52, 2, 1.0, (8.6,)), Line(7.49, 1, 1.0, (16.0,)),
                  Line(6.79, 2, 1.0, (8.6,)), Line(6.29, 1, 1.0, (16.0,)))),
        Compound("geraniol", "CC(C)=CCC/C(C)=C/CO", "C10H18O", "CDCl3",
                 (Line(5.41, 1, 2.0, (6.8, 6.8)), Line(5.09, 1, 2.5, (6.8, 6.8)), Line(4.15, 2, 1.0, (6.8,)),
                  Line(2.08, 4, 4.0), Line(1.68, 6, 1.0), Line(1.60, 3, 1.0))),
    )
}

# Residual solvent line (ppm, relative size, width Hz) and water (ppm, relative size, width Hz):
# positions as in nmrcheck/data/solvents.csv. Sizes are in protons of a well at amount 1
# (about 30 nmol of compound): 35 uL of 99.8 % D solvent hold about 870 nmol of residual H
# in CDCl3 and about 5 umol in CD3OD or DMSO-d6 (density x volume / molar mass x 0.2 % x
# the D positions; densities as in nmrcheck/data/quant_solvents.csv), so the residual line
# towers over a microgram compound's signals, as it does in a real micro-probe spectrum.
_SOLVENT_LINES = {
    "CDCl3": ((7.26, 29.0, 1.0), (1.56, 0.8, 4.0)),
    "CD3OD": ((3.31, 170.0, 1.0), (4.87, 2.5, 5.0)),
    "DMSO-d6": ((2.50, 195.0, 1.0), (3.33, 3.0, 6.0)),
}


@dataclass(frozen=True)
class DemoWell:
    """One demo well: what is really in it, and what the manifest claims."""

    well: str
    content: str | None
    """Compound name in :data:`COMPOUNDS`, or None for an empty well."""
    claimed: str | None
    """Compound whose formula, structure and MS feature the manifest gives."""
    amount: float
    """Relative concentration (1 = a comfortable micro-NMR sample)."""
    tms: bool = False
    corrupt: bool = False
    note: str = ""


def demo_wells() -> tuple[DemoWell, ...]:
    """The 36 wells of the demo plate (A1..C12)."""
    names = list(COMPOUNDS)
    wells: list[DemoWell] = []
    rng = np.random.default_rng(20240611)
    positions = [f"{r}{c}" for r in "ABC" for c in range(1, 13)]
    # Deliberate contradictions: the spectrum shows one compound, the MS feature another formula.
    mismatched = {"A7": ("thymol", "methyl cinnamate"), "B4": ("geraniol", "eugenol"), "C9": ("caffeine", "tyrosol")}
    for i, well in enumerate(positions):
        if well == "B11":
            wells.append(DemoWell(well, None, "coumarin", 0.0, note="fraction 47: no visible band"))
            continue
        if well == "C12":
            wells.append(DemoWell(well, "vanillin", "vanillin", 1.0, corrupt=True, note="transfer interrupted"))
            continue
        if well in mismatched:
            content, claimed = mismatched[well]
            wells.append(DemoWell(well, content, claimed, float(rng.uniform(0.6, 1.5)), tms=i % 3 == 0, note="MS feature from the neighbouring peak?"))
            continue
        name = names[i % len(names)]
        amount = float(rng.choice([0.08, 0.3, 0.8, 1.5, 3.0]))
        note = ""
        if well == "A2":
            note = "<b>yellow band</b> & fluorescent under 365 nm <script>alert('x')</script>"
        elif amount < 0.1:
            note = "faint fraction"
        wells.append(DemoWell(well, name, name, amount, tms=i % 4 == 0, note=note))
    return tuple(wells)


#: Compounds the invented assay finds active (an invented antibacterial growth-inhibition screen).
_ACTIVE_IN_DEMO_ASSAY = ("thymol", "eugenol", "umbelliferone")


def demo_assay(wells: tuple[DemoWell, ...] | None = None, *, seed: int = 11) -> list[dict[str, str]]:
    """Invented bioassay readouts for the demo wells: % growth inhibition at one dose, hit at 50 %.

    Wells holding thymol, eugenol or umbelliferone inhibit (more with more material); the rest
    and the empty well read low. Invented numbers, for the demo's morning report only.
    """
    rng = np.random.default_rng(seed)
    rows = []
    for w in wells or demo_wells():
        active = w.content in _ACTIVE_IN_DEMO_ASSAY
        base = 55.0 + 35.0 * min(1.0, w.amount / 1.5) if active else 4.0 + 20.0 * float(rng.random())
        value = float(np.clip(base + rng.normal(0.0, 4.0), 0.0, 100.0))
        rows.append({"well": w.well, "value": f"{value:.1f}", "unit": "%", "threshold": "50", "hit_when": "above",
                     "assay": "growth inhibition, invented demo assay"})
    return rows


# The scenario's first-order phase: every well was recorded on one probe with one parameter set,
# so they share it (the zero order changes with each sample's tuning).
DEMO_P1_DEG = 9.0


def _fid_for(well: DemoWell, *, points: int, seed: int):
    rng = np.random.default_rng(seed)
    compound = COMPOUNDS[well.content or well.claimed or "coumarin"]
    solvent = compound.solvent
    lines = list(compound.lines) if well.content else []
    lines = [Line(ln.ppm, ln.h * well.amount, ln.width_hz, ln.j_hz) for ln in lines]
    (res_ppm, res_h, res_w), (w_ppm, w_h, w_w) = _SOLVENT_LINES[solvent]
    res_h *= float(rng.uniform(0.7, 1.4))
    if solvent == "CDCl3":
        lines.append(Line(res_ppm, res_h, res_w))
    else:
        # CHD2 groups: a 1:2:3:2:1 quintet from two deuterons, J(H,D) about 1.8 Hz (common practice).
        for k, weight in enumerate((1, 2, 3, 2, 1)):
            lines.append(Line(res_ppm + (k - 2) * 1.8 / 600.13, res_h * weight / 9.0, res_w))
    lines.append(Line(w_ppm, w_h * float(rng.uniform(0.5, 1.5)), w_w))
    if well.tms:
        lines.append(Line(0.0, 0.6, 0.8))
    return simulate_fid(
        lines,
        spectrometer_mhz=600.13,
        sweep_width_hz=9600.0,
        points=points,
        carrier_ppm=6.0,
        noise=float(rng.uniform(0.004, 0.008)),
        p0_deg=float(rng.uniform(-90, 90)),
        p1_deg=DEMO_P1_DEG,
        group_delay_points=67.98,
        seed=seed,
        solvent=solvent,
    )


# The LC-MS side of the scenario: the plate was cut from one 10-minute run of the extract, wells
# A1..C12 collected in 0.25-min windows from 1.0 min, the collector 0.15 min behind the detector.
DEMO_DELAY_MIN = 0.15
DEMO_WINDOW_MIN = 0.25
DEMO_FIRST_MIN = 1.0

# MS/MS product ions of the protonated molecules (compositions of the ions, relative intensities):
# hand-written, plausible losses (CH3OH, CO, CH3NCO) for the demo, not reference spectra.
# Coumarin and umbelliferone share the benzopyranone scaffold (umbelliferone's ions carry one O more);
# the methyl benzoates likewise (methyl gallate's carry two O more).
FRAGMENTS: dict[str, tuple[tuple[str, float], ...]] = {
    "coumarin": (("C8H7O", 100.0), ("C7H7", 55.0), ("C6H5", 30.0), ("C5H5", 20.0)),
    "umbelliferone": (("C8H7O2", 100.0), ("C7H7O", 60.0), ("C6H5O", 35.0), ("C5H5O", 20.0)),
    "methyl 4-hydroxybenzoate": (("C7H5O2", 100.0), ("C6H5O", 45.0), ("C5H5", 25.0), ("C4H3", 15.0)),
    "methyl gallate": (("C7H5O4", 100.0), ("C6H5O3", 50.0), ("C5H5O2", 25.0), ("C4H3O2", 15.0)),
    "caffeine": (("C6H8N3O", 100.0), ("C5H8N3", 30.0), ("C4H7N2", 15.0), ("C3H5N2", 20.0)),
}

# A fictional sesquiterpenoid co-eluting in one well: the LC-MS shows that well is a mixture.
COELUTING = ("B2", "nocturnol A (fictional)", "C15H24O2", 0.7)


def _demo_compounds(wells: tuple[DemoWell, ...], seed: int):
    from nmrcheck.ms.simulate import SimulatedCompound

    rng = np.random.default_rng(seed + 11)
    out = []
    for k, w in enumerate(wells):
        if w.content is None:
            continue
        c = COMPOUNDS[w.content]
        # Apex in the middle of the well's detector window.
        rt = DEMO_FIRST_MIN + DEMO_WINDOW_MIN * (k + 0.5) - DEMO_DELAY_MIN + float(rng.uniform(-0.02, 0.02))
        abundance = 4e5 * max(w.amount, 0.15)
        ions = (("[M+H]+", 1.0), ("[M+Na]+", 0.3)) + ((("[2M+H]+", 0.08),) if w.amount >= 1.5 else ())
        out.append(SimulatedCompound(f"{w.well} {c.name}", c.formula, rt, abundance, ions, 5.0, FRAGMENTS.get(c.name, ())))
        if w.well == COELUTING[0]:
            out.append(SimulatedCompound(COELUTING[1], COELUTING[2], rt + 0.01, abundance * COELUTING[3], (("[M+H]+", 1.0), ("[M+NH4]+", 0.5), ("[M+H-H2O]+", 0.4)), 5.0))
    return out


def build_demo_lcms(plate: Path, wells: tuple[DemoWell, ...], *, seed: int = 7) -> tuple[Path, Path]:
    """Write the extract's invented LC-MS run (``lcms/extract.mzML``) and the fraction timetable (``lcms/timetable.csv``)."""
    from nmrcheck import __version__
    from nmrcheck.io.mzml import write_mzml
    from nmrcheck.io.timetable import FractionWindow, write_timetable
    from nmrcheck.ms.simulate import simulate_run

    folder = Path(plate) / "lcms"
    scans = simulate_run(_demo_compounds(wells, seed), duration_min=10.0, scan_interval_s=0.5, seed=seed)
    run = write_mzml(folder / "extract.mzML", scans, run_id="calyxia-nocturna-extract", software_version=__version__)
    windows = [FractionWindow(w.well, DEMO_FIRST_MIN + DEMO_WINDOW_MIN * k, DEMO_FIRST_MIN + DEMO_WINDOW_MIN * (k + 1)) for k, w in enumerate(wells)]
    table = write_timetable(folder / "timetable.csv", windows, comment=f"{SCENARIO} Collector {DEMO_DELAY_MIN} min behind the MS detector.")
    return run, table


def build_demo_plate(out_dir: str | os.PathLike, *, points: int = 32768, wells: tuple[DemoWell, ...] | None = None, seed: int = 7, lcms: bool = False) -> Path:
    """Write the demo plate's recordings (Bruker folders), its manifest and invented assay readouts (``assay.csv``); return the manifest path.

    With ``lcms``, the extract's LC-MS run and the fraction timetable are written too
    (:func:`build_demo_lcms`), and the manifest types an MS feature only where the chemist
    overrode the run (the wells whose feature came from the neighbouring peak).

    Parameters
    ----------
    out_dir
        Folder to create; the plate goes to ``out_dir/plate`` with ``manifest.csv``.
    points
        Complex points per FID.
    wells
        Wells to write (default :func:`demo_wells`).
    """
    from nmrcheck.chem import ion_mz, isotope_pattern, parse_formula
    from nmrcheck.io.writers import write_bruker_fid

    plate = Path(out_dir) / "plate"
    (plate / "fids").mkdir(parents=True, exist_ok=True)
    wells = wells or demo_wells()
    if lcms:
        build_demo_lcms(plate, wells, seed=seed)
    rows = []
    for k, w in enumerate(wells):
        fid = _fid_for(w, points=points, seed=seed * 1000 + k)
        exp = plate / "fids" / w.well / "1"
        write_bruker_fid(fid, exp, overwrite=True)
        if w.corrupt:
            # A recording cut short: the file holds only part of the points acqus announces.
            fid_file = exp / "fid"
            data = fid_file.read_bytes()
            fid_file.write_bytes(data[: len(data) // 3])
        claimed = COMPOUNDS[w.claimed] if w.claimed else None
        feature = isotopes = formulas = structures = ""
        typed = not lcms or (w.content is not None and w.claimed != w.content)
        if claimed is not None:
            formula = parse_formula(claimed.formula)
            # A measured m/z carries a small error (here within +-1.5 ppm).
            mz = ion_mz(formula.monoisotopic_mass, "[M+H]+") * (1 + float(np.random.default_rng(k).uniform(-1.5, 1.5)) * 1e-6)
            if typed:
                feature = f"{mz:.5f} [M+H]+"
                pattern = isotope_pattern(formula, ion="[M+H]+", max_peaks=3).relative()
                isotopes = ",".join(f"{v:.1f}" for v in pattern)
            formulas = claimed.formula
            structures = f"{claimed.name}: {claimed.smiles}"
        rows.append({
            "well": w.well,
            "spectrum": "fids/{well}/1",
            "ms_feature": feature,
            "isotopes": isotopes,
            "rt_min": "" if lcms else f"{2.0 + 0.37 * k:.2f}",
            "formulas": formulas,
            "structures": structures,
            "solvent": "",
            "notes": w.note,
        })
    manifest = plate / "manifest.csv"
    with open(manifest, "w", newline="", encoding="utf-8") as fh:
        fh.write(f"# {SCENARIO}\n")
        writer = csv.DictWriter(fh, fieldnames=list(rows[0]))
        writer.writeheader()
        writer.writerows(rows)
    readouts = demo_assay(wells or demo_wells())
    with open(plate / "assay.csv", "w", newline="", encoding="utf-8") as fh:
        fh.write("# Invented readouts for the demo plate (not measured).\n")
        writer = csv.DictWriter(fh, fieldnames=list(readouts[0]))
        writer.writeheader()
        writer.writerows(readouts)
    return manifest


def run_demo(out_dir: str | os.PathLike, *, workers: int | None = None, points: int = 32768, progress=None) -> tuple[object, Path, float]:
    """Build the demo plate in ``out_dir``, screen it and write the report.

    Returns
    -------
    (summary, report_path, seconds)
        The run summary (:class:`nmrcheck.plate.runner.RunSummary`), the HTML report and the wall time.
    """
    from nmrcheck.plate import read_manifest, run_plate
    from nmrcheck.plate.lcms import attach_run, save_lcms
    from nmrcheck.report.plate_report import write_plate_report

    t0 = time.perf_counter()
    out = Path(out_dir)
    manifest_path = build_demo_plate(out, points=points, lcms=True)
    manifest = read_manifest(manifest_path)
    lcms_dir = manifest_path.parent / "lcms"
    manifest, lcms = attach_run(manifest, lcms_dir / "extract.mzML", lcms_dir / "timetable.csv", collector_delay_min=DEMO_DELAY_MIN)
    options = _demo_options(out)
    summary = run_plate(manifest, out / "results", options=options, workers=workers, progress=progress, redo=True)
    save_lcms(out / "results", lcms)
    report = write_plate_report(out / "results", title="Demo plate - Calyxia nocturna (fictional) extract, fractions 1-36", subtitle=SCENARIO,
                                assay=manifest_path.parent / "assay.csv")
    return summary, report, time.perf_counter() - t0


def _demo_options(out: Path):
    """Screen options of the demo: its invented known-compound library and organism."""
    from nmrcheck.ms._library_demo import DEMO_FAMILY, DEMO_GENUS, write_demo_library
    from nmrcheck.ms.library import open_library
    from nmrcheck.plate import ScreenOptions

    library = open_library(write_demo_library(out / "plate" / "known_compounds.csv"), cache_dir=out / "results" / "library")
    return ScreenOptions(library=library.database, genus=DEMO_GENUS, family=DEMO_FAMILY)
