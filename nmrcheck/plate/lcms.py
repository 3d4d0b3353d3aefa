"""The extract's LC-MS run on the plate: per-well features into the manifest, MS/MS groups into the results.

:func:`analyse_run` reads the run and the fraction timetable once and finds every well's
features (:mod:`nmrcheck.ms.features`) and the wells whose MS/MS spectra agree
(:func:`nmrcheck.ms.msms.spectral_groups`). :func:`merge_lcms` puts each well's major
feature into its manifest row where the chemist typed none (hand entries win) and attaches
the well's whole LC-MS record, which the screen copies into the well's result
(``WellResult.lcms``). :func:`manifest_rows` writes a manifest from the run alone, or mixed
with an existing one.
"""

from __future__ import annotations

import csv
import dataclasses
import os
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from nmrcheck.errors import ParameterError
from nmrcheck.ms.features import FeatureOptions, Ms2Spectrum, WellMs, plate_features
from nmrcheck.ms.msms import SpectralGroup, check_fragments, spectral_groups
from nmrcheck.tolerances import DEFAULT_TOLERANCE_PPM, FRAGMENT_TOLERANCE_PPM, masses_agree

__all__ = ["PlateLcms", "analyse_run", "attach_run", "features_text", "lcms_summary", "merge_lcms", "manifest_rows", "write_manifest", "save_lcms", "load_lcms", "fragment_checks", "RECORD_KEY"]

RECORD_KEY = "lcms"
"""Key of the plate-level LC-MS record in the results store (:meth:`ResultsStore.plate_record`)."""


@dataclass(frozen=True)
class PlateLcms:
    """Everything the LC-MS run says about a plate."""

    run: str
    timetable: str
    collector_delay_min: float
    options: FeatureOptions
    wells: dict[str, WellMs]
    groups: tuple[SpectralGroup, ...]
    scans: int
    """Spectra in the run (all levels)."""

    def related(self, well: str) -> list[dict[str, Any]]:
        """The groups ``well`` belongs to, each with its other wells and summary."""
        return [
            {"wells": list(g.wells), "relation": g.relation, "summary": g.summary, "others": [w for w in g.wells if w != well]}
            for g in self.groups if well in g.wells
        ]

    def well_record(self, well: str) -> dict[str, Any] | None:
        """The JSON-ready record a well's result carries (None when the timetable lacks the well)."""
        w = self.wells.get(well)
        if w is None:
            return None
        d = w.as_dict()
        d["run"] = self.run
        d["collector_delay_min"] = self.collector_delay_min
        d["related_wells"] = self.related(well)
        return d

    def as_dict(self) -> dict[str, Any]:
        """Plate-level record: the run, the options, each well's feature summary and the MS/MS groups."""
        return {
            "run": self.run,
            "timetable": self.timetable,
            "collector_delay_min": self.collector_delay_min,
            "scans": self.scans,
            "options": self.options.as_dict(),
            "wells": {
                w: {
                    "features": len(m.features),
                    "major_features": len(m.major_features),
                    "shares": [round(f.share, 4) for f in m.features],
                    "neutral_masses": [round(f.neutral_mass, 5) for f in m.features],
                    "notes": list(m.notes),
                }
                for w, m in self.wells.items()
            },
            "groups": [g.as_dict() for g in self.groups],
        }


def _group_spectra(wells: dict[str, WellMs]):
    """(well, neutral mass, spectrum) of each feature with MS/MS: its most intense ion's spectrum."""
    out = []
    for well, m in wells.items():
        for f in m.features:
            if not f.ms2:
                continue
            by_species = {s.species: s for s in f.ms2}
            spectrum = next((by_species[i.species] for i in f.ions if i.species in by_species), f.ms2[0])
            out.append((well, f.neutral_mass, spectrum))
    return out


def analyse_run(
    run: str | os.PathLike,
    timetable: str | os.PathLike,
    *,
    collector_delay_min: float = 0.0,
    options: FeatureOptions | None = None,
    min_similarity: float = 0.7,
    min_matched_peaks: int = 4,
) -> PlateLcms:
    """Read the run (mzML) and the timetable; find every well's features and the MS/MS groups.

    Parameters
    ----------
    run, timetable
        The extract's LC-MS run and the fraction-collection timetable (CSV).
    collector_delay_min
        Time from the MS detector to the collector's needle, minutes.
    options
        Feature finding (:class:`nmrcheck.ms.features.FeatureOptions`).
    min_similarity, min_matched_peaks
        A link between two wells' MS/MS spectra needs this modified cosine and this many matched peaks.

    Raises
    ------
    InputFileError
        The run or the timetable cannot be read (one line naming file, line and field).
    ParameterError
        An option out of range.
    """
    from nmrcheck.io.mzml import read_mzml
    from nmrcheck.io.timetable import read_timetable

    options = options or FeatureOptions()
    table = read_timetable(timetable)
    lcms_run = read_mzml(run)
    wells = plate_features(lcms_run, table, collector_delay_min=collector_delay_min, options=options)
    groups = spectral_groups(_group_spectra(wells), min_score=min_similarity, min_matched_peaks=min_matched_peaks,
                             mass_tolerance_ppm=options.tolerance_ppm)
    return PlateLcms(str(run), str(timetable), float(collector_delay_min), options, wells, groups, len(lcms_run.scans))


def attach_run(manifest, run, timetable, *, collector_delay_min: float = 0.0, options: FeatureOptions | None = None):
    """(manifest with the run's features merged in, :class:`PlateLcms`): :func:`analyse_run` then :func:`merge_lcms`."""
    if not run or not timetable:
        raise ParameterError("--lcms and --timetable: give both the LC-MS run (mzML) and the fraction timetable")
    lcms = analyse_run(run, timetable, collector_delay_min=collector_delay_min, options=options)
    return merge_lcms(manifest, lcms), lcms


def features_text(lcms: PlateLcms) -> str:
    """One line per well (its features with shares) and one per MS/MS group."""
    lines = [f"{lcms.run}: {lcms.scans} spectra; {len(lcms.wells)} wells; collector delay {lcms.collector_delay_min:g} min (windows below as seen at the detector)"]
    for well, m in lcms.wells.items():
        a, b = m.detector_window_min
        if not m.features:
            lines.append(f"{well:>4}  {a:6.3f}-{b:6.3f} min  {'; '.join(m.notes) or 'no feature'}")
            continue
        parts = []
        for f in m.features[:4]:
            ion = f.main_ion
            parts.append(f"M {f.neutral_mass:.4f} ({ion.species} {ion.mz:.4f}{'?' if f.species_assumed else ''}"
                         f"{' +' + str(len(f.ions) - 1) + ' ions' if len(f.ions) > 1 else ''}{', MS/MS' if f.ms2 else ''}) {f.share:.0%}")
        more = f" +{len(m.features) - 4} more" if len(m.features) > 4 else ""
        flag = f"  [{len(m.major_features)} major features]" if len(m.major_features) > 1 else ""
        lines.append(f"{well:>4}  {a:6.3f}-{b:6.3f} min  " + "; ".join(parts) + more + flag)
    for g in lcms.groups:
        lines.append(f"MS/MS: {g.summary}")
    lines.append("(? : ion species assumed, no partner ion seen; shares are of the ion current, not of the amount)")
    return "\n".join(lines)


def _lead_feature(m: WellMs, masses: list[float] | None = None, tolerance_ppm: float = DEFAULT_TOLERANCE_PPM) -> tuple[int, str] | None:
    """(index, why) of the feature a well's formula search uses: the largest one whose neutral mass is that
    of a candidate the chemist named (exact masses: the measured one is within ``tolerance_ppm`` of its),
    else the largest one."""
    if not m.features:
        return None
    for k, f in enumerate(m.features):
        if any(abs(f.neutral_mass - x) <= x * tolerance_ppm * 1e-6 for x in masses or ()):
            return k, "the neutral mass of a named candidate"
    return 0, "the largest share of the ion current"


def _named_masses(spec) -> list[float]:
    """Monoisotopic masses of the formulas and structures a manifest row names."""
    from nmrcheck.chem import parse_formula
    from nmrcheck.errors import NmrcheckError

    out = []
    for text in spec.formulas:
        try:
            out.append(parse_formula(text).monoisotopic_mass)
        except NmrcheckError:
            continue
    if spec.structures:
        from rdkit import Chem
        from rdkit.Chem.rdMolDescriptors import CalcExactMolWt

        for _, smiles in spec.structures:
            mol = Chem.MolFromSmiles(smiles)
            if mol is not None:
                out.append(CalcExactMolWt(mol))
    return out


def merge_lcms(manifest, lcms: PlateLcms):
    """The manifest with each well's LC-MS record attached and its major feature filled in.

    A row's own ``ms_feature``, ``isotopes`` and ``rt_min`` win; where a row has none, the
    well's largest feature (by share of the ion current) gives them. Wells of the timetable
    missing from the manifest are not added (the manifest says which wells to screen).
    """
    specs = []
    for spec in manifest.wells:
        record = lcms.well_record(spec.well)
        if record is None:
            specs.append(spec)
            continue
        changes: dict[str, Any] = {}
        well_ms = lcms.wells[spec.well]
        pick = _lead_feature(well_ms, _named_masses(spec), lcms.options.tolerance_ppm)
        lead = well_ms.features[pick[0]] if pick else None
        if spec.ms_features:
            record["manifest_feature"] = {"source": "manifest"}
        elif lead is not None:
            pairs, iso = lead.manifest_entry()
            changes["ms_features"] = pairs
            changes["isotopes"] = iso
            record["manifest_feature"] = {"source": "lcms", "feature": pick[0], "why": pick[1]}
        else:
            record["manifest_feature"] = None
        if spec.rt_min is None and lead is not None:
            changes["rt_min"] = round(lead.rt_min, 3)
        specs.append(dataclasses.replace(spec, lcms=record, **changes))
    return dataclasses.replace(manifest, wells=tuple(specs))


def manifest_rows(lcms: PlateLcms, *, spectrum: str = "fids/{well}/1", existing=None) -> list[dict[str, str]]:
    """Manifest rows (column -> text) for every well of the timetable, mixed with ``existing`` rows.

    Parameters
    ----------
    lcms
        From :func:`analyse_run`.
    spectrum
        The ``spectrum`` entry of wells the existing manifest does not name (``{well}`` is replaced later).
    existing
        A validated manifest (:func:`nmrcheck.plate.manifest.read_manifest`) whose non-empty
        cells win; its wells outside the timetable are kept as they are.
    """
    from nmrcheck.plate.manifest import COLUMNS

    old = {s.well: s for s in existing.wells} if existing is not None else {}
    rows = []
    for well, m in lcms.wells.items():
        spec = old.pop(well, None)
        row = _spec_row(spec) if spec is not None else {c: "" for c in COLUMNS}
        row["well"] = well
        row["spectrum"] = row["spectrum"] or spectrum
        pick = _lead_feature(m, _named_masses(spec) if spec is not None else None, lcms.options.tolerance_ppm)
        lead = m.features[pick[0]] if pick else None
        if lead is not None and not row["ms_feature"]:
            pairs, iso = lead.manifest_entry()
            row["ms_feature"] = "; ".join(f"{mz:.5f} {ion}" for mz, ion in pairs)
            row["isotopes"] = ",".join(f"{v:.1f}" for v in iso) if iso else ""
        if lead is not None and not row["rt_min"]:
            row["rt_min"] = f"{lead.rt_min:.3f}"
        if not row["notes"]:
            majors = len(m.major_features)
            row["notes"] = (f"LC-MS: {majors} major features ({', '.join(f'{f.share:.0%}' for f in m.major_features)} of the ion current)"
                            if majors > 1 else "; ".join(m.notes))
        rows.append(row)
    rows.extend(_spec_row(s) for s in old.values())
    return rows


def _spec_row(spec) -> dict[str, str]:
    from nmrcheck.plate.manifest import COLUMNS

    row = {c: "" for c in COLUMNS}
    row.update(
        well=spec.well,
        spectrum=spec.spectrum,
        ms_feature="; ".join(f"{mz!r} {ion}" for mz, ion in spec.ms_features),
        isotopes=",".join(f"{v:g}" for v in spec.isotopes) if spec.isotopes else "",
        rt_min="" if spec.rt_min is None else f"{spec.rt_min:g}",
        formulas="; ".join(spec.formulas),
        structures="; ".join(f"{n}: {s}" for n, s in spec.structures),
        candidates_file=spec.candidates_file or "",
        solvent=spec.solvent or "",
        notes=spec.notes,
    )
    return row


def write_manifest(path: str | os.PathLike, rows: list[dict[str, str]], *, comment: str = "") -> Path:
    """Write manifest rows as CSV (the columns of ``docs/manifest.md``)."""
    from nmrcheck.plate.manifest import COLUMNS

    if not rows:
        raise ParameterError("rows: a manifest needs at least one well")
    p = Path(path)
    p.parent.mkdir(parents=True, exist_ok=True)
    with open(p, "w", newline="", encoding="utf-8") as fh:
        if comment:
            fh.write(f"# {comment}\n")
        writer = csv.DictWriter(fh, fieldnames=list(COLUMNS))
        writer.writeheader()
        writer.writerows(rows)
    return p


def save_lcms(out_dir: str | os.PathLike, lcms: PlateLcms) -> None:
    """Store the plate-level LC-MS record (options, per-well summary, MS/MS groups) in the results database."""
    from nmrcheck.plate.store import ResultsStore

    with ResultsStore(out_dir) as store:
        store.save_plate_record(RECORD_KEY, lcms.as_dict())


def load_lcms(out_dir: str | os.PathLike) -> dict[str, Any] | None:
    """The plate-level LC-MS record of a results folder (None when the plate had no run)."""
    from nmrcheck.plate.store import ResultsStore

    with ResultsStore(out_dir) as store:
        return store.plate_record(RECORD_KEY)


def lcms_summary(out_dir: str | os.PathLike) -> list[str]:
    """Lines on what the LC-MS run said about a screened plate (none when it had no run)."""
    record = load_lcms(out_dir)
    if record is None:
        return []
    wells = record["wells"]
    mixed = [w for w, m in wells.items() if m["major_features"] > 1]
    lines = [f"LC-MS: features of {sum(1 for m in wells.values() if m['features'])} of {len(wells)} wells from {record['run']}"
             + (f"; several major features (a mixture?) in {', '.join(mixed)}" if mixed else "")]
    lines.extend(f"MS/MS: {g['summary']}" for g in record["groups"])
    return lines


# --- inside a well's screen ------------------------------------------------------------------


def _feature_for(record: dict[str, Any], neutral_mass: float | None, tolerance_ppm: float) -> dict[str, Any] | None:
    """The largest feature whose (measured) neutral mass can be the measured ``neutral_mass``."""
    feats = record.get("features") or []
    if neutral_mass is None:
        return feats[0] if feats else None
    near = [f for f in feats if masses_agree(f["neutral_mass"], neutral_mass, tolerance_ppm)]
    return max(near, key=lambda f: f["share"]) if near else None


def fragment_checks(
    record: dict[str, Any],
    formulas: list[str],
    *,
    neutral_mass: float | None,
    mass_tolerance_ppm: float = DEFAULT_TOLERANCE_PPM,
    fragment_tolerance_ppm: float = FRAGMENT_TOLERANCE_PPM,
) -> list[dict[str, Any]]:
    """MS/MS checks of candidate formulas against the well's feature of their neutral mass.

    Parameters
    ----------
    record
        The well's LC-MS record (``WellSpec.lcms``).
    formulas
        Candidate formulas (Hill).
    neutral_mass
        Neutral mass of the MS feature the candidates were searched for (None: the largest feature).
    mass_tolerance_ppm
        Mass accuracy of a survey-scan m/z, for finding that feature.
    fragment_tolerance_ppm
        Fragment mass tolerance (with the :data:`nmrcheck.tolerances.FRAGMENT_TOLERANCE_MDA` floor).

    Returns
    -------
    list of dict
        One :meth:`FragmentCheck.as_dict` per formula that has an MS/MS spectrum to meet, with
        the spectrum's precursor, its scans and ``co_isolated_mz``: ions of other features eluting
        then within 1.5 u of the precursor (fragmented with it, so a contradiction is only a doubt).
    """
    feature = _feature_for(record, neutral_mass, mass_tolerance_ppm)
    if feature is None or not feature.get("ms2"):
        return []
    spectra = [Ms2Spectrum.from_dict(s) for s in feature["ms2"]]
    order = {i["species"]: k for k, i in enumerate(feature["ions"])}
    spectrum = min(spectra, key=lambda s: order.get(s.species, 99))
    # Ions of other features that co-elute within a typical isolation window (+-1.5 u) may have been
    # fragmented with the precursor: their fragments are no evidence against the candidate.
    co_isolated = sorted(
        round(i["mz"], 4)
        for f in record.get("features") or [] if f is not feature and f["rt_start_min"] <= spectrum.rt_min <= f["rt_end_min"]
        for i in f["ions"] if abs(i["mz"] - spectrum.precursor_mz) <= 1.5
    )
    out = []
    for formula in dict.fromkeys(formulas):
        check = check_fragments(formula, spectrum.species, spectrum.mz, spectrum.intensity, precursor_mz=spectrum.precursor_mz,
                                tolerance_ppm=fragment_tolerance_ppm)
        d = check.as_dict()
        d["precursor_mz"] = round(spectrum.precursor_mz, 5)
        d["scans"] = len(spectrum.scan_ids)
        d["co_isolated_mz"] = co_isolated
        out.append(d)
    return out
