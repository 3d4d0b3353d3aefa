"""Read and write NMReDATA records: an SD file whose data items carry assigned shifts, 1D peak lists and metadata.

The structure comes from the record's mol block (through RDKit); the ``NMREDATA_*`` tags are parsed
here. ``NMREDATA_ASSIGNMENT`` (and the ``NMR_ASSIGNMENT`` spelling some writers use) lines read
``label, shift, atom, atom, ...``; an atom written ``H<n>`` means the hydrogens on atom ``n``, and an
atom number that is itself an explicit hydrogen is taken as such. Atom numbers in the file count
from 1; indices in the records count from 0, like RDKit's.
"""

from __future__ import annotations

import logging
import os
import re
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path
from types import MappingProxyType
from typing import Any

from nmrcheck.errors import InputFileError

__all__ = ["NmredataAssignment", "NmredataPeak", "NmredataRecord", "NmredataSignal", "NmredataSpectrum", "format_nmredata", "read_nmredata", "write_nmredata"]

log = logging.getLogger("nmrcheck")

_TAG = re.compile(r"^>.*?<([^>]+)>")
_ASSIGNMENT_TAGS = ("NMREDATA_ASSIGNMENT", "NMR_ASSIGNMENT")


@dataclass(frozen=True)
class NmredataAssignment:
    """One assignment line: a label, its shift, and the atoms it names."""

    label: str
    shift_ppm: float
    atoms: tuple[int, ...]
    """0-based indices of the heavy atoms named (for hydrogen assignments: the atoms carrying the H)."""
    hydrogen: bool
    """True when the assignment is of hydrogens (``H<n>`` or an explicit H atom)."""


@dataclass(frozen=True)
class NmredataPeak:
    """One line of a 1D peak list: its shift and any ``key=value`` attributes (e.g. ``L=h1``)."""

    shift_ppm: float
    attributes: tuple[tuple[str, str], ...] = ()


@dataclass(frozen=True)
class NmredataSpectrum:
    """A 1D spectrum item (``NMREDATA_1D_<nucleus>``): its header parameters and its peaks."""

    nucleus: str
    parameters: Mapping[str, str]
    peaks: tuple[NmredataPeak, ...]


@dataclass(frozen=True, eq=False)
class NmredataRecord:
    """One NMReDATA record."""

    mol: Any
    """The structure as an RDKit Mol (hydrogens as in the file)."""
    source: str
    tags: Mapping[str, str] = field(repr=False)
    """Raw text of every data item, by tag name."""
    solvent: str | None
    smiles: str | None
    assignments: tuple[NmredataAssignment, ...]
    spectra: Mapping[str, NmredataSpectrum] = field(repr=False)
    """1D spectra by nucleus ('1H', '13C', ...)."""

    @property
    def hydrogen_assignments(self) -> tuple[NmredataAssignment, ...]:
        """The assignments of hydrogens."""
        return tuple(a for a in self.assignments if a.hydrogen)


def _rdkit():
    from rdkit import Chem

    return Chem


def _split_records(text: str) -> list[str]:
    parts = re.split(r"^\$\$\$\$\s*$", text, flags=re.MULTILINE)
    return [p for p in parts if p.strip()]


def _data_items(text: str) -> dict[str, str]:
    items: dict[str, list[str]] = {}
    current: list[str] | None = None
    for line in text.splitlines():
        m = _TAG.match(line)
        if m:
            current = items.setdefault(m.group(1).strip(), [])
            continue
        if current is None:
            continue
        if not line.strip():
            # a blank line ends the item; writers that leave several are tolerated
            current = None
            continue
        # NMReDATA 1.0 writers end continued lines with a backslash
        current.append(line.rstrip().rstrip("\\").rstrip())
    return {k: "\n".join(v) for k, v in items.items()}


def _atom_ref(token: str, mol, path: Path, label: str) -> tuple[int, bool]:
    token = token.strip()
    hydrogen = False
    if token[:1] in ("H", "h"):
        hydrogen = True
        token = token[1:]
    try:
        number = int(token)
    except ValueError:
        raise InputFileError(path, f"assignment {label!r}: atom reference {token!r} is not an atom number") from None
    if not 1 <= number <= mol.GetNumAtoms():
        raise InputFileError(
            path, f"assignment {label!r}: atom {number} is not in the structure ({mol.GetNumAtoms()} atoms)"
        )
    atom = mol.GetAtomWithIdx(number - 1)
    if atom.GetAtomicNum() == 1:
        heavy = [n.GetIdx() for n in atom.GetNeighbors()]
        if not heavy:
            raise InputFileError(path, f"assignment {label!r}: hydrogen atom {number} is bonded to nothing")
        return heavy[0], True
    return number - 1, hydrogen


def _assignments(text: str, mol, path: Path) -> tuple[NmredataAssignment, ...]:
    out = []
    for line in text.splitlines():
        line = line.split(";", 1)[0].strip()
        if not line:
            continue
        fields = [f.strip() for f in line.split(",") if f.strip()]
        if len(fields) < 3:
            raise InputFileError(path, f"assignment line {line!r} needs a label, a shift and at least one atom")
        label = fields[0]
        try:
            shift = float(fields[1])
        except ValueError:
            raise InputFileError(path, f"assignment {label!r}: shift {fields[1]!r} is not a number") from None
        refs = [_atom_ref(f, mol, path, label) for f in fields[2:] if "=" not in f]
        if not refs:
            raise InputFileError(path, f"assignment {label!r} names no atom")
        atoms = tuple(dict.fromkeys(i for i, _ in refs))
        out.append(NmredataAssignment(label, shift, atoms, any(h for _, h in refs)))
    return tuple(out)


def _spectrum(nucleus: str, text: str, path: Path) -> NmredataSpectrum:
    params: dict[str, str] = {}
    peaks = []
    for line in text.splitlines():
        line = line.split(";", 1)[0].strip()
        if not line:
            continue
        fields = [f.strip() for f in line.split(",")]
        head = fields[0]
        try:
            shift = float(head)
        except ValueError:
            if "=" in head and len(fields) == 1:
                key, _, value = head.partition("=")
                params[key.strip()] = value.strip()
                continue
            log.debug("%s: NMREDATA_1D_%s line %r not understood; skipped", path, nucleus, line)
            continue
        attrs = tuple(tuple(s.strip() for s in f.split("=", 1)) for f in fields[1:] if "=" in f)
        peaks.append(NmredataPeak(shift, attrs))  # type: ignore[arg-type]
    return NmredataSpectrum(nucleus, MappingProxyType(params), tuple(peaks))


def _record(text: str, path: Path):
    Chem = _rdkit()
    end = text.find("M  END")
    if end < 0:
        raise InputFileError(path, "NMReDATA record has no mol block (no 'M  END' line)")
    block = text[: end + len("M  END")] + "\n"
    mol = Chem.MolFromMolBlock(block, sanitize=True, removeHs=False)
    if mol is None:
        raise InputFileError(path, "the mol block of the NMReDATA record cannot be read as a structure")
    tags = _data_items(text[end:])
    assignment_text = next((tags[t] for t in _ASSIGNMENT_TAGS if t in tags), "")
    spectra = {}
    for tag, body in tags.items():
        m = re.fullmatch(r"NMREDATA_1D_(\w+)", tag)
        if m:
            nucleus = m.group(1)
            spectra[nucleus] = _spectrum(nucleus, body, path)
    solvent = tags.get("NMREDATA_SOLVENT", "").strip() or None
    smiles = tags.get("NMREDATA_SMILES", "").strip() or None
    return NmredataRecord(
        mol=mol,
        source=str(path),
        tags=MappingProxyType(tags),
        solvent=solvent,
        smiles=smiles,
        assignments=_assignments(assignment_text, mol, path),
        spectra=MappingProxyType(spectra),
    )


def read_nmredata(path: str | os.PathLike) -> NmredataRecord:
    """Read the first record of an NMReDATA file.

    Raises
    ------
    InputFileError
        If the file is missing or unreadable, holds no record, or a record's mol block or
        assignment lines cannot be read.
    """
    p = Path(path)
    try:
        text = p.read_text(encoding="utf-8", errors="replace")
    except FileNotFoundError:
        raise InputFileError(p, "no such file") from None
    except OSError as exc:
        raise InputFileError(p, f"cannot be read ({exc.strerror})") from None
    records = _split_records(text)
    if not records:
        raise InputFileError(p, "empty NMReDATA file")
    return _record(records[0], p)


# --- writing ------------------------------------------------------------------------------------


@dataclass(frozen=True)
class NmredataSignal:
    """One 1H signal to write: its shift, a label, and the protons it holds (``N=``)."""

    shift_ppm: float
    label: str
    n_h: float | None = None
    range_ppm: tuple[float, float] | None = None
    """(high, low) edges of the integrated region, written as a comment."""


def format_nmredata(
    *,
    smiles: str,
    solvent: str | None,
    larmor_mhz: float | None,
    signals: tuple[NmredataSignal, ...] | list[NmredataSignal],
    assignments: Mapping[str, tuple[int, ...]] | None = None,
    title: str = "",
    notes: Mapping[str, str] | None = None,
) -> str:
    """One NMReDATA 1.1 record (an SD-file record) of a structure, its 1H signals and their assignment.

    Parameters
    ----------
    smiles
        The structure; written with explicit hydrogens so assignments can name them.
    signals
        The observed signals; each becomes a line of ``NMREDATA_1D_1H`` (``shift, L=label, N=n``).
    assignments
        Signal label -> 0-based indices of the heavy atoms whose hydrogens the signal holds; written
        in ``NMREDATA_ASSIGNMENT`` as the 1-based numbers of those explicit hydrogen atoms.
    notes
        Extra data items (tag -> text) written after the NMReDATA ones (e.g. how the assignment was made).

    Lines inside a tag end with a backslash, as NMReDATA 1.1 writes them (Pupier et al., Magn. Reson.
    Chem. 2018, 56, 703; from memory); :func:`read_nmredata` reads both forms.
    """
    Chem = _rdkit()
    from rdkit.Chem import AllChem

    mol = Chem.MolFromSmiles(smiles)
    if mol is None:
        raise ValueError(f"smiles: {smiles!r} is not a readable structure")
    mol = Chem.AddHs(mol)
    AllChem.Compute2DCoords(mol)
    if title:
        mol.SetProp("_Name", title.replace("\n", " ")[:80])
    block = Chem.MolToMolBlock(mol).rstrip("\n")

    def item(tag: str, lines: list[str]) -> str:
        return f">  <{tag}>\n" + "".join(f"{ln}\\\n" for ln in lines) + "\n"

    out = [block + "\n", item("NMREDATA_VERSION", ["1.1"])]
    if solvent:
        out.append(item("NMREDATA_SOLVENT", [solvent]))
    out.append(item("NMREDATA_SMILES", [Chem.MolToSmiles(Chem.RemoveHs(mol))]))
    by_label = {s.label: s for s in signals}
    assigned = []
    for label, heavy in (assignments or {}).items():
        sig = by_label.get(label)
        if sig is None:
            continue
        hs = sorted({n.GetIdx() + 1 for a in heavy for n in mol.GetAtomWithIdx(int(a)).GetNeighbors() if n.GetAtomicNum() == 1})
        if hs:
            assigned.append(f"{label}, {sig.shift_ppm:.4f}, " + ", ".join(str(h) for h in hs))
    if assigned:
        out.append(item("NMREDATA_ASSIGNMENT", assigned))
    lines = [f"Larmor={larmor_mhz:.4f}"] if larmor_mhz else []
    for s in signals:
        line = f"{s.shift_ppm:.4f}, L={s.label}"
        if s.n_h is not None:
            line += f", N={s.n_h:.0f}" if abs(s.n_h - round(s.n_h)) < 0.05 else f", N={s.n_h:.2f}"
        if s.range_ppm is not None:
            line += f" ; {s.range_ppm[0]:.4f}-{s.range_ppm[1]:.4f} ppm"
        lines.append(line)
    out.append(item("NMREDATA_1D_1H", lines))
    for tag, text in (notes or {}).items():
        out.append(item(tag, [ln for ln in str(text).splitlines() if ln.strip()] or [""]))
    return "".join(out) + "$$$$\n"


def write_nmredata(path: str | os.PathLike, records: list[str] | tuple[str, ...]) -> Path:
    """Write records made by :func:`format_nmredata` to one ``.nmredata.sdf`` file."""
    p = Path(path)
    p.write_text("".join(records), encoding="utf-8")
    return p
