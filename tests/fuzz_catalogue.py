"""Bad inputs made from good recordings, each with what must happen to it (shared by the fuzz tests and bench/fuzz_inputs.py).

Each entry corrupts a copy of a recording (a synthetic one written by code, or a copy of a
shared real one) the way files go wrong on a plate: a header field edited to nonsense,
a file cut off or padded with junk, a data block emptied. ``expect`` is ``"refuse"`` (a
one-line error naming the file and, where there is one, the field) or ``"accept"`` (a fault
that must not stop the recording, e.g. a stray byte in a comment; the result must match the
clean recording's). ``kind`` is the failure class the issue lists for it: traceback, hang,
memory or silently wrong; ``tolerance`` for faults that must be accepted.
"""

from __future__ import annotations

import os
import re
import shutil
import signal
from dataclasses import dataclass
from pathlib import Path
from typing import Callable

import numpy as np

# ----------------------------------------------------------------------------- recordings

# An invented spin system in CDCl3 with TMS; residual CHCl3 at 7.26 ppm (Gottlieb 1997, from memory).
LINES_SPEC = ((7.26, 0.05, 0.8, ()), (6.90, 2.0, 1.0, (8.5,)), (3.80, 3.0, 1.0, ()), (1.25, 6.0, 1.0, (7.0,)), (0.0, 0.5, 0.8, ()))


def synthetic_fid(points: int = 4000, group_delay: float = 67.98):
    from nmrcheck.synth import Line, simulate_fid

    lines = [Line(p, h, w, j) for p, h, w, j in LINES_SPEC]
    return simulate_fid(lines, points=points, noise=0.0005, spectrometer_mhz=500.13, sweep_width_hz=6000.0,
                        carrier_ppm=4.7, p0_deg=20.0, group_delay_points=group_delay)


def write_synthetic_bruker(directory: Path, points: int = 4000) -> Path:
    from nmrcheck.io.writers import write_bruker_fid

    return write_bruker_fid(synthetic_fid(points), directory)


def write_synthetic_jcamp(path: Path, *, vendor_labels: bool = False) -> Path:
    from nmrcheck.io.writers import jcamp_fid_text

    path.write_text(jcamp_fid_text(synthetic_fid(group_delay=0.0 if not vendor_labels else 67.98), vendor_labels=vendor_labels))
    return path


def write_synthetic_varian(directory: Path, points: int = 4000) -> Path:
    """A Varian/Agilent folder (procpar + fid) written with nmrglue's own writer from the synthetic FID."""
    import copy

    import nmrglue as ng

    fid = synthetic_fid(points, group_delay=0.0)
    acq = fid.acquisition
    udic = ng.fileio.fileiobase.create_blank_udic(1)
    udic[0].update(size=points, complex=True, sw=acq.sweep_width_hz, obs=acq.spectrometer_mhz, car=0.0, label="H1", time=True, freq=False)
    dic = ng.varian.create_dic(udic)
    template = dic["procpar"]["np"]
    for name, value, text in [("sfrq", acq.spectrometer_mhz, False), ("sw", acq.sweep_width_hz, False), ("tof", acq.carrier_ppm * acq.spectrometer_mhz, False),
                              ("nt", 16, False), ("gain", 30, False), ("pw", 9.5, False), ("temp", 25.0, False), ("d1", 2.0, False),
                              ("tn", "H1", True), ("solvent", "CDCl3", True), ("seqfil", "s2pul", True)]:
        entry = copy.deepcopy(template)
        entry.update(name=name, values=[str(value)])
        if text:
            entry.update(basictype="2", subtype="1")
        dic["procpar"][name] = entry
    # Varian's quadrature sense is the opposite of the synthetic (Bruker-like) FID's; the reader conjugates.
    ng.varian.write(str(directory), dic, np.conj(fid.data).astype(np.complex64), overwrite=True)
    return directory


# ----------------------------------------------------------------------------- mutations


def _acqus(d: Path) -> Path:
    return d / "acqus"


def set_param(d: Path, key: str, value: str, name: str = "acqus") -> None:
    p = d / name
    text = p.read_bytes().decode("latin-1")
    new, n = re.subn(rf"^##\${re.escape(key)}=[^\n]*$", f"##${key}= {value}", text, flags=re.MULTILINE)
    assert n == 1, f"{key} not in {p}"
    p.write_bytes(new.encode("latin-1"))


def drop_param(d: Path, key: str, name: str = "acqus") -> None:
    p = d / name
    text = p.read_bytes().decode("latin-1")
    new, n = re.subn(rf"^##\${re.escape(key)}=[^\n]*\n", "", text, flags=re.MULTILINE)
    assert n == 1, f"{key} not in {p}"
    p.write_bytes(new.encode("latin-1"))


def _param(key: str, value: str, name: str = "acqus"):
    def mutate(d: Path) -> Path:
        set_param(d, key, value, name)
        return d

    return mutate


def _drop(key: str):
    def mutate(d: Path) -> Path:
        drop_param(d, key)
        return d

    return mutate


def _both(*mutations):
    def mutate(d: Path) -> Path:
        for m in mutations:
            m(d)
        return d

    return mutate


def _cut_acqus_inside(marker: str, next_line: bool = False):
    """Cut acqus 2 bytes after ``marker`` (inside a <...> string), or 5 bytes into the line after it (inside an array)."""

    def mutate(d: Path) -> Path:
        raw = _acqus(d).read_bytes()
        i = raw.index(marker.encode()) + len(marker) + (0 if next_line else 2)
        if next_line:
            i = raw.index(b"\n", i) + 6
        _acqus(d).write_bytes(raw[:i])
        return d

    return mutate


def _acqus_bytes(transform: Callable[[bytes], bytes]):
    def mutate(d: Path) -> Path:
        _acqus(d).write_bytes(transform(_acqus(d).read_bytes()))
        return d

    return mutate


def _fid_bytes(transform: Callable[[bytes], bytes]):
    def mutate(d: Path) -> Path:
        f = d / "fid"
        f.write_bytes(transform(f.read_bytes()))
        return d

    return mutate


def _float_fid_with(value: float):
    """The fid as 64-bit floats (DTYPA=2, converted from 32-bit integers if need be) with one point set to ``value``."""

    def mutate(d: Path) -> Path:
        acqus = (d / "acqus").read_bytes()
        ints = re.search(rb"##\$DTYPA= 0", acqus) is not None
        big = re.search(rb"##\$BYTORDA= 1", acqus) is not None
        raw = (d / "fid").read_bytes()
        a = np.frombuffer(raw, dtype=(">" if big else "<") + ("i4" if ints else "f8")).astype("<f8")
        a[len(a) // 3] = value
        (d / "fid").write_bytes(a.tobytes())
        set_param(d, "DTYPA", "2")
        set_param(d, "BYTORDA", "0")
        return d

    return mutate


def _replace_with(name: str, kind: str):
    """Replace file ``name`` by a FIFO or a folder of the same name."""

    def mutate(d: Path) -> Path:
        target = d / name
        target.unlink()
        os.mkfifo(target) if kind == "fifo" else target.mkdir()
        return d

    return mutate


def _comment_byte(raw: bytes) -> bytes:
    # A Windows-1252 umlaut typed into a comment line and into the title of the parameter file.
    return raw.replace(b"\n", b"\n$$ Probenkopf gew\xe4hlt\n", 1)


def _pad(data: bytes, block: int = 1024, fill: bytes = b"\0") -> bytes:
    extra = (-len(data)) % block
    return data + fill * extra


@dataclass(frozen=True)
class BadInput:
    name: str
    kind: str
    expect: str
    mutate: Callable[[Path], Path]
    fragment: str = ""
    """Text the refusal must contain (the field or the problem); alternatives separated by '|'."""
    synthetic_only: bool = False
    """Meaningful only on the synthetic recordings (e.g. needs AFFN lines or a fid that does not fill its last block)."""


# Faults of a Bruker experiment directory (acqus + fid). The synthetic directory is written with
# float64 points (DTYPA=2), GRPDLY set, DECIM=16, DSPFVS=20.
BRUKER: tuple[BadInput, ...] = (
    BadInput("SFO1=-1", "traceback", "refuse", _param("SFO1", "-1"), "SFO1"),
    BadInput("SW_h=-5000", "traceback", "refuse", _param("SW_h", "-5000"), "SW_h"),
    BadInput("TD=inf", "traceback", "refuse", _param("TD", "inf"), "TD"),
    BadInput("TD=1e308", "memory", "refuse", _param("TD", "1e308"), "TD"),
    BadInput("TD=text", "traceback", "refuse", _param("TD", "<many>"), "TD"),
    BadInput("TD=odd", "traceback", "refuse", _param("TD", "8191"), "TD"),
    BadInput("TD=half", "silently wrong", "refuse", lambda d: (set_param(d, "TD", str(int(re.search(rb"##\$TD= (\d+)", (d / "acqus").read_bytes()).group(1)) // 2)), d)[1], "junk appended"),
    BadInput("DTYPA=inf", "traceback", "refuse", _param("DTYPA", "inf"), "DTYPA"),
    BadInput("DTYPA=1e308", "traceback", "refuse", _param("DTYPA", "1e308"), "DTYPA"),
    BadInput("DTYPA=7", "traceback", "refuse", _param("DTYPA", "7"), "DTYPA"),
    BadInput("BYTORDA=5", "traceback", "refuse", _param("BYTORDA", "5"), "BYTORDA"),
    BadInput("GRPDLY=inf", "traceback", "refuse", _param("GRPDLY", "inf"), "GRPDLY"),
    BadInput("GRPDLY=1e308", "traceback", "refuse", _param("GRPDLY", "1e308"), "GRPDLY"),
    BadInput("GRPDLY=-7", "silently wrong", "refuse", _param("GRPDLY", "-7"), "GRPDLY"),
    BadInput("SFO1=nan", "traceback", "refuse", _param("SFO1", "nan"), "SFO1"),
    BadInput("SW_h=nan", "traceback", "refuse", _param("SW_h", "nan"), "SW_h"),
    BadInput("O1=nan", "traceback", "refuse", _param("O1", "nan"), "O1"),
    BadInput("SW_h=1e9", "silently wrong", "refuse", _param("SW_h", "1e9"), "SW_h"),
    BadInput("SW_h=0.01", "silently wrong", "refuse", _param("SW_h", "0.01"), "SW_h"),
    BadInput("SFO1=5e6", "silently wrong", "refuse", _param("SFO1", "5000000"), "SFO1"),
    BadInput("SFO1=1e-3", "silently wrong", "refuse", _param("SFO1", "0.001"), "SFO1"),
    BadInput("BF1=99999999999", "memory", "refuse", _param("BF1", "99999999999"), "BF1"),
    BadInput("BF1=0", "silently wrong", "refuse", _param("BF1", "0"), "BF1"),
    BadInput("BF1=text", "silently wrong", "refuse", _param("BF1", "<abc>"), "BF1"),
    BadInput("BF1 off by 1 %", "silently wrong", "refuse", lambda d: (set_param(d, "BF1", "505.0"), d)[1], "BF1"),
    BadInput("BF1 and O1 missing", "silently wrong", "refuse", _both(_drop("BF1"), _drop("O1")), "BF1"),
    BadInput("GRPDLY=-1, DECIM text", "silently wrong", "refuse", _both(_param("GRPDLY", "-1"), _param("DECIM", "<x>")), "DECIM"),
    BadInput("GRPDLY=-1, DSPFVS text", "silently wrong", "refuse", _both(_param("GRPDLY", "-1"), _param("DSPFVS", "<x>")), "DSPFVS"),
    BadInput("GRPDLY=-1, DECIM missing", "silently wrong", "refuse", _both(_param("GRPDLY", "-1"), _drop("DECIM")), "DECIM"),
    BadInput("GRPDLY=-1, DECIM=nan", "silently wrong", "refuse", _both(_param("GRPDLY", "-1"), _param("DECIM", "nan")), "DECIM"),
    BadInput("GRPDLY text", "silently wrong", "refuse", _param("GRPDLY", "<x>"), "GRPDLY"),
    BadInput("acqus cut inside <...>", "hang", "refuse", _cut_acqus_inside("##$PULPROG= <"), "PULPROG"),
    BadInput("acqus cut inside an array", "hang", "refuse", _cut_acqus_inside("##$P= (0..63)", next_line=True), "$P"),
    BadInput("array of 10^9 items", "memory", "refuse", _acqus_bytes(lambda r: r.replace(b"##$P= (0..63)", b"##$P= (0..999999999)")), "array"),
    BadInput("acqus empty", "traceback", "refuse", _acqus_bytes(lambda r: b""), "empty"),
    BadInput("acqus binary junk", "traceback", "refuse", _acqus_bytes(lambda r: bytes(range(256)) * 8), "missing"),
    BadInput("acqus is a FIFO", "hang", "refuse", _replace_with("acqus", "fifo"), "FIFO"),
    BadInput("fid is a FIFO", "hang", "refuse", _replace_with("fid", "fifo"), "FIFO"),
    BadInput("fid is a folder", "traceback", "refuse", _replace_with("fid", "folder"), "directory"),
    BadInput("fid of zero bytes", "traceback", "refuse", _fid_bytes(lambda r: b""), "empty"),
    BadInput("fid of one repeated word", "traceback", "refuse", _fid_bytes(lambda r: b"\x01\x02\x03\x04" * (len(r) // 4)), "repeated"),
    BadInput("fid of 0xFF bytes", "silently wrong", "refuse", _fid_bytes(lambda r: b"\xff" * len(r)), "fid"),
    BadInput("fid of a repeated 32-byte pattern", "silently wrong", "refuse", _fid_bytes(lambda r: (bytes(range(7, 39)) * (len(r) // 32 + 1))[: len(r)]), "distinct values"),
    BadInput("fid of zeros", "traceback", "refuse", _fid_bytes(lambda r: bytes(len(r))), "only zeros"),
    BadInput("NaN in the fid", "traceback", "refuse", _float_fid_with(float("nan")), "not finite"),
    BadInput("inf in the fid", "traceback", "refuse", _float_fid_with(float("inf")), "not finite"),
    BadInput("1000 junk bytes appended", "silently wrong", "refuse", _fid_bytes(lambda r: r + os.urandom(1000)), "junk"),
    BadInput("fid cut to a third", "traceback", "refuse", _fid_bytes(lambda r: r[: len(r) // 3]), "truncated"),
    BadInput("padding that is not zeros", "silently wrong", "refuse", _fid_bytes(lambda r: _pad(r + b"\0" * 8, fill=b"\x07")), "padding|junk"),
    BadInput("NS=nan", "tolerance", "accept", _param("NS", "nan")),
    BadInput("RG=-5", "tolerance", "accept", _param("RG", "-5")),
    BadInput("non-UTF-8 byte in a comment", "tolerance", "accept", _acqus_bytes(_comment_byte)),
    BadInput("non-UTF-8 byte in the title", "tolerance", "accept", _acqus_bytes(lambda r: r.replace(b"##TITLE=", b"##TITLE= Messung \xfc", 1))),
    BadInput("BF1 missing (O1 present)", "tolerance", "accept", _drop("BF1")),
    BadInput("documented 1024-byte block padding", "tolerance", "accept", _fid_bytes(_pad), synthetic_only=True),
)


def _pdata(mutation):
    def mutate(d: Path) -> Path:
        mutation(d / "pdata" / "1")
        return d / "pdata" / "1"

    return mutate


def _file_bytes(name: str, transform: Callable[[bytes], bytes]):
    def mutate(d: Path) -> Path:
        (d / name).write_bytes(transform((d / name).read_bytes()))
        return d

    return mutate


# Faults of a processed-data folder (pdata/1: 1r, 1i, procs); the path given is the experiment.
PDATA: tuple[BadInput, ...] = (
    BadInput("empty 1r", "traceback", "refuse", _pdata(_file_bytes("1r", lambda r: b"")), "empty"),
    BadInput("1r with junk appended", "silently wrong", "refuse", _pdata(_file_bytes("1r", lambda r: r + b"junk" * 10)), "junk"),
    BadInput("OFFSET=nan", "traceback", "refuse", _pdata(_param("OFFSET", "nan", "procs")), "OFFSET"),
    BadInput("SF=nan", "traceback", "refuse", _pdata(_param("SF", "nan", "procs")), "SF"),
    BadInput("SI=1e308", "memory", "refuse", _pdata(_param("SI", "1e308", "procs")), "SI"),
    BadInput("SW_p=-1", "traceback", "refuse", _pdata(_param("SW_p", "-1", "procs")), "SW_p"),
    BadInput("SF 10 % off BF1", "silently wrong", "refuse", _pdata(_param("SF", "540.2", "procs")), "SF"),
    BadInput("procs cut inside <...>", "hang", "refuse", _pdata(lambda d: (d / "procs").write_bytes((d / "procs").read_bytes().split(b"##$AUNMP= <")[0] + b"##$AUNMP= <pro")), "AUNMP"),
    BadInput("1r of zeros", "traceback", "refuse", _pdata(_file_bytes("1r", lambda r: bytes(len(r)))), "zeros"),
)


def _procpar_value(name: str, value: str):
    def mutate(d: Path) -> Path:
        p = d / "procpar"
        text = p.read_bytes().decode("latin-1")
        new, n = re.subn(rf"^({re.escape(name)} [^\n]*\n)\d+ [^\n]*", lambda m: m.group(1) + value, text, count=1, flags=re.MULTILINE)
        assert n == 1, name
        p.write_bytes(new.encode("latin-1"))
        return d

    return mutate


def _procpar_bytes(transform: Callable[[bytes], bytes]):
    def mutate(d: Path) -> Path:
        (d / "procpar").write_bytes(transform((d / "procpar").read_bytes()))
        return d

    return mutate


def _varian_header(index: int, value: int):
    """Set one of the six 32-bit fields of the Varian fid file header (0 blocks, 1 traces, 2 values, 3 bytes per value ...)."""

    def transform(raw: bytes) -> bytes:
        return raw[: 4 * index] + int(value).to_bytes(4, "big", signed=True) + raw[4 * index + 4 :]

    return _fid_bytes(transform)


# Faults of a Varian/Agilent folder (procpar + fid).
VARIAN: tuple[BadInput, ...] = (
    BadInput("sfrq=nan", "traceback", "refuse", _procpar_value("sfrq", "1 nan"), "sfrq"),
    BadInput("sw=-5000", "traceback", "refuse", _procpar_value("sw", "1 -5000"), "sw"),
    BadInput("sw=1e12", "silently wrong", "refuse", _procpar_value("sw", "1 1e12"), "sw"),
    BadInput("procpar cut inside a string", "hang", "refuse", _procpar_bytes(lambda r: r[: r.index(b'"s2pul') + 3]), "string|ends"),
    BadInput("procpar announces 10^9 values", "memory", "refuse", _procpar_value("seqfil", '1000000000 "s2pul"'), "values"),
    BadInput("procpar empty", "traceback", "refuse", _procpar_bytes(lambda r: b""), "no parameters"),
    BadInput("procpar is a FIFO", "hang", "refuse", _replace_with("procpar", "fifo"), "FIFO"),
    BadInput("fid of zero bytes", "traceback", "refuse", _fid_bytes(lambda r: b""), "header"),
    BadInput("fid cut to a third", "traceback", "refuse", _fid_bytes(lambda r: r[: len(r) // 3]), "truncated"),
    BadInput("1000 junk bytes appended", "silently wrong", "refuse", _fid_bytes(lambda r: r + os.urandom(1000)), "junk"),
    BadInput("header announces 10^9 values", "memory", "refuse", _varian_header(2, 10**9), "header"),
    BadInput("header announces 7 blocks", "silently wrong", "refuse", _varian_header(0, 7), "FIDs|header"),
    BadInput("fid data all zeros", "traceback", "refuse", _fid_bytes(lambda r: r[:60] + bytes(len(r) - 60)), "only zeros"),
    BadInput("non-UTF-8 byte in a string value", "tolerance", "accept", _procpar_bytes(lambda r: r.replace(b'"s2pul"', b'"s2pul\xe4"'))),
)


# ----------------------------------------------------------------------------- JCAMP-DX faults (on the text)


def _text_of(p: Path) -> str:
    return p.read_bytes().decode("latin-1")


def _write_text(p: Path, text: str) -> None:
    p.write_bytes(text.encode("latin-1"))


def _jtext(transform: Callable[[str], str]):
    def mutate(p: Path) -> Path:
        _write_text(p, transform(_text_of(p)))
        return p

    return mutate


def _data_line_indices(lines: list[str]) -> list[list[int]]:
    """Indices of the data lines of each table, in order."""
    tables: list[list[int]] = []
    inside = False
    for i, line in enumerate(lines):
        s = line.strip()
        if s.startswith("##"):
            inside = s.upper().replace(" ", "").startswith(("##DATATABLE=", "##XYDATA="))
            if inside:
                tables.append([])
            continue
        if inside and s and not s.startswith("$$"):
            tables[-1].append(i)
    return tables


def _drop_data_line(which: str):
    """Remove the 20th data line of the first table ("one"), of every table ("all"), or repeat it ("repeat")."""

    def transform(text: str) -> str:
        lines = text.split("\n")
        tables = _data_line_indices(lines)
        targets = [t[20] for t in (tables if which == "all" else tables[:1])]
        if which == "repeat":
            lines.insert(targets[0], lines[targets[0]])
            return "\n".join(lines)
        return "\n".join(line for i, line in enumerate(lines) if i not in targets)

    return _jtext(transform)


def _junk_in_data_line(text: str) -> str:
    lines = text.split("\n")
    i = _data_line_indices(lines)[0][10]
    lines[i] = lines[i][: len(lines[i]) // 2] + "~?" + lines[i][len(lines[i]) // 2 :]
    return "\n".join(lines)


def _sub(pattern: str, replacement: str):
    def transform(text: str) -> str:
        new, n = re.subn(pattern, replacement, text, count=1, flags=re.MULTILINE)
        assert n == 1, pattern
        return new

    return _jtext(transform)


def _fifo_named_dx(p: Path) -> Path:
    fifo = p.with_name("x.dx")
    os.mkfifo(fifo)
    return fifo


def _only_13c_link(p: Path) -> Path:
    from nmrcheck.io.writers import jcamp_link_text

    text = _text_of(p).replace("^1H", "^13C")
    _write_text(p, jcamp_link_text([text, text]))
    return p


def _link_with_13c(p: Path) -> Path:
    from nmrcheck.io.writers import jcamp_link_text

    text = _text_of(p)
    _write_text(p, jcamp_link_text([text.replace("^1H", "^13C"), text]))
    return p


def _zeros_in_affn(text: str) -> str:
    lines = text.split("\n")
    for table in _data_line_indices(lines):
        for i in table:
            x, *ys = lines[i].split()
            lines[i] = " ".join([x] + ["0"] * len(ys))
    return "\n".join(lines)


JCAMP: tuple[BadInput, ...] = (
    BadInput("DATA TYPE= NMR SPECTRUM over FID data", "silently wrong", "refuse", _sub(r"^##DATA TYPE=\s*NMR FID", "##DATA TYPE= NMR SPECTRUM"), "FID"),
    BadInput("a data line missing from both pages", "silently wrong", "refuse", _drop_data_line("all"), "line"),
    BadInput("a data line missing from one page", "silently wrong", "refuse", _drop_data_line("one"), "line"),
    BadInput("a data line repeated", "silently wrong", "refuse", _drop_data_line("repeat"), "line"),
    BadInput("junk characters in a data line", "traceback", "refuse", _jtext(_junk_in_data_line), "line"),
    BadInput("file cut at 60 %", "traceback", "refuse", _jtext(lambda t: t[: int(len(t) * 0.6)]), ""),
    BadInput("FACTOR of R = nan", "traceback", "refuse", _sub(r"^(##FACTOR=\s*[^,]+),\s*[^,]+", r"\1, nan"), "FACTOR"),
    BadInput("VAR_DIM too large", "silently wrong", "refuse", _sub(r"^##VAR_DIM=\s*(\d+),\s*(\d+)", r"##VAR_DIM= \1, 9999"), "points"),
    BadInput(".OBSERVE FREQUENCY = nan", "traceback", "refuse", _both(_sub(r"^##\.OBSERVE FREQUENCY=.*$", "##.OBSERVE FREQUENCY= nan"), _jtext(lambda t: re.sub(r"^##\$SFO1=.*\n", "", t, flags=re.MULTILINE))), "SFO1"),
    BadInput(".OBSERVE FREQUENCY = 1e12", "silently wrong", "refuse", _both(_sub(r"^##\.OBSERVE FREQUENCY=.*$", "##.OBSERVE FREQUENCY= 1e12"), _jtext(lambda t: re.sub(r"^##\$SFO1=.*\n", "", t, flags=re.MULTILINE))), "SFO1"),
    BadInput("all data zeros", "traceback", "refuse", _jtext(_zeros_in_affn), "zeros", synthetic_only=True),
    BadInput("empty file", "traceback", "refuse", _jtext(lambda t: ""), ""),
    BadInput("binary junk", "traceback", "refuse", lambda p: (p.write_bytes(bytes(range(256)) * 16), p)[1], "unknown format"),
    BadInput("FIFO named x.dx", "hang", "refuse", _fifo_named_dx, "FIFO"),
    BadInput("compound file without a 1H block", "traceback", "refuse", _only_13c_link, "no"),
    BadInput("non-UTF-8 byte in a comment", "tolerance", "accept", _jtext(lambda t: t.replace("\n", "\n$$ Kommentar \xe4\xff\n", 1))),
    BadInput("compound file with a 13C block first", "tolerance", "accept", _link_with_13c),
)

#: Faults only meaningful for a file carrying the vendor labels (written with vendor_labels=True, or a real export).
JCAMP_VENDOR: tuple[BadInput, ...] = (
    BadInput("$SW_h disagrees with the time axis", "silently wrong", "refuse", _sub(r"^##\$SW_h=.*$", "##$SW_h= 1234.5"), "SW_h"),
    BadInput("$GRPDLY=-1 and $DECIM text", "silently wrong", "refuse", _both(_sub(r"^##\$GRPDLY=.*$", "##$GRPDLY= -1"), _sub(r"^##\$DECIM=.*$", "##$DECIM= <x>")), "DECIM"),
    BadInput("$SFO1 = -1", "traceback", "refuse", _sub(r"^##\$SFO1=.*$", "##$SFO1= -1"), "SFO1"),
    BadInput("$BF1 = 99999999999", "memory", "refuse", _sub(r"^##\$BF1=.*$", "##$BF1= 99999999999"), "BF1"),
)


# ----------------------------------------------------------------------------- running one case


class _Timeout(Exception):
    pass


def run_case(path: Path, *, seconds: float = 30.0):
    """Process ``path`` in this process under a time limit: ("refused", message), ("done", Processed), ("traceback", text) or ("hang", "")."""
    from nmrcheck.errors import NmrcheckError
    from nmrcheck.processing import process

    def alarm(signum, frame):
        raise _Timeout()

    old = signal.signal(signal.SIGALRM, alarm)
    signal.setitimer(signal.ITIMER_REAL, seconds)
    try:
        return "done", process(path)
    except NmrcheckError as exc:
        return "refused", str(exc)
    except _Timeout:
        return "hang", ""
    except Exception as exc:  # noqa: BLE001 - the outcome being measured
        return "traceback", f"{type(exc).__name__}: {exc}"
    finally:
        signal.setitimer(signal.ITIMER_REAL, 0)
        signal.signal(signal.SIGALRM, old)


def same_result(a, b) -> bool:
    """Two processed results agree: same counted regions (within 0.01 ppm) and the same proton total."""
    ra = [(round(r.start_ppm, 2), round(r.end_ppm, 2)) for r in a.regions if r.counted]
    rb = [(round(r.start_ppm, 2), round(r.end_ppm, 2)) for r in b.regions if r.counted]
    if len(ra) != len(rb) or any(abs(x - y) > 0.011 for pa, pb in zip(ra, rb) for x, y in zip(pa, pb)):
        return False
    ta = a.count.total_h if a.count is not None else None
    tb = b.count.total_h if b.count is not None else None
    return ta == tb or (ta is not None and tb is not None and abs(ta - tb) < 0.05)


def judge(case: BadInput, path: Path, clean) -> tuple[str, str]:
    """(verdict, detail): verdict "ok", "traceback", "hang", "silently wrong" or "bad message"."""
    status, detail = run_case(path)
    if status in ("traceback", "hang"):
        return status, str(detail)
    if case.expect == "refuse":
        if status == "done":
            return "silently wrong", f"accepted ({len(detail.warnings)} warnings)"
        message = str(detail)
        named = any(f.lower() in message.lower() for f in case.fragment.split("|"))
        if "\n" in message or not named or not message.strip():
            return "bad message", message
        return "ok", message
    if status == "refused":
        return "silently wrong", f"refused a tolerable fault: {detail}"
    if not same_result(detail, clean):
        return "silently wrong", "result differs from the clean recording's"
    return "ok", "accepted, same result"


def processed_cleanly(paths: dict[str, Path]) -> dict:
    """The processed result of each clean recording (they must process without error)."""
    clean = {}
    for key, path in paths.items():
        status, result = run_case(path)
        assert status == "done", result
        clean[key] = result
    return clean


def copy_recording(src: Path, dst: Path, *, with_pdata: bool = False) -> Path:
    if src.is_dir():
        shutil.copytree(src, dst, ignore=shutil.ignore_patterns("*.png") if with_pdata else shutil.ignore_patterns("pdata", "*.png"))
        return dst
    dst.mkdir(parents=True, exist_ok=True)
    target = dst / src.name
    shutil.copyfile(src, target)
    return target


# ----------------------------------------------------------------------------- options of `nmrcheck process`

# (failure class measured on main, arguments after "process EXP", text the message must hold).
# Click's usage errors print a usage line too; they are judged on status 2, no traceback, and
# naming the option.
PROCESS_OPTIONS: tuple[tuple[str, list[str], str], ...] = (
    ("traceback", ["--lb", "nan"], "--lb"),
    ("traceback", ["--phase", "nan,nan"], "--phase"),
    ("traceback", ["--phase", "inf,0"], "--phase"),
    ("traceback", ["--plot", "/nonexistent-folder/x.png"], "--plot"),
    ("memory", ["--size", str(2**31)], "--size"),
    ("memory", ["--size", str(2**26)], "--size"),
    ("silently wrong", ["--anchor-h", "1000000000"], "--anchor-h"),
    # Further cases of the same kinds, not among the examples:
    ("extra", ["--lb", "inf"], "--lb"),
    ("extra", ["--lb", "-inf"], "--lb"),
    ("extra", ["--lb", "1e9"], "--lb"),
    ("extra", ["--phase", "0,-inf"], "--phase"),
    ("extra", ["--phase", "1e9,0"], "phase"),
    ("extra", ["--phase", "a,b"], "--phase"),
    ("extra", ["--phase", "1,2,3"], "--phase"),
    ("extra", ["--anchor-h", "0"], "--anchor-h"),
    ("extra", ["--anchor-h", "nan"], "--anchor-h"),
    ("extra", ["--size", "1000"], "size"),
    ("extra", ["--size", "-4096"], "--size"),
    ("extra", ["--solvent", "unobtainium"], "solvent"),
    ("extra", ["--standard", "DSS", "--standard-nmol", "nan"], "--standard-nmol"),
    ("extra", ["--standard", "DSS", "--volume-ul", "inf"], "--volume-ul"),
    ("extra", ["--solvent-reference", "--deuteration-pct", "150", "--volume-ul", "35"], "--deuteration-pct"),
    ("extra", ["--standard", "DSS", "--standard-nmol", "5", "--standard-range", "nan:1"], "--standard-range"),
    ("extra", ["--save-spectrum", "/nonexistent-folder/x.npz"], "--save-spectrum"),
)


def judge_options(experiment: Path, args: list[str], fragment: str) -> tuple[str, str]:
    """Run ``nmrcheck process EXPERIMENT ARGS`` in-process: ("ok", message) when refused with status 2 naming ``fragment``."""
    from click.testing import CliRunner

    from nmrcheck.cli import main

    result = CliRunner().invoke(main, ["process", str(experiment), *args])
    if result.exception is not None and not isinstance(result.exception, SystemExit):
        return "traceback", repr(result.exception)
    if "Traceback" in result.output:
        return "traceback", result.output[-500:]
    if result.exit_code == 0:
        return "silently wrong", "accepted"
    if result.exit_code != 2 or fragment not in result.output:
        return "bad message", f"status {result.exit_code}: {result.output.strip()[:300]}"
    return "ok", result.output.strip().splitlines()[-1]


# ----------------------------------------------------------------------------- random faults

_WEIRD = ("nan", "inf", "-inf", "1e308", "-1e308", "-1", "0", "", "<x", "<>", "(0..5)", "abc", "1e-320", "99999999999", "0x10", "1,5")


def random_fault(rng: np.random.Generator) -> tuple[str, Callable[[Path], Path]]:
    """A random fault for a Bruker folder or a JCAMP-DX file: a header value made weird, bytes flipped, or a cut."""
    kind = rng.integers(4)

    def target(p: Path) -> Path:
        if p.is_dir():
            return p / "acqus" if (p / "acqus").exists() else p / "procpar"
        return p

    def mutate(p: Path) -> Path:
        f = target(p)
        raw = bytearray(f.read_bytes())
        if kind == 0:
            lines = raw.split(b"\n")
            numeric = [i for i, line in enumerate(lines) if re.match(rb"##[$.]?[\w ]+=\s*[-+0-9.]|\d+ [-+0-9.]", line)]
            i = numeric[rng.integers(len(numeric))]
            weird = _WEIRD[rng.integers(len(_WEIRD))].encode()
            if lines[i].startswith(b"##"):
                lines[i] = lines[i].split(b"=", 1)[0] + b"= " + weird
            else:  # a procpar value line: count, then the value
                lines[i] = lines[i].split(b" ", 1)[0] + b" " + weird
            raw = bytearray(b"\n".join(lines))
        elif kind == 1:
            for _ in range(int(rng.integers(1, 20))):
                raw[int(rng.integers(len(raw)))] = int(rng.integers(256))
        elif kind == 2:
            raw = raw[: int(rng.integers(len(raw)))]
        else:
            data = p / "fid" if p.is_dir() else None
            if data is not None:
                b = bytearray(data.read_bytes())
                start = int(rng.integers(len(b)))
                b[start : start + 64] = bytes(rng.integers(0, 256, size=min(64, len(b) - start), dtype=np.uint8))
                data.write_bytes(bytes(b))
            else:
                cut = int(rng.integers(len(raw)))
                raw = raw[:cut] + raw[cut + int(rng.integers(1, 400)) :]
        f.write_bytes(bytes(raw))
        return p

    names = {0: "header value made weird", 1: "bytes flipped", 2: "file cut", 3: "data block scrambled"}
    return names[int(kind)], mutate


def judge_random(path: Path) -> tuple[str, str]:
    """A random fault must end refused in one line or processed; never a traceback or a hang."""
    status, detail = run_case(path)
    if status == "refused":
        return ("ok", detail) if "\n" not in detail and detail.strip() else ("bad message", detail)
    if status == "done":
        return "ok", "processed"
    return status, str(detail)
