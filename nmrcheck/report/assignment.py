"""A candidate's predicted 1H environments beside the observed signals, and a proposed assignment.

Used for the report's overlay ("predicted shifts of the best candidate") and for the NMReDATA
record of each well. The assignment is a proposal from shift estimates (nearest signal within
the estimate's tolerance, no more protons than the signal holds): a screening aid, not an
assignment a spectroscopist has made.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any

from nmrcheck.report.spectrum_layout import counted_regions

__all__ = ["predicted_environments", "propose_assignment", "nmredata_record"]

#: Solvents that exchange O-H / N-H hydrogens away (CD3OD, D2O): those environments are not drawn.
_EXCHANGING = {"cd3od", "d2o", "methanol-d4"}


def predicted_environments(smiles: str, solvent: str | None = None) -> list[dict[str, Any]]:
    """Estimated environments (``ppm``, ``n_h``, ``tolerance_ppm``, ``label``, ``atoms``) of a structure.

    Exchangeable hydrogens are left out in solvents that exchange them; elsewhere they are kept
    with their wide tolerance. Returns [] for a structure that cannot be read or predicted.
    """
    from rdkit import Chem

    from nmrcheck.errors import NmrcheckError
    from nmrcheck.predict import group_environments, predict_shifts

    mol = Chem.MolFromSmiles(smiles) if smiles else None
    if mol is None:
        return []
    try:
        envs = group_environments(predict_shifts(mol))
    except (NmrcheckError, ValueError):
        return []
    exchanging = (solvent or "").strip().lower() in _EXCHANGING
    out = []
    for e in envs:
        if e.exchangeable and exchanging:
            continue
        what = e.h_class or e.shift_class
        out.append({
            "ppm": float(e.ppm),
            "n_h": int(e.n_h),
            "tolerance_ppm": float(e.tolerance_ppm),
            "label": f"{what} {e.n_h} H (atoms {', '.join(str(i + 1) for i in e.atom_indices)})",
            "atoms": tuple(int(i) for i in e.atom_indices),
            "exchangeable": bool(e.exchangeable),
        })
    return sorted(out, key=lambda g: -g["ppm"])


def propose_assignment(regions: Sequence[Mapping[str, Any]], environments: Sequence[Mapping[str, Any]]) -> dict[int, list[int]]:
    """Counted region index -> indices of the environments proposed for it.

    Pairs are taken closest first; an environment goes to a region when the region's peak lies
    within the estimate's tolerance and the region still has room for its protons.
    """
    counted = counted_regions(regions)
    room = [float(r["h"]) for r in counted]
    pairs = []
    for ri, r in enumerate(counted):
        peak = float(r.get("peak_ppm") if r.get("peak_ppm") is not None else (float(r["start_ppm"]) + float(r["end_ppm"])) / 2)
        for ei, e in enumerate(environments):
            d = abs(peak - float(e["ppm"]))
            if d <= float(e["tolerance_ppm"]):
                pairs.append((d, ri, ei))
    taken: dict[int, list[int]] = {}
    used = set()
    for d, ri, ei in sorted(pairs):
        if ei in used:
            continue
        need = float(environments[ei]["n_h"])
        if room[ri] + 0.5 >= need:
            room[ri] -= need
            used.add(ei)
            taken.setdefault(ri, []).append(ei)
    return taken


def nmredata_record(*, well: str, name: str, smiles: str, solvent: str | None, larmor_mhz: float | None, regions: Sequence[Mapping[str, Any]]) -> str:
    """The NMReDATA text of one well: its counted signals and the proposed assignment to ``smiles``."""
    from nmrcheck.io.nmredata import NmredataSignal, format_nmredata

    counted = counted_regions(regions)
    envs = predicted_environments(smiles, solvent)
    proposal = propose_assignment(regions, envs)
    signals, assignments = [], {}
    for i, r in enumerate(counted):
        label = f"s{i + 1}"
        peak = r.get("peak_ppm") if r.get("peak_ppm") is not None else (float(r["start_ppm"]) + float(r["end_ppm"])) / 2
        signals.append(NmredataSignal(float(peak), label, float(r["h"]), (float(r["start_ppm"]), float(r["end_ppm"]))))
        atoms = [a for ei in proposal.get(i, []) for a in envs[ei]["atoms"]]
        if atoms:
            assignments[label] = tuple(atoms)
    note = (f"nmrcheck screening record of well {well}: observed 1H signals of the processed spectrum; "
            f"assignment to {name} proposed from estimated shifts (nearest signal within each estimate's tolerance), "
            "a screening aid, not an identification")
    return format_nmredata(smiles=smiles, solvent=solvent, larmor_mhz=larmor_mhz, signals=signals, assignments=assignments,
                           title=f"{well} {name}", notes={"NMRCHECK_NOTE": note})
