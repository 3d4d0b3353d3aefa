"""Mass spectrometry of the extract's LC-MS run: per-well features from a fraction timetable, MS/MS, known compounds.

Sits beside :mod:`nmrcheck.chem` (whose formulas, ion species and isotope patterns it uses);
:mod:`nmrcheck.plate` and :mod:`nmrcheck.validate` import it, and it imports nothing
downstream. File formats (mzML, timetables) are read in :mod:`nmrcheck.io`.
"""

__all__: list[str] = []
