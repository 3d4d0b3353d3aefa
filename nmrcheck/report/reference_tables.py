"""The reference tables a user may name on the command line, listed for reading: standards, solvents, ions, experiments.

Read from the packaged CSV files (``nmrcheck/data``); the citation shown is the table's source
without the contributors' "from memory" note.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any

from nmrcheck.data import load_table, user_citation
from nmrcheck.errors import ParameterError
from nmrcheck.tolerances import DEFAULT_TOLERANCE_PPM

__all__ = ["TABLES", "reference_tables", "tables_text"]

#: Listable tables and what each is for.
TABLES = {
    "standards": "internal standards for amounts: the signal looked for and its protons",
    "solvents": "NMR solvents: residual line, water line and the reference that sets the axis",
    "ions": "ion species accepted in MS features (--ion, manifest ms_feature)",
    "experiments": "next experiments for the go/no-go and the amount each needs",
}


def _num(text: str) -> float | None:
    text = (text or "").strip()
    return float(text) if text else None


def _standards() -> list[dict[str, Any]]:
    rows: dict[tuple, dict[str, Any]] = {}
    for r in load_table("standards"):
        key = (r["name"], r["signal_ppm"], r["n_h"])
        entry = rows.setdefault(key, {"name": r["name"], "aliases": [a for a in r["aliases"].split(";") if a], "signal_ppm": float(r["signal_ppm"]),
                                      "n_h": int(float(r["n_h"])), "multiplicity": r["multiplicity"], "solvents": [], "source": user_citation(r["source"])})
        entry["solvents"].append(r["solvent"])
    return list(rows.values())


def _solvents() -> list[dict[str, Any]]:
    by: dict[str, dict[str, Any]] = {}
    for r in load_table("solvents"):
        s = by.setdefault(r["solvent"], {"solvent": r["solvent"], "residual": [], "water": [], "reference": [], "impurities": [], "source": set()})
        line = {"name": r["name"], "ppm": float(r["ppm"]), "multiplicity": r["multiplicity"]}
        key = {"residual": "residual", "water": "water", "reference": "reference"}.get(r["kind"], "impurities")
        s[key].append(line)
        s["source"].update(part.strip() for part in user_citation(r["source"]).split(";"))
    out = []
    for s in by.values():
        s["source"] = "; ".join(sorted(x for x in s["source"] if x and not x.startswith("as for ")))
        out.append(s)
    return sorted(out, key=lambda s: s["solvent"].lower())


def _ions() -> list[dict[str, Any]]:
    return [{"notation": r["notation"], "polarity": r["polarity"], "charge": int(r["charge"]), "molecules": int(r["molecules"]),
             "electrons": r["electrons"], "source": user_citation(r["source"])} for r in load_table("ion_species")]


def _experiments() -> list[dict[str, Any]]:
    return [{"experiment": r["experiment"], "label": r["label"], "go_nmol": _num(r["go_nmol"]), "borderline_nmol": _num(r["borderline_nmol"]),
             "go_ug": _num(r["go_ug"]), "borderline_ug": _num(r["borderline_ug"]), "target_snr": _num(r["target_snr"]),
             "source": user_citation(r["source"])} for r in load_table("recommendation_defaults")]


_BUILDERS = {"standards": _standards, "solvents": _solvents, "ions": _ions, "experiments": _experiments}


def reference_tables(names: Sequence[str] = ()) -> dict[str, Any]:
    """The named tables (all when none is named) as JSON-ready records, with the default mass tolerance.

    Raises
    ------
    ParameterError
        For a name that is not one of :data:`TABLES`.
    """
    names = list(names) or list(TABLES)
    for n in names:
        if n not in TABLES:
            raise ParameterError(f"table {n!r}: choose from {', '.join(TABLES)}")
    out: dict[str, Any] = {n: _BUILDERS[n]() for n in names}
    out["defaults"] = {"mass_tolerance_ppm": DEFAULT_TOLERANCE_PPM}
    return out


def _grid(header: Sequence[str], rows: Sequence[Sequence[str]]) -> list[str]:
    widths = [max(len(str(x)) for x in col) for col in zip(header, *rows)] if rows else [len(h) for h in header]
    fmt = "  ".join(f"{{:<{w}}}" for w in widths[:-1]) + "  {}"
    return [fmt.format(*header), fmt.format(*("-" * w for w in widths[:-1]), "-" * len(header[-1]))] + [fmt.format(*map(str, r)) for r in rows]


def _g(v: float | None, unit: str = "") -> str:
    return "–" if v is None else f"{v:g}{unit}"


def tables_text(tables: Mapping[str, Any]) -> str:
    """The tables as aligned plain text, one section per table, sources on the right."""
    out: list[str] = []
    if "standards" in tables:
        out.append("Internal standards (--standard NAME)")
        out += _grid(("name", "signal", "H", "solvents", "source"),
                     [(s["name"], f"{s['signal_ppm']:.2f} ppm {s['multiplicity']}", s["n_h"], ", ".join(s["solvents"]), s["source"]) for s in tables["standards"]])
        out.append("")
    if "solvents" in tables:
        out.append("Solvents (--solvent NAME, manifest solvent)")

        def lines(items):
            return ", ".join(f"{i['name']} {i['ppm']:.2f}" + (f" {i['multiplicity']}" if i["multiplicity"] not in ("", "s") else "") for i in items) or "–"

        out += _grid(("solvent", "residual line (ppm)", "water (ppm)", "axis reference", "source"),
                     [(s["solvent"], lines(s["residual"]), lines(s["water"]), lines(s["reference"]), s["source"]) for s in tables["solvents"]])
        out.append("")
    if "ions" in tables:
        out.append("Ion species (--ion, manifest ms_feature)")
        out += _grid(("ion", "polarity", "charge", "M per ion", "electrons", "source"),
                     [(i["notation"], i["polarity"], f"{i['charge']:+d}", i["molecules"], i["electrons"], i["source"]) for i in tables["ions"]])
        out.append("")
    if "experiments" in tables:
        out.append("Next experiments (--experiment NAME): go when the amount's lower bound reaches 'go', borderline from 'borderline'")
        out += _grid(("experiment", "go", "borderline", "target SNR", "source"),
                     [(e["experiment"], _g(e["go_nmol"], " nmol") if e["go_nmol"] is not None else _g(e["go_ug"], " µg"),
                       _g(e["borderline_nmol"], " nmol") if e["borderline_nmol"] is not None else _g(e["borderline_ug"], " µg"),
                       _g(e["target_snr"]), e["source"]) for e in tables["experiments"]])
        out.append("")
    d = tables.get("defaults") or {}
    if "mass_tolerance_ppm" in d:
        out.append(f"Default mass tolerance of every command: {d['mass_tolerance_ppm']:g} ppm")
    return "\n".join(out).rstrip() + "\n"
