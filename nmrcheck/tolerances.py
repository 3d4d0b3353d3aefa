"""Default tolerances shared by every command, kept free of imports so the command line loads fast."""

DEFAULT_TOLERANCE_PPM = 3.0
"""The one default mass tolerance of every command and option, ppm: about twice the 1-1.5 ppm
standard deviation of a well-calibrated time-of-flight or Orbitrap instrument (common practice)."""
