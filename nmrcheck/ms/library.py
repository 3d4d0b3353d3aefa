"""Dereplication: is a well's compound already known? Look-up of a user's library of known compounds.

The library (CSV with ``smiles`` and optionally ``name``, ``formula``, ``inchikey``,
``genus``, ``family``; a SMILES or SD file; open natural-product collections publish such
exports) is indexed once into SQLite: one row per entry with its Hill formula, charge,
monoisotopic mass (from nmrcheck's isotope table, the same masses the formula engine
uses), the first block of its InChIKey (the skeleton without stereochemistry: entries
sharing it are one compound reported several times) and its taxa. A look-up takes the
neutral mass an MS feature gives for its ion species and returns the known compounds
within tolerance, one per InChIKey block, ranked by taxon match: the organism's genus
first, then its family, then the rest (a compound already reported from related organisms
is the likelier one), and by mass error within each.

Permanently charged molecules (quaternary alkaloids, observed as ``[M]+``) are stored
with their charge and matched only by ions of that kind; neutral entries only by adduct
and protonated ions.
"""

from __future__ import annotations

import collections
import hashlib
import itertools
import logging
import math
import os
import re
import sqlite3
import tempfile
import time
from collections.abc import Iterable, Sequence
from dataclasses import dataclass
from functools import lru_cache
from pathlib import Path

from nmrcheck.chem.adducts import IonSpecies, parse_ion
from nmrcheck.chem.formula import parse_formula
from nmrcheck.errors import FormulaError, InputFileError, ParameterError
from nmrcheck.tolerances import DEFAULT_TOLERANCE_PPM

__all__ = [
    "LibraryInfo",
    "KnownCompound",
    "KnownLookup",
    "KnownCompoundLibrary",
    "index_library",
    "open_library",
    "library_structures",
    "TAXON_RANKS",
]

log = logging.getLogger("nmrcheck")

SCHEMA_VERSION = "1"
TAXON_RANKS = ("genus", "family", "other")
"""Taxon match of a known compound, best first."""
_CHUNK = 2000
_CHARGE = re.compile(r"^(.*?)([+-])(\d*)$")  # 'C20H18NO4+', 'C10H26N2+2' (RDKit's way)


@dataclass(frozen=True)
class LibraryInfo:
    """What indexing a library did.

    Attributes
    ----------
    database : str
        The SQLite file.
    source : str
        The library file indexed.
    entries : int
        Rows stored.
    skipped : int
        Rows left out (no structure, unreadable SMILES, formula disagreeing with the structure).
    problems : tuple of str
        The first few reasons, with their line.
    seconds : float
        Wall time of the indexing (0 when an existing index was reused).
    """

    database: str
    source: str
    entries: int
    skipped: int
    problems: tuple[str, ...]
    seconds: float


@dataclass(frozen=True)
class KnownCompound:
    """One known compound within tolerance of a feature (entries sharing an InChIKey block merged).

    Attributes
    ----------
    name : str
        Name of the first entry (others in ``synonyms``).
    smiles : str
    formula : str
        Hill formula (of the ion itself for a charged molecule).
    charge : int
    monoisotopic_mass : float
        u, neutral-atom basis.
    inchikey_block : str or None
        First 14 characters of the InChIKey.
    error_ppm : float
        (observed neutral mass - library mass) / library mass * 1e6.
    taxon_match : str
        'genus', 'family' or 'other' (:data:`TAXON_RANKS`).
    genera, families : tuple of str
        Taxa the library reports the compound from.
    synonyms : tuple of str
        Names of the other entries merged into this one.
    """

    name: str
    smiles: str
    formula: str
    charge: int
    monoisotopic_mass: float
    inchikey_block: str | None
    error_ppm: float
    taxon_match: str
    genera: tuple[str, ...]
    families: tuple[str, ...]
    synonyms: tuple[str, ...] = ()

    def as_dict(self) -> dict:
        return {
            "name": self.name,
            "smiles": self.smiles,
            "formula": self.formula,
            "charge": self.charge,
            "monoisotopic_mass": round(self.monoisotopic_mass, 6),
            "inchikey_block": self.inchikey_block,
            "error_ppm": round(self.error_ppm, 3),
            "taxon_match": self.taxon_match,
            "genera": list(self.genera),
            "families": list(self.families),
            "synonyms": list(self.synonyms),
        }


@dataclass(frozen=True)
class KnownLookup:
    """Known compounds for one MS feature, best first."""

    mass_window: tuple[float, float]
    """Neutral masses (u) consistent with every ion of the feature."""
    ions: tuple[str, ...]
    ppm: float
    matches: tuple[KnownCompound, ...]

    @property
    def summary(self) -> str:
        """``'known (n candidates)'`` or ``'no known compound at this mass'``."""
        n = len(self.matches)
        if not n:
            return "no known compound at this mass"
        return f"known ({n} candidate{'s' if n != 1 else ''})"

    def as_dict(self) -> dict:
        return {
            "summary": self.summary,
            "mass_window": [round(x, 6) for x in self.mass_window],
            "ions": list(self.ions),
            "ppm": self.ppm,
            "matches": [m.as_dict() for m in self.matches],
        }


# ----------------------------------------------------------------------------- indexing


@lru_cache(maxsize=1 << 17)
def _formula_and_charge(text: str) -> tuple[str, int, float]:
    """(Hill formula, charge, monoisotopic mass) of a formula text such as 'C20H18NO4+' or 'C6H12O6'.

    Cached: a natural-product library repeats its formulas (isomers) many times over.
    """
    text = text.strip()
    charge = 0
    m = _CHARGE.match(text)
    if m is not None and m.group(1):
        text, sign, digits = m.groups()
        charge = (int(digits) if digits else 1) * (1 if sign == "+" else -1)
    f = parse_formula(text)
    return f.hill, charge, f.monoisotopic_mass


_rdkit = None


def _structure_tools():
    """RDKit's SMILES parser, formula and InChIKey functions, imported once per process."""
    global _rdkit
    if _rdkit is None:
        from rdkit import Chem, RDLogger
        from rdkit.Chem import rdinchi
        from rdkit.Chem.rdMolDescriptors import CalcMolFormula

        RDLogger.DisableLog("rdApp.*")
        flags = Chem.SanitizeFlags
        # Only what the formula (implicit hydrogens: valences) and the InChI (Kekule bonds,
        # radicals) depend on; aromaticity, conjugation, hybridisation and RDKit's own stereo
        # perception are left out (InChI perceives its own). The index test and the bench
        # check formulas and key blocks against RDKit's fully sanitised molecule.
        ops = flags.SANITIZE_CLEANUP | flags.SANITIZE_PROPERTIES | flags.SANITIZE_KEKULIZE | flags.SANITIZE_FINDRADICALS
        _rdkit = (Chem, rdinchi, CalcMolFormula, ops)
    return _rdkit


@lru_cache(maxsize=1 << 17)
def structure_formula_and_key(smiles: str) -> tuple[str, str | None] | None:
    """(RDKit formula text, first InChIKey block) of a SMILES; ``None`` when it cannot be read.

    The InChI is made without its stereo layer (``-SNon``): the first key block hashes the
    main layer only (formula, connections, hydrogens), which InChI canonicalises before and
    independently of stereochemistry, so the block is the standard InChIKey's first block
    and the stereo perception is not paid for. Cached by SMILES text: an export with one row per
    compound and organism repeats a structure as often as it was reported.
    """
    Chem, rdinchi, formula_of, ops = _structure_tools()
    mol = Chem.MolFromSmiles(smiles, sanitize=False)
    if mol is None:
        return None
    try:
        Chem.SanitizeMol(mol, ops)
    except Chem.rdchem.MolSanitizeException:  # valence or Kekule structure impossible: unreadable, as RDKit's full parse says
        return None
    key = rdinchi.MolToInchiKey(mol, "-SNon")[:14]
    return formula_of(mol), key or None


def _chemistry(chunk: list[tuple[str, str, str]]) -> list[tuple]:
    """(Hill formula, charge, mass, InChIKey block) per (smiles, formula, inchikey), or (None, reason).

    The fast path (formula and InChIKey given in the file) needs no structure parsing; the
    others go through RDKit. Runs in the worker processes: only text goes in and out.
    """
    out: list[tuple] = []
    for smiles, formula, inchikey in chunk:
        if not smiles:
            out.append((None, "no structure (SMILES) given or readable"))
            continue
        try:
            if formula and inchikey:
                hill, charge, mass = _formula_and_charge(formula)
                key = inchikey.strip().upper()[:14]
            else:
                parsed = structure_formula_and_key(smiles)
                if parsed is None:
                    out.append((None, f"SMILES {smiles[:40]!r} cannot be read"))
                    continue
                hill, charge, mass = _formula_and_charge(parsed[0])
                if formula:
                    given, given_charge, _ = _formula_and_charge(formula)
                    if (given, given_charge) != (hill, charge):
                        out.append((None, f"formula {formula} disagrees with the structure ({hill})"))
                        continue
                key = inchikey.strip().upper()[:14] if inchikey else parsed[1]
        except FormulaError as exc:
            out.append((None, str(exc)))
            continue
        out.append((hill, charge, mass, key))
    return out


def _chunks(rows: Iterable, size: int):
    chunk = []
    for row in rows:
        chunk.append(row)
        if len(chunk) == size:
            yield chunk
            chunk = []
    if chunk:
        yield chunk


def _signature(path: Path) -> str:
    st = path.stat()
    return f"{path.resolve()}|{st.st_size}|{st.st_mtime_ns}"


def usable_cores() -> int:
    """Cores this process may run on."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except AttributeError:  # not on Linux
        return max(1, os.cpu_count() or 1)


def _chemistry_of_chunks(chunks, workers: int):
    """(rows, chemistry) per chunk, in file order; worker processes once there is more than one chunk.

    At most two chunks per worker are in flight, so a large library is streamed, never held
    in memory whole.
    """
    first = next(chunks, None)
    if first is None:
        return
    second = next(chunks, None)
    if workers == 1 or second is None:
        for chunk in itertools.chain((first,), () if second is None else (second,), chunks):
            yield chunk, _chemistry(_payload(chunk))
        return
    import concurrent.futures as cf

    pool = cf.ProcessPoolExecutor(max_workers=workers)
    try:
        pending: collections.deque = collections.deque()
        for chunk in itertools.chain((first, second), chunks):
            pending.append((chunk, pool.submit(_chemistry, _payload(chunk))))
            if len(pending) >= 2 * workers:
                done, future = pending.popleft()
                yield done, future.result()
        while pending:
            done, future = pending.popleft()
            yield done, future.result()
    finally:
        pool.shutdown(wait=True, cancel_futures=True)


def _payload(chunk) -> list[tuple[str, str, str]]:
    """What a worker needs of each row: text only, cheap to send."""
    return [(row.smiles, row.formula, row.inchikey) for row in chunk]


def index_library(source: str | os.PathLike, database: str | os.PathLike, *, workers: int | None = None) -> LibraryInfo:
    """Index a known-compound library file into the SQLite ``database`` (replaced when it exists).

    Parameters
    ----------
    source
        CSV, TSV, SMILES or SD file (see :mod:`nmrcheck.io.known_compounds`).
    database
        SQLite file to write; written to a temporary file beside it first (no journal, no
        waiting for the disk: a failed build is simply thrown away), flushed to disk, then
        moved into place, so a reader never sees half an index.
    workers
        Processes working out formulas and InChIKeys (rows without formula and InChIKey
        columns need RDKit); default every usable core. A library of one chunk
        (2,000 rows) is done in this process.

    Raises
    ------
    InputFileError
        Unreadable source, or one without any usable row.
    """
    from nmrcheck.io.known_compounds import read_known_compounds

    if workers is None:
        workers = usable_cores()
    if not isinstance(workers, int) or isinstance(workers, bool) or workers < 1:
        raise ParameterError(f"workers: a whole number >= 1, got {workers!r}")
    started = time.perf_counter()
    src = Path(source)
    rows = read_known_compounds(src)
    db = Path(database)
    db.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=db.name + ".", suffix=".part", dir=db.parent)
    os.close(fd)
    entries = skipped = 0
    problems: list[str] = []
    stream = _chemistry_of_chunks(_chunks(rows, _CHUNK), workers)
    con = sqlite3.connect(tmp)
    try:
        con.executescript(
            """
            PRAGMA journal_mode = OFF;
            PRAGMA synchronous = OFF;
            PRAGMA locking_mode = EXCLUSIVE;
            CREATE TABLE meta (key TEXT PRIMARY KEY, value TEXT);
            CREATE TABLE compounds (
                id INTEGER PRIMARY KEY, name TEXT NOT NULL, smiles TEXT NOT NULL, formula TEXT NOT NULL,
                charge INTEGER NOT NULL, mass REAL NOT NULL, key14 TEXT, species TEXT, genus TEXT, family TEXT,
                line INTEGER NOT NULL);
            """
        )
        insert = (
            "INSERT INTO compounds (name, smiles, formula, charge, mass, key14, species, genus, family, line) "
            "VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?)"
        )
        for chunk, chemistry in stream:
            good = []
            for row, found in zip(chunk, chemistry):
                if found[0] is None:
                    skipped += 1
                    if len(problems) < 20:
                        problems.append(f"{src.name}: line {row.line}: {found[1]}")
                    continue
                hill, charge, mass, key = found
                good.append((
                    row.name or f"entry at line {row.line}", row.smiles, hill, charge, mass, key,
                    row.species.lower(), row.genus.lower(), row.family.lower(), row.line,
                ))
            con.executemany(insert, good)
            entries += len(good)
        if not entries:
            raise InputFileError(src, "the library holds no usable entry" + (f" ({problems[0]})" if problems else ""))
        con.execute("CREATE INDEX compounds_by_mass ON compounds (charge, mass)")
        con.executemany(
            "INSERT INTO meta VALUES (?, ?)",
            [("schema", SCHEMA_VERSION), ("source", _signature(src)), ("entries", str(entries)), ("skipped", str(skipped))],
        )
        con.commit()
        con.close()
        with open(tmp, "rb+") as fh:  # synchronous=OFF left the pages to the OS: on disk before the rename
            os.fsync(fh.fileno())
        os.replace(tmp, db)
    finally:
        stream.close()  # stops the worker processes of a build that failed half way
        con.close()
        if os.path.exists(tmp):
            os.unlink(tmp)
    seconds = time.perf_counter() - started
    log.info("library %s: %d entries indexed into %s in %.1f s (%d skipped, %d workers)", src, entries, db, seconds, skipped, workers)
    return LibraryInfo(str(db), str(src), entries, skipped, tuple(problems), seconds)


def _meta(database: Path) -> dict[str, str]:
    try:
        con = sqlite3.connect(f"file:{database}?mode=ro", uri=True)
        try:
            return dict(con.execute("SELECT key, value FROM meta").fetchall())
        finally:
            con.close()
    except sqlite3.Error:
        return {}


def default_cache_dir() -> Path:
    """Per-user cache folder for library indexes (:func:`nmrcheck.cache.user_cache_dir`; a temporary folder when disabled)."""
    from nmrcheck.cache import user_cache_dir

    return user_cache_dir("libraries") or Path(tempfile.gettempdir()) / "nmrcheck-libraries"


def open_library(path: str | os.PathLike, *, cache_dir: str | os.PathLike | None = None, workers: int | None = None) -> LibraryInfo:
    """The index of a library, building it when needed.

    ``path`` is either an index (``.sqlite``/``.db``) or a library file; a library file is
    indexed into ``cache_dir`` (default :func:`default_cache_dir`) under a name made from
    its absolute path, and that index is reused while the file keeps its size and time.
    """
    p = Path(path)
    if p.suffix.lower() in (".sqlite", ".db"):
        meta = _meta(p)
        if meta.get("schema") != SCHEMA_VERSION:
            raise InputFileError(p, "not a known-compound index made by this version of nmrcheck; index the library file again")
        return LibraryInfo(str(p), meta.get("source", "").split("|")[0], int(meta["entries"]), int(meta.get("skipped", 0)), (), 0.0)
    if not p.is_file():
        raise InputFileError(p, "no such library file")
    folder = Path(cache_dir) if cache_dir is not None else default_cache_dir()
    digest = hashlib.sha256(str(p.resolve()).encode()).hexdigest()[:12]
    db = folder / f"{p.stem}-{digest}.sqlite"
    meta = _meta(db) if db.exists() else {}
    if meta.get("schema") == SCHEMA_VERSION and meta.get("source") == _signature(p):
        return LibraryInfo(str(db), str(p), int(meta["entries"]), int(meta.get("skipped", 0)), (), 0.0)
    return index_library(p, db, workers=workers)


# ----------------------------------------------------------------------------- look-up


class KnownCompoundLibrary:
    """Read-only look-ups in an indexed library.

    Parameters
    ----------
    database
        SQLite index made by :func:`index_library` (or :func:`open_library`).
    """

    def __init__(self, database: str | os.PathLike) -> None:
        self.database = Path(database)
        if _meta(self.database).get("schema") != SCHEMA_VERSION:
            raise InputFileError(self.database, "not a known-compound index made by this version of nmrcheck")
        self._con = sqlite3.connect(f"file:{self.database}?mode=ro", uri=True, check_same_thread=False)

    def close(self) -> None:
        self._con.close()

    def __enter__(self) -> KnownCompoundLibrary:
        return self

    def __exit__(self, *exc) -> None:
        self.close()

    def __len__(self) -> int:
        return int(self._con.execute("SELECT COUNT(*) FROM compounds").fetchone()[0])

    def lookup(
        self,
        features: Sequence[tuple[float, str]],
        *,
        ppm: float = DEFAULT_TOLERANCE_PPM,
        genus: str | None = None,
        family: str | None = None,
        max_matches: int = 50,
    ) -> KnownLookup:
        """Known compounds whose mass fits every ion of one MS feature within ``ppm``.

        Parameters
        ----------
        features : sequence of (float, str)
            Observed m/z and ion species (``[(337.1302, '[M+H]+')]``); ``[M]+`` for a
            permanently charged molecule.
        ppm : float
            Mass tolerance per ion.
        genus, family : str, optional
            The organism's taxa, for the ranking (case is ignored).
        max_matches : int
            Compounds returned at most (after merging by InChIKey block).
        """
        if not isinstance(ppm, (int, float)) or not 0 < ppm <= 100:
            raise ParameterError(f"ppm: mass tolerance must be in (0, 100], got {ppm!r}")
        parsed: list[tuple[float, IonSpecies]] = []
        for mz, ion in features:
            species = ion if isinstance(ion, IonSpecies) else parse_ion(ion)
            parsed.append((float(mz), species))
        if not parsed:
            raise ParameterError("features: no m/z given")
        charges = {s.charge if s.intrinsic else 0 for _, s in parsed}
        if len(charges) > 1:
            raise ParameterError("features: a permanently charged molecule ([M]+) cannot be combined with other ions")
        charge = charges.pop()
        low, high = -math.inf, math.inf
        for mz, s in parsed:
            tol = ppm * 1e-6 * mz
            z, n = abs(s.charge), s.molecules
            low = max(low, ((mz - tol) * z - s.mass_shift) / n)
            high = min(high, ((mz + tol) * z - s.mass_shift) / n)
        ions = tuple(s.notation for _, s in parsed)
        if low > high:
            return KnownLookup((low, high), ions, float(ppm), ())
        centre = (low + high) / 2
        rows = self._con.execute(
            "SELECT name, smiles, formula, charge, mass, key14, genus, family FROM compounds "
            "WHERE charge = ? AND mass BETWEEN ? AND ? ORDER BY id",
            (charge, low, high),
        ).fetchall()
        genus_l = genus.strip().lower() if genus else None
        family_l = family.strip().lower() if family else None
        groups: dict[str, list[tuple]] = {}
        for row in rows:
            groups.setdefault(row[5] or f"smiles:{row[1]}", []).append(row)
        matches = []
        for members in groups.values():
            name, smiles, formula, chg, mass, key, _, _ = members[0]
            genera = tuple(sorted({m[6] for m in members if m[6]}))
            families = tuple(sorted({m[7] for m in members if m[7]}))
            if genus_l and genus_l in genera:
                taxon = "genus"
            elif family_l and family_l in families:
                taxon = "family"
            else:
                taxon = "other"
            synonyms = tuple(dict.fromkeys(m[0] for m in members[1:] if m[0] != name))
            matches.append(
                KnownCompound(
                    name=name, smiles=smiles, formula=formula, charge=chg, monoisotopic_mass=mass, inchikey_block=key,
                    error_ppm=(centre - mass) / mass * 1e6, taxon_match=taxon, genera=genera, families=families,
                    synonyms=synonyms,
                )
            )
        matches.sort(key=lambda m: (TAXON_RANKS.index(m.taxon_match), abs(m.error_ppm), m.name))
        return KnownLookup((low, high), ions, float(ppm), tuple(matches[:max_matches]))


@lru_cache(maxsize=4)
def library_at(database: str) -> KnownCompoundLibrary:
    """One open library per index file and process (plate workers look up many wells)."""
    return KnownCompoundLibrary(database)


def library_structures(lookup: KnownLookup) -> tuple[tuple[str, str], ...]:
    """The matches as (label, SMILES) candidate structures for the validator, best first.

    The label names the compound and where it is known from, e.g.
    ``'noctulide A (known; genus Calyxia)'``.
    """
    out = []
    for m in lookup.matches:
        where = {"genus": "genus", "family": "family", "other": "other taxa"}[m.taxon_match]
        taxa = {"genus": ", ".join(m.genera), "family": ", ".join(m.families), "other": ", ".join(m.genera)}[m.taxon_match]
        label = f"{m.name} (known; {where}{' ' + taxa if taxa else ''})"
        out.append((label, m.smiles))
    return tuple(out)
