"""Read a library of known compounds (CSV, SMILES or SD file) row by row, for indexing.

A CSV has a ``smiles`` column and optionally ``name``, ``formula``, ``inchikey``,
``genus``, ``family`` (and ``kingdom``, ``species``; other columns are ignored); the
column names are matched without regard to case. A SMILES file holds ``SMILES name`` per
line. An SD file's records carry the name in the title line and the taxa as properties of
the same names. Rows are streamed as plain records so that a large library never sits in
memory as structures; the chemistry (formula, mass, InChIKey) is worked out by the indexer.
"""

from __future__ import annotations

import csv
import os
from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path

from nmrcheck.errors import InputFileError

__all__ = ["KnownCompoundRow", "read_known_compounds", "LIBRARY_FORMATS", "TAXON_COLUMNS"]

#: File endings understood, and the kind each is read as.
LIBRARY_FORMATS = {".csv": "csv", ".tsv": "tsv", ".smi": "smiles", ".smiles": "smiles", ".sdf": "sdf", ".sd": "sdf"}
#: Taxon columns kept, narrowest first.
TAXON_COLUMNS = ("species", "genus", "family", "kingdom")


@dataclass(frozen=True)
class KnownCompoundRow:
    """One library row as written in the file (text only; empty strings for absent fields)."""

    line: int
    """Line (CSV, SMILES) or record number (SD file)."""
    name: str
    smiles: str
    formula: str
    inchikey: str
    species: str
    genus: str
    family: str
    kingdom: str


def _csv_rows(path: Path, delimiter: str) -> Iterator[KnownCompoundRow]:
    with open(path, newline="", encoding="utf-8-sig", errors="replace") as fh:
        numbers: list[int] = []  # file line of each line the reader sees (comments and blank lines skipped)

        def lines():
            for n, ln in enumerate(fh, start=1):
                if ln.strip() and not ln.lstrip().startswith("#"):
                    numbers.append(n)
                    yield ln

        reader = csv.reader(lines(), delimiter=delimiter)
        try:
            header = [h.strip().lower() for h in next(reader)]
        except StopIteration:
            raise InputFileError(path, "the library file is empty") from None
        if "smiles" not in header:
            raise InputFileError(path, "the library needs a 'smiles' column (and optionally name, formula, inchikey, genus, family)")
        index = {name: header.index(name) for name in ("smiles", "name", "formula", "inchikey", *TAXON_COLUMNS) if name in header}
        if "name" not in index and "label" in header:
            index["name"] = header.index("label")
        for fields in reader:
            get = {k: (fields[i].strip() if i < len(fields) else "") for k, i in index.items()}
            yield KnownCompoundRow(
                line=numbers[reader.line_num - 1], name=get.get("name", ""), smiles=get["smiles"], formula=get.get("formula", ""),
                inchikey=get.get("inchikey", ""), species=get.get("species", ""), genus=get.get("genus", ""),
                family=get.get("family", ""), kingdom=get.get("kingdom", ""),
            )


def _smiles_rows(path: Path) -> Iterator[KnownCompoundRow]:
    with open(path, encoding="utf-8", errors="replace") as fh:
        for n, line in enumerate(fh, start=1):
            s = line.strip()
            if not s or s.startswith("#"):
                continue
            parts = s.split(None, 1)
            yield KnownCompoundRow(n, parts[1].strip() if len(parts) > 1 else "", parts[0], "", "", "", "", "", "")


def _sdf_rows(path: Path) -> Iterator[KnownCompoundRow]:
    from rdkit import Chem, RDLogger

    RDLogger.DisableLog("rdApp.*")
    with open(path, "rb") as fh:
        for n, mol in enumerate(Chem.ForwardSDMolSupplier(fh), start=1):
            if mol is None:
                yield KnownCompoundRow(n, "", "", "", "", "", "", "", "")
                continue
            props = {k.lower(): mol.GetProp(k).strip() for k in mol.GetPropNames()}
            title = mol.GetProp("_Name").strip() if mol.HasProp("_Name") else ""
            yield KnownCompoundRow(
                line=n, name=title or props.get("name", ""), smiles=Chem.MolToSmiles(mol),
                formula=props.get("formula", ""), inchikey=props.get("inchikey", ""),
                species=props.get("species", ""), genus=props.get("genus", ""), family=props.get("family", ""),
                kingdom=props.get("kingdom", ""),
            )


def read_known_compounds(path: str | os.PathLike) -> Iterator[KnownCompoundRow]:
    """Rows of a known-compound library, in file order (a row RDKit cannot read has an empty ``smiles``).

    Raises
    ------
    InputFileError
        Missing file, unknown ending, or a CSV without a ``smiles`` column.
    """
    p = Path(path)
    if not p.is_file():
        raise InputFileError(p, "no such library file")
    kind = LIBRARY_FORMATS.get(p.suffix.lower())
    if kind is None:
        raise InputFileError(p, f"unknown library file ending {p.suffix!r}; use one of {', '.join(sorted(LIBRARY_FORMATS))}")
    if kind == "csv":
        return _csv_rows(p, ",")
    if kind == "tsv":
        return _csv_rows(p, "\t")
    if kind == "smiles":
        return _smiles_rows(p)
    return _sdf_rows(p)
