"""One-line text of an amount in the tube and its go/no-go, shared by the process, check and plate reports."""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

__all__ = ["amount_line"]


def amount_line(amount: Mapping[str, Any], recommendation: Mapping[str, Any] | None = None) -> str:
    """One line: an amount block (``nmol``, ``ug``, ``conc_mM``, ...) and its go/no-go, as the JSON carries them."""
    bits = [f"{amount[k]:.3g} {unit}" for k, unit in (("nmol", "nmol"), ("ug", "µg"), ("conc_mM", "mM")) if amount.get(k) is not None]
    text = f"{', '.join(bits) or 'amount unknown'} ± {amount['uncertainty_pct']:.1f} % ({amount['method']})"
    if not recommendation:
        return text
    go = f"{recommendation['experiment']}: {recommendation['decision'].upper()}"
    if recommendation.get("scans_needed") and recommendation.get("hours_needed") is not None:
        go += f" ({recommendation['scans_needed']} scans, {recommendation['hours_needed']:.1f} h for SNR {recommendation['target_snr']:g})"
    return f"{text}; {go}"
