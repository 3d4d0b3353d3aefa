"""The demo's known-compound library: invented names and taxa for the invented sponge Calyxia nocturna.

Every name and taxon here is fictional (genera Calyxia and Nocturnella of the invented
family Calyxiidae, and the invented sponge genus Umbrella of the invented family
Umbrellidae); the structures are small common compounds, with an isomer beside most of
them so that the taxon ranking has something to rank.
"""

from __future__ import annotations

import csv
import os
from pathlib import Path

__all__ = ["DEMO_GENUS", "DEMO_FAMILY", "DEMO_LIBRARY", "write_demo_library"]

DEMO_GENUS = "Calyxia"
DEMO_FAMILY = "Calyxiidae"

# name, SMILES, genus, family (all names and taxa invented)
DEMO_LIBRARY: tuple[tuple[str, str, str, str], ...] = (
    ("nocturnate", "COC(=O)c1ccc(O)cc1", "Calyxia", "Calyxiidae"),
    ("shoalaldehyde", "COc1cc(C=O)ccc1O", "Nocturnella", "Calyxiidae"),
    ("tidewater lactone", "O=c1ccc2ccccc2o1", "Calyxia", "Calyxiidae"),
    ("umbrellone", "O=c1ccoc2ccccc12", "Umbrella", "Umbrellidae"),
    ("calyxin A", "O=c1ccc2ccc(O)cc2o1", "Calyxia", "Calyxiidae"),
    ("umbrellin", "O=c1cc(O)c2ccccc2o1", "Umbrella", "Umbrellidae"),
    ("nocturnal ester", "COC(=O)/C=C/c1ccccc1", "Nocturnella", "Calyxiidae"),
    ("styrylate", "C=Cc1ccc(C(=O)OC)cc1", "Umbrella", "Umbrellidae"),
    ("calyxol", "Cc1ccc(C(C)C)c(O)c1", "Calyxia", "Calyxiidae"),
    ("umbrellol", "Cc1ccc(C(C)C)cc1O", "Umbrella", "Umbrellidae"),
    ("shoalphenol", "COc1cc(CC=C)ccc1O", "Nocturnella", "Calyxiidae"),
    ("isoshoalphenol", "COc1cc(/C=C/C)ccc1O", "Umbrella", "Umbrellidae"),
    ("calyxine", "Cn1c(=O)c2c(ncn2C)n(C)c1=O", "Calyxia", "Calyxiidae"),
    ("umbrelline", "Cn1cnc2n(C)c(=O)n(C)c(=O)c12", "Umbrella", "Umbrellidae"),
    ("nocturnol", "OCCc1ccc(O)cc1", "Calyxia", "Calyxiidae"),
    ("anisyl umbrellol", "COc1ccc(CO)cc1", "Umbrella", "Umbrellidae"),
    ("calyxgallate", "COC(=O)c1cc(O)c(O)c(O)c1", "Calyxia", "Calyxiidae"),
    ("shoalic acid", "OC(=O)/C=C/c1ccc(O)cc1", "Nocturnella", "Calyxiidae"),
    ("umbrellic acid", "OC(=O)/C=C/c1ccccc1O", "Umbrella", "Umbrellidae"),
    ("nocturnenol", "CC(C)=CCC/C(C)=C/CO", "Calyxia", "Calyxiidae"),
    ("umbrellinalol", "CC(C)=CCCC(C)(O)C=C", "Umbrella", "Umbrellidae"),
)


def write_demo_library(path: str | os.PathLike) -> Path:
    """Write the demo library as CSV (name, smiles, genus, family) and return its path."""
    p = Path(path)
    p.parent.mkdir(parents=True, exist_ok=True)
    with open(p, "w", newline="", encoding="utf-8") as fh:
        fh.write("# Invented known-compound library of the fictional sponge genus Calyxia and its relatives.\n")
        writer = csv.writer(fh)
        writer.writerow(["name", "smiles", "genus", "family"])
        writer.writerows(DEMO_LIBRARY)
    return p
