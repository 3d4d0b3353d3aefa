"""Default tolerances shared by every command, kept free of imports so the command line loads fast.

One mass tolerance (:data:`DEFAULT_TOLERANCE_PPM`) serves every measured m/z of a survey scan:
formula search, known-compound look-up, LC-MS feature grouping, the MS/MS grouping of wells.
The other widths here are different physical quantities, each with its reason.
"""

__all__ = [
    "DEFAULT_TOLERANCE_PPM",
    "masses_agree",
    "FRAGMENT_TOLERANCE_PPM",
    "FRAGMENT_TOLERANCE_MDA",
    "TRACE_LINK_PPM",
    "PRECURSOR_MATCH_MZ",
    "MSMS_PEAK_MERGE_MZ",
    "SPECTRUM_MATCH_MZ",
]

DEFAULT_TOLERANCE_PPM = 3.0
"""The one default mass tolerance of every command and option, ppm: about twice the 1-1.5 ppm
standard deviation of a well-calibrated time-of-flight or Orbitrap instrument (common practice).
It bounds the error of one measured m/z (the intensity-weighted mean over a chromatographic peak)."""


def masses_agree(a: float, b: float, ppm: float = DEFAULT_TOLERANCE_PPM) -> bool:
    """Can two *measured* masses (or m/z) be the same, each within ``ppm`` of the truth?

    Their windows overlap: ``|a - b| <= ppm * (a + b) * 1e-6``, about twice the tolerance of
    one value (a measured mass against an exact one is within ``ppm`` of it, once).
    """
    return abs(a - b) <= ppm * 1e-6 * (abs(a) + abs(b))


FRAGMENT_TOLERANCE_PPM = 10.0
FRAGMENT_TOLERANCE_MDA = 2.0
"""Tolerance of an MS/MS fragment's m/z, the larger of the two. Product-ion scans are recorded at
lower resolution (shorter transients, faster scans) with far fewer ions per peak than the survey
scan, and low-m/z fragments err by a roughly constant mDa rather than ppm; a fragment window as
tight as the survey's would contradict right candidates (common practice in fragment annotation:
5-10 ppm with a floor of a few mDa)."""

TRACE_LINK_PPM = 10.0
"""Largest m/z gap between neighbouring centroids of one mass trace, ppm (all survey scans of the
well's stretch pooled and sorted). A single scan's centroid scatters more than the peak's mean m/z
that :data:`DEFAULT_TOLERANCE_PPM` bounds (fewer ions per scan, most of all on the peak's flanks);
traces are linked with this wider gap and their mean m/z then meets the mass tolerance
(common practice in region-of-interest feature detection)."""

PRECURSOR_MATCH_MZ = 0.01
"""An MS/MS scan belongs to an ion when the precursor m/z in its header is this close, u. Headers
carry the instrument's selection target (from an earlier survey scan, sometimes rounded, or the
isolation window's centre), not a calibrated mass; distinct ions within 0.01 u that co-elute would
be fragmented together anyway (common practice)."""

MSMS_PEAK_MERGE_MZ = 0.005
"""Peaks of repeated MS/MS scans of one precursor closer than this are one fragment, u: about
twice :data:`FRAGMENT_TOLERANCE_MDA` at low m/z, where most fragments lie (common practice)."""

SPECTRUM_MATCH_MZ = 0.01
"""Two MS/MS spectra's peaks match within this for the modified cosine, u (common practice in
molecular networking of high-resolution spectra: 0.01-0.02 u)."""
