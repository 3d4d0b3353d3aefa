"""Mass spectrometry of the extract's LC-MS run: per-well features from a fraction timetable, MS/MS, known compounds.

Sits beside :mod:`nmrcheck.chem` (whose formulas, ion species and isotope patterns it uses);
:mod:`nmrcheck.plate` and :mod:`nmrcheck.validate` import it, and it imports nothing
downstream. File formats (mzML, timetables) are read in :mod:`nmrcheck.io`.
"""

from nmrcheck.ms.features import FeatureIon, FeatureOptions, LcmsFeature, Ms2Spectrum, WellMs, plate_features, well_features
from nmrcheck.ms.msms import FragmentCheck, SpectralGroup, SpectralLink, check_fragments, modified_cosine, spectral_groups

__all__ = [
    "FeatureIon",
    "FeatureOptions",
    "FragmentCheck",
    "LcmsFeature",
    "Ms2Spectrum",
    "SpectralGroup",
    "SpectralLink",
    "WellMs",
    "check_fragments",
    "modified_cosine",
    "plate_features",
    "spectral_groups",
    "well_features",
]
