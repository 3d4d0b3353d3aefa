"""nmrcheck: unattended triage of 1H micro-NMR spectra and HRMS features of natural-product isolates."""

import logging

__version__ = "0.1.0"

logging.getLogger("nmrcheck").addHandler(logging.NullHandler())

__all__ = ["__version__"]
