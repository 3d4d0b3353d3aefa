"""Read and validate a plate manifest (one CSV row per well) before anything runs, listing every problem.

The columns are documented in ``docs/manifest.md``; an example is ``docs/example-manifest.csv``.
"""

from __future__ import annotations

import csv
import glob
import io
import logging
import os
import re
from dataclasses import dataclass, field
from pathlib import Path

from nmrcheck.errors import ManifestError, NmrcheckError
from nmrcheck.io.csvrows import data_rows

__all__ = [
    "COLUMNS",
    "REQUIRED_COLUMNS",
    "PlateLayout",
    "WellSpec",
    "Manifest",
    "read_manifest",
    "layout_named",
    "resolve_spectrum",
]

log = logging.getLogger("nmrcheck")

COLUMNS = (
    "well",
    "spectrum",
    "ms_feature",
    "isotopes",
    "rt_min",
    "formulas",
    "structures",
    "candidates_file",
    "solvent",
    "volume_ul",
    "deuteration_pct",
    "standard",
    "standard_nmol",
    "next_experiment",
    "notes",
)
#: Columns that set the amount for one well (over the plate's settings).
AMOUNT_COLUMNS = ("volume_ul", "deuteration_pct", "standard", "standard_nmol", "next_experiment")
REQUIRED_COLUMNS = ("well", "spectrum")

_WELL = re.compile(r"^([A-Za-z])0*(\d{1,2})$")
_FEATURE = re.compile(r"^\s*([0-9]*\.?[0-9]+(?:[eE][+-]?\d+)?)\s+(\[.+)$")
_GLOB_CHARS = set("*?[")


@dataclass(frozen=True)
class PlateLayout:
    """A microplate format: rows lettered from A, columns numbered from 1."""

    name: str
    rows: int
    columns: int

    @property
    def row_letters(self) -> str:
        return "ABCDEFGHIJKLMNOP"[: self.rows]

    def wells(self) -> tuple[str, ...]:
        """Every well, row by row (A1, A2, ... H12)."""
        return tuple(f"{r}{c}" for r in self.row_letters for c in range(1, self.columns + 1))

    def position(self, well: str) -> tuple[int, int]:
        """(row index, column index), both from 0."""
        m = _WELL.match(well)
        if m is None:
            raise ManifestError("well", [f"{well!r} is not a well name such as A1 or H12"])
        return self.row_letters.index(m.group(1).upper()), int(m.group(2)) - 1

    def contains(self, well: str) -> bool:
        m = _WELL.match(well)
        return bool(m) and m.group(1).upper() in self.row_letters and 1 <= int(m.group(2)) <= self.columns


_LAYOUTS = {"96": PlateLayout("96", 8, 12), "384": PlateLayout("384", 16, 24)}


def layout_named(name: str | int) -> PlateLayout:
    """The 96-well (8 x 12) or 384-well (16 x 24) layout."""
    key = str(name)
    if key not in _LAYOUTS:
        raise ManifestError("layout", [f"layout {name!r}: use 96 or 384"])
    return _LAYOUTS[key]


@dataclass(frozen=True)
class WellSpec:
    """One validated manifest row: what is in a well and what was measured on it."""

    well: str
    """Canonical well name (``A1``, no leading zero, upper case)."""
    line: int
    """Line of the manifest the row came from (the header is line 1)."""
    spectrum: str
    """Path or glob pattern of the recording, relative to the manifest's folder; ``{well}`` is replaced."""
    ms_features: tuple[tuple[float, str], ...] = ()
    """(m/z, ion species) pairs of the one MS feature, e.g. ``((301.0707, '[M+H]+'),)``."""
    isotopes: tuple[float, ...] | None = None
    """Relative intensities M+0, M+1, ... of the first ion."""
    rt_min: float | None = None
    formulas: tuple[str, ...] = ()
    """Candidate formulas in Hill notation."""
    structures: tuple[tuple[str, str], ...] = ()
    """Candidate structures as (name, SMILES)."""
    candidates_file: str | None = None
    solvent: str | None = None
    """Solvent to assume when the recording does not name one."""
    amount_settings: tuple[tuple[str, float | str], ...] = ()
    """This well's own amount settings (``volume_ul``, ``deuteration_pct``, ``standard``, ``standard_nmol``,
    ``next_experiment``) over the plate's, as (name, value) pairs."""
    notes: str = ""
    lcms: dict | None = field(default=None, compare=False)
    """The well's record from the extract's LC-MS run (features, MS/MS, related wells) when the plate
    was given one (:func:`nmrcheck.plate.lcms.merge_lcms`); not a manifest column."""

    def as_dict(self) -> dict:
        return {
            "well": self.well,
            "line": self.line,
            "spectrum": self.spectrum,
            "ms_features": [list(f) for f in self.ms_features],
            "isotopes": None if self.isotopes is None else list(self.isotopes),
            "rt_min": self.rt_min,
            "formulas": list(self.formulas),
            "structures": [list(s) for s in self.structures],
            "candidates_file": self.candidates_file,
            "solvent": self.solvent,
            "amount_settings": {k: v for k, v in self.amount_settings},
            "notes": self.notes,
        }

    def fingerprint(self) -> dict:
        """What of the row changes the result (the line number and notes do not)."""
        d = self.as_dict()
        d.pop("line")
        d.pop("notes")
        if self.lcms is not None:
            from nmrcheck.plate.results import options_hash

            d["lcms"] = options_hash(self.lcms)
        return d


@dataclass(frozen=True)
class Manifest:
    """A validated plate manifest."""

    path: str
    directory: str
    """Folder the relative spectrum paths start from (the manifest's own folder)."""
    layout: PlateLayout
    wells: tuple[WellSpec, ...] = field(default_factory=tuple)

    def well(self, name: str) -> WellSpec:
        for w in self.wells:
            if w.well == name:
                return w
        raise KeyError(name)


def canonical_well(text: str) -> str | None:
    m = _WELL.match(text.strip())
    if m is None:
        return None
    return f"{m.group(1).upper()}{int(m.group(2))}"


def resolve_spectrum(spec: WellSpec, directory: str | os.PathLike) -> list[Path]:
    """Recordings that match the well's ``spectrum`` entry (several for an ambiguous pattern, none if absent)."""
    text = spec.spectrum.replace("{well}", spec.well)
    base = Path(directory)
    p = Path(text)
    if not p.is_absolute():
        p = base / p
    if _GLOB_CHARS & set(text):
        return sorted(Path(m) for m in glob.glob(str(p)))
    return [p] if p.exists() else []


def _split_list(text: str) -> list[str]:
    return [t.strip() for t in text.split(";") if t.strip()]


def _read_candidates_file(path: Path) -> tuple[list[str], list[tuple[str, str]], list[str]]:
    """(formulas, structures, problems) from a candidates CSV with columns name, formula and/or smiles."""
    problems: list[str] = []
    formulas: list[str] = []
    structures: list[tuple[str, str]] = []
    try:
        text = path.read_text(encoding="utf-8-sig")
    except OSError as exc:
        return [], [], [f"cannot be read ({exc.strerror})"]
    lines = [ln for ln in text.splitlines() if ln.strip() and not ln.lstrip().startswith("#")]
    reader = csv.DictReader(lines)
    fields = {f.strip().lower() for f in (reader.fieldnames or [])}
    if not fields & {"formula", "smiles"}:
        return [], [], ["needs a 'formula' and/or a 'smiles' column"]
    for i, row in enumerate(reader, start=2):
        row = {(k or "").strip().lower(): (v or "").strip() for k, v in row.items()}
        if row.get("formula"):
            formulas.append(row["formula"])
        if row.get("smiles"):
            structures.append((row.get("name") or f"structure {i - 1}", row["smiles"]))
    if not formulas and not structures:
        problems.append("holds no candidate")
    return formulas, structures, problems


def _check_formula(text: str) -> str | None:
    from nmrcheck.chem import parse_formula

    try:
        return parse_formula(text).hill
    except NmrcheckError as exc:
        raise ValueError(str(exc)) from None


def _check_smiles(smiles: str) -> bool:
    from rdkit import Chem, RDLogger

    from nmrcheck.io.structures import smiles_size_problem

    if smiles_size_problem(smiles):
        return False  # beyond the structure size checked (RDKit alone can take minutes on it)
    RDLogger.DisableLog("rdApp.*")
    return Chem.MolFromSmiles(smiles) is not None


def _check_ion(text: str) -> str:
    from nmrcheck.chem import parse_ion

    return parse_ion(text).notation


def _parse_row(row: dict[str, str], line: int, directory: Path, problems: list[str]) -> WellSpec | None:
    """A WellSpec from one row, or None after appending every problem of the row."""
    n_before = len(problems)

    def bad(column: str, message: str) -> None:
        problems.append(f"line {line}, column '{column}': {message}")

    raw_well = row.get("well", "")
    well = canonical_well(raw_well)
    if not raw_well:
        bad("well", "empty; give a well name such as A1")
    elif well is None:
        bad("well", f"{raw_well!r} is not a well name such as A1 or H12")
    spectrum = row.get("spectrum", "")
    if not spectrum:
        bad("spectrum", "empty; give the path (or a pattern) of the recording")

    features: list[tuple[float, str]] = []
    for item in _split_list(row.get("ms_feature", "")):
        m = _FEATURE.match(item)
        if m is None:
            bad("ms_feature", f"{item!r} is not 'm/z ion' such as '301.0707 [M+H]+'")
            continue
        mz = float(m.group(1))
        if not 0 < mz < 5000:
            bad("ms_feature", f"m/z {mz:g} is outside 0..5000")
            continue
        try:
            features.append((mz, _check_ion(m.group(2))))
        except NmrcheckError as exc:
            bad("ms_feature", str(exc))

    isotopes = None
    if row.get("isotopes"):
        if not row.get("ms_feature"):
            bad("isotopes", "given without an ms_feature to belong to")
        try:
            from nmrcheck.chem.isotopes import parse_intensities

            isotopes = parse_intensities(row["isotopes"])
        except NmrcheckError as exc:
            bad("isotopes", str(exc))

    rt = None
    if row.get("rt_min"):
        try:
            rt = float(row["rt_min"])
            if not 0 <= rt < 1000:
                bad("rt_min", f"{rt:g} min is outside 0..1000 min")
        except ValueError:
            bad("rt_min", f"{row['rt_min']!r} is not a number of minutes")

    formulas: list[str] = []
    for item in _split_list(row.get("formulas", "")):
        try:
            formulas.append(_check_formula(item))
        except ValueError as exc:
            bad("formulas", str(exc))

    structures: list[tuple[str, str]] = []
    for k, item in enumerate(_split_list(row.get("structures", "")), start=1):
        # 'name: SMILES'; a colon inside brackets is a SMILES atom map, not a name separator.
        head, sep, tail = item.partition(":")
        if sep and "[" not in head:
            name, smiles = head, tail
        else:
            name, smiles = "", item
        name = name.strip() or f"structure {k}"
        smiles = smiles.strip()
        if not _check_smiles(smiles):
            bad("structures", f"{smiles!r} is not a SMILES RDKit can read")
        else:
            structures.append((name, smiles))

    cand_file = row.get("candidates_file") or None
    if cand_file:
        p = Path(cand_file) if Path(cand_file).is_absolute() else directory / cand_file
        if not p.is_file():
            bad("candidates_file", f"{cand_file!r} does not exist")
        else:
            f_list, s_list, file_problems = _read_candidates_file(p)
            for pr in file_problems:
                bad("candidates_file", f"{cand_file}: {pr}")
            for f in f_list:
                try:
                    formulas.append(_check_formula(f))
                except ValueError as exc:
                    bad("candidates_file", f"{cand_file}: {exc}")
            for name, smiles in s_list:
                if _check_smiles(smiles):
                    structures.append((name, smiles))
                else:
                    bad("candidates_file", f"{cand_file}: {smiles!r} is not a SMILES RDKit can read")

    solvent = row.get("solvent") or None
    if solvent:
        from nmrcheck.processing.solvents import known_solvents, normalise_solvent

        name = normalise_solvent(solvent)
        if name is None:
            bad("solvent", f"{solvent!r} is not in the solvent table ({', '.join(known_solvents())})")
        solvent = name

    amount_settings: list[tuple[str, float | str]] = []
    for col, low, high in (("volume_ul", 1.0, 2000.0), ("deuteration_pct", 90.0, 100.0), ("standard_nmol", 1e-3, 1e6)):
        text = (row.get(col) or "").strip()
        if not text:
            continue
        try:
            value = float(text)
        except ValueError:
            bad(col, f"{text!r} is not a number")
            continue
        if not low <= value <= high:
            bad(col, f"{value:g} is outside {low:g}..{high:g}")
            continue
        amount_settings.append((col, value))
    standard = (row.get("standard") or "").strip()
    if standard:
        from nmrcheck.quant.references import known_standards, standard_info

        try:
            standard_info(standard)
        except NmrcheckError:
            bad("standard", f"{standard!r} is not in the standards table ({', '.join(known_standards())})")
        else:
            amount_settings.append(("standard", standard))
    if any(k == "standard_nmol" for k, _ in amount_settings) and not standard:
        bad("standard_nmol", "given without a standard to belong to")
    if standard and not any(k == "standard_nmol" for k, _ in amount_settings):
        bad("standard", "give the standard's amount in the tube in standard_nmol")
    experiment = (row.get("next_experiment") or "").strip()
    if experiment:
        from nmrcheck.quant.recommend import load_thresholds

        known = load_thresholds()
        if experiment.lower() not in known:
            bad("next_experiment", f"{experiment!r} is not one of {', '.join(sorted(known))}")
        else:
            amount_settings.append(("next_experiment", experiment))

    if len(problems) > n_before:
        return None
    return WellSpec(
        well=well or "",
        line=line,
        spectrum=spectrum,
        ms_features=tuple(features),
        isotopes=isotopes,
        rt_min=rt,
        formulas=tuple(dict.fromkeys(formulas)),
        structures=tuple(structures),
        candidates_file=cand_file,
        solvent=solvent,
        amount_settings=tuple(amount_settings),
        notes=row.get("notes", ""),
    )


def read_manifest(path: str | os.PathLike, *, layout: str | int | None = None) -> Manifest:
    """Read and validate a plate manifest; raise :class:`ManifestError` listing every problem.

    Parameters
    ----------
    path
        The manifest CSV (UTF-8; lines starting with ``#`` are comments).
    layout
        ``96`` or ``384``; by default 96, or 384 when a well lies outside A1..H12.

    Raises
    ------
    ManifestError
        With ``problems``: one entry per broken cell, by line and column.
    """
    p = Path(path)
    try:
        text = p.read_text(encoding="utf-8-sig")
    except FileNotFoundError:
        raise ManifestError(p, ["the manifest file does not exist"]) from None
    except (OSError, UnicodeDecodeError) as exc:
        raise ManifestError(p, [f"cannot be read as UTF-8 text ({exc})"]) from None
    directory = p.resolve().parent
    reader = csv.reader(io.StringIO(text))
    header: list[str] | None = None
    problems: list[str] = []
    rows: list[tuple[int, dict[str, str]]] = []
    for line, fields in data_rows(reader):
        if header is None:
            header = [f.strip().lower() for f in fields]
            for col in REQUIRED_COLUMNS:
                if col not in header:
                    problems.append(f"line {line}: the header lacks the required column '{col}'")
            for col in header:
                if col not in COLUMNS:
                    problems.append(f"line {line}, column '{col}': unknown column (known: {', '.join(COLUMNS)})")
            dupes = {c for c in header if header.count(c) > 1}
            for col in sorted(dupes):
                problems.append(f"line {line}, column '{col}': appears more than once in the header")
            continue
        if len(fields) > len(header):
            extra = [f for f in fields[len(header):] if f.strip()]
            if extra:
                problems.append(f"line {line}: {len(fields)} fields where the header has {len(header)}")
        rows.append((line, {h: (fields[i].strip() if i < len(fields) else "") for i, h in enumerate(header)}))
    if header is None:
        raise ManifestError(p, ["the manifest is empty (no header line)"])
    if problems and any("required column" in pr for pr in problems):
        raise ManifestError(p, problems)
    if not rows:
        problems.append("the manifest names no well")

    specs: list[WellSpec] = []
    for line, row in rows:
        spec = _parse_row(row, line, directory, problems)
        if spec is not None:
            specs.append(spec)

    names = [canonical_well(r.get("well", "")) for _, r in rows]
    if layout is None:
        big = any(n and (n[0] > "H" or int(n[1:]) > 12) for n in names)
        plate = _LAYOUTS["384" if big else "96"]
    else:
        try:
            plate = layout_named(layout)
        except ManifestError as exc:
            problems.extend(exc.problems)
            plate = _LAYOUTS["384"]
    seen: dict[str, int] = {}
    for (line, _), n in zip(rows, names):
        if n is None:
            continue
        if not plate.contains(n):
            problems.append(f"line {line}, column 'well': {n} is outside the {plate.name}-well layout")
        if n in seen:
            problems.append(f"line {line}, column 'well': {n} already given on line {seen[n]}")
        else:
            seen[n] = line
    if problems:
        raise ManifestError(p, problems)
    order = {w: i for i, w in enumerate(plate.wells())}
    specs.sort(key=lambda s: order[s.well])
    log.info("manifest %s: %d wells on a %s-well plate", p, len(specs), plate.name)
    return Manifest(path=str(p.resolve()), directory=str(directory), layout=plate, wells=tuple(specs))
