"""Read candidate structures and formulas from SMILES text, MOL, SDF and CSV files.

Every entry of a file becomes one :class:`StructureEntry`; an entry that cannot be
read carries its ``problem`` instead of a structure, so one bad record never stops
the others from being checked.
"""

from __future__ import annotations

import csv
import io
import logging
import os
import re
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from nmrcheck.errors import InputFileError

__all__ = ["StructureEntry", "read_structures", "mol_from_smiles", "smiles_size_problem", "STRUCTURE_FORMATS", "MAX_HEAVY_ATOMS"]

log = logging.getLogger("nmrcheck")

#: File endings understood, and the kind each is read as.
STRUCTURE_FORMATS = {
    ".smi": "smiles",
    ".smiles": "smiles",
    ".txt": "smiles",
    ".mol": "mol",
    ".sdf": "sdf",
    ".sd": "sdf",
    ".csv": "csv",
}

#: Largest candidate structure checked, heavy (non-hydrogen) atoms. The largest natural products
#: stay well below (maitotoxin, C164H258Na2O68S2: 236; palytoxin: 186; vancomycin: 101). The check
#: of one candidate grows faster than linearly with its size (measured on a polyol chain: 8 s at 253,
#: 27 s at 495, 120 s at 990 heavy atoms), so the bound keeps one candidate under about half a minute.
MAX_HEAVY_ATOMS = 500
#: Longest SMILES text looked at (a SMILES of MAX_HEAVY_ATOMS atoms with brackets, ring closures and
#: stereo marks stays well under this).
MAX_SMILES_CHARS = 20000

#: Largest candidate file read (a list of a few hundred literature candidates is well under 1 MiB).
MAX_CANDIDATE_FILE_BYTES = 16 * 1024 * 1024

_SMILES_ATOM = re.compile(r"\[[^\]]*\]|Cl|Br|[BCNOPSFI]|[bcnops]")


def smiles_size_problem(text: str) -> str | None:
    """Why a SMILES is too large to check (a cheap count before RDKit parses it), or None."""
    if len(text) > MAX_SMILES_CHARS:
        return f"SMILES of {len(text)} characters is longer than the {MAX_SMILES_CHARS} accepted (at most {MAX_HEAVY_ATOMS} heavy atoms)"
    atoms = sum(1 for m in _SMILES_ATOM.finditer(text) if not re.fullmatch(r"\[\d*H[^a-z]*\]", m.group(0)))
    if atoms > MAX_HEAVY_ATOMS:
        return f"SMILES holds about {atoms} heavy atoms; at most {MAX_HEAVY_ATOMS} are checked"
    return None


def _too_large(mol) -> str | None:
    heavy = mol.GetNumHeavyAtoms()
    if heavy > MAX_HEAVY_ATOMS:
        return f"structure holds {heavy} heavy atoms; at most {MAX_HEAVY_ATOMS} are checked"
    return None


#: SD-file properties tried, in order, for a record's name when its title line is empty.
_NAME_PROPERTIES = ("name", "Name", "NAME", "title", "ID", "id", "label", "compound")


@dataclass(frozen=True)
class StructureEntry:
    """One candidate as read from a file: a structure (RDKit Mol), a formula text, or a problem.

    Attributes
    ----------
    label : str
        Name from the file (SDF title or name property, CSV label, SMILES name) or
        ``<file>#<n>`` when the file gives none.
    mol : rdkit.Chem.Mol or None
        Structure with implicit hydrogens, sanitised.
    formula : str or None
        Formula text (CSV ``formula`` column); parsed downstream by the formula engine.
    origin : str
        ``'<file>:<record or line>'``, for messages.
    problem : str or None
        Why the entry could not be read; ``mol`` and ``formula`` are then None.
    """

    label: str
    mol: Any
    formula: str | None
    origin: str
    problem: str | None = None

    @property
    def ok(self) -> bool:
        return self.problem is None


def _rdkit():
    from rdkit import Chem, RDLogger

    RDLogger.DisableLog("rdApp.*")
    return Chem


def mol_from_smiles(smiles: str) -> tuple[Any, str | None]:
    """(Mol, None) for a valid SMILES, (None, reason) otherwise."""
    Chem = _rdkit()
    text = (smiles or "").strip()
    if not text:
        return None, "empty SMILES"
    too_large = smiles_size_problem(text)
    if too_large:
        return None, too_large
    mol = Chem.MolFromSmiles(text, sanitize=False)
    if mol is None:
        return None, f"SMILES {text!r} cannot be parsed"
    too_large = _too_large(mol)
    if too_large:
        return None, too_large
    try:
        Chem.SanitizeMol(mol)
    except Exception as exc:  # RDKit raises several sanitisation exception types
        return None, f"SMILES {text!r} is not a valid structure ({str(exc).strip() or type(exc).__name__})"
    if mol.GetNumAtoms() == 0:
        return None, f"SMILES {text!r} holds no atoms"
    return mol, None


def _mol_name(mol, fallback: str) -> str:
    if mol is not None:
        title = mol.GetProp("_Name").strip() if mol.HasProp("_Name") else ""
        if title:
            return title
        for key in _NAME_PROPERTIES:
            if mol.HasProp(key) and mol.GetProp(key).strip():
                return mol.GetProp(key).strip()
    return fallback


def _sanitised(mol, origin: str) -> tuple[Any, str | None]:
    Chem = _rdkit()
    if mol is None:
        return None, "record cannot be parsed as a molfile"
    too_large = _too_large(mol)
    if too_large:
        return None, too_large
    try:
        Chem.SanitizeMol(mol)
    except Exception as exc:
        return None, f"structure is not valid ({str(exc).strip() or type(exc).__name__})"
    if mol.GetNumAtoms() == 0:
        return None, "record holds no atoms"
    # Explicit H atoms in molfiles would hide from implicit-H counts downstream.
    return Chem.RemoveHs(mol, sanitize=True), None


def _read_mol(path: Path, text: str) -> list[StructureEntry]:
    Chem = _rdkit()
    mol = Chem.MolFromMolBlock(text, sanitize=False, removeHs=False)
    label_default = path.stem
    mol2, problem = _sanitised(mol, str(path))
    if problem:
        return [StructureEntry(label_default, None, None, f"{path.name}:1", problem)]
    title = mol.GetProp("_Name").strip() if mol.HasProp("_Name") else ""
    label = title if title and not _is_program_line(title) else label_default
    return [StructureEntry(label, mol2, None, f"{path.name}:1")]


def _is_program_line(title: str) -> bool:
    # Some drawing programs leave their own banner on the title line; a file name is then the better label.
    return len(title) > 60


def _read_sdf(path: Path, text: str) -> list[StructureEntry]:
    Chem = _rdkit()
    blocks = [b for b in text.split("$$$$") if b.strip()]
    if not blocks:
        raise InputFileError(path, "SD file holds no records")
    out = []
    for n, block in enumerate(blocks, start=1):
        origin = f"{path.name}:record {n}"
        supplier = Chem.SDMolSupplier()
        # split() leaves the newline after "$$$$" in front of the next record's title line.
        if n > 1 and block.startswith(("\n", "\r\n")):
            block = block.split("\n", 1)[1]
        supplier.SetData(block, sanitize=False, removeHs=False)
        mol = supplier[0] if len(supplier) else None
        fallback = f"{path.stem}#{n}"
        mol2, problem = _sanitised(mol, origin)
        if problem:
            # Keep the name when the header could be read, so the chemist knows which record failed.
            out.append(StructureEntry(_mol_name(mol, fallback) if mol is not None else fallback, None, None, origin, problem))
            continue
        if mol is not None:
            for key in mol.GetPropNames():
                mol2.SetProp(key, mol.GetProp(key))
        out.append(StructureEntry(_mol_name(mol, fallback), mol2, None, origin))
    return out


def _read_smiles(path: Path, text: str) -> list[StructureEntry]:
    out = []
    for lineno, line in enumerate(text.splitlines(), start=1):
        s = line.strip()
        if not s or s.startswith("#"):
            continue
        parts = s.split(None, 1)
        smiles = parts[0]
        label = parts[1].strip() if len(parts) > 1 else f"{path.stem}#{lineno}"
        origin = f"{path.name}:line {lineno}"
        mol, problem = mol_from_smiles(smiles)
        out.append(StructureEntry(label, mol, None, origin, problem))
    if not out:
        raise InputFileError(path, "no SMILES in the file")
    return out


def _read_csv(path: Path, text: str) -> list[StructureEntry]:
    lines = [ln for ln in text.splitlines() if ln.strip() and not ln.lstrip().startswith("#")]
    reader = csv.DictReader(io.StringIO("\n".join(lines)))
    fields = {(f or "").strip().lower(): f for f in (reader.fieldnames or [])}
    if "smiles" not in fields and "formula" not in fields:
        raise InputFileError(path, "CSV needs a 'formula' or a 'smiles' column (and optionally 'label')")
    label_key = fields.get("label") or fields.get("name")
    out = []
    for n, row in enumerate(reader, start=2):
        origin = f"{path.name}:line {n}"
        label = (row.get(label_key) or "").strip() if label_key else ""
        label = label or f"{path.stem}#{n}"
        smiles = (row.get(fields["smiles"]) or "").strip() if "smiles" in fields else ""
        formula = (row.get(fields["formula"]) or "").strip() if "formula" in fields else ""
        if smiles:
            mol, problem = mol_from_smiles(smiles)
            out.append(StructureEntry(label, mol, formula or None if mol is not None else None, origin, problem))
        elif formula:
            out.append(StructureEntry(label, None, formula, origin))
        else:
            out.append(StructureEntry(label, None, None, origin, "neither a formula nor a SMILES given"))
    if not out:
        raise InputFileError(path, "CSV holds no candidate rows")
    return out


def read_structures(path: str | os.PathLike) -> tuple[StructureEntry, ...]:
    """Every candidate in a SMILES (.smi/.txt), MOL, SDF or CSV file, in file order.

    Parameters
    ----------
    path
        The file. CSV files need a ``formula`` or ``smiles`` column and may have
        ``label`` (or ``name``); SMILES files hold ``SMILES [name]`` per line.

    Returns
    -------
    tuple of StructureEntry
        Unreadable entries are kept with their ``problem`` set.

    Raises
    ------
    InputFileError
        Missing or unreadable file, unknown ending, or a file holding no entries at all.
    """
    p = Path(path)
    if not p.is_file():
        raise InputFileError(p, "no such file")
    kind = STRUCTURE_FORMATS.get(p.suffix.lower())
    if kind is None:
        raise InputFileError(p, f"unknown candidate file ending {p.suffix!r}; use one of {', '.join(sorted(STRUCTURE_FORMATS))}")
    size = p.stat().st_size
    if size > MAX_CANDIDATE_FILE_BYTES:
        raise InputFileError(p, f"candidate file of {size} bytes is larger than the {MAX_CANDIDATE_FILE_BYTES // 1024**2} MiB accepted")
    try:
        text = p.read_text(encoding="utf-8", errors="replace")
    except OSError as exc:
        raise InputFileError(p, f"cannot be read ({exc.strerror})") from None
    if not text.strip():
        raise InputFileError(p, "file is empty")
    reader = {"smiles": _read_smiles, "mol": _read_mol, "sdf": _read_sdf, "csv": _read_csv}[kind]
    entries = reader(p, text)
    for e in entries:
        if not e.ok:
            log.warning("%s (%s): %s", e.origin, e.label, e.problem)
    return tuple(entries)
