"""One default mass tolerance for every measured m/z; the other widths are named, each a different quantity."""

from __future__ import annotations

import inspect

import pytest

from nmrcheck.tolerances import DEFAULT_TOLERANCE_PPM, FRAGMENT_TOLERANCE_MDA, FRAGMENT_TOLERANCE_PPM, masses_agree


def _default(func, name):
    return inspect.signature(func).parameters[name].default


def test_every_survey_mass_tolerance_defaults_to_the_shared_one():
    """Formula search, known compounds, LC-MS features, MS/MS grouping of wells, the plate screen and the
    commands all start from the one default, so a changed default reaches every stage."""
    from nmrcheck.chem.candidates import formula_search
    from nmrcheck.ms.features import FeatureOptions
    from nmrcheck.ms.library import KnownCompoundLibrary
    from nmrcheck.ms.msms import spectral_groups
    from nmrcheck.plate.lcms import _lead_feature, fragment_checks
    from nmrcheck.plate.screen import ScreenOptions
    from nmrcheck.validate.records import MsFeature

    defaults = {
        "FeatureOptions.tolerance_ppm": FeatureOptions().tolerance_ppm,
        "ScreenOptions.mass_tolerance_ppm": ScreenOptions().mass_tolerance_ppm,
        "MsFeature.ppm": MsFeature(((301.0707, "[M+H]+"),)).ppm,
        "formula_search(ppm)": _default(formula_search, "ppm"),
        "KnownCompoundLibrary.lookup(ppm)": _default(KnownCompoundLibrary.lookup, "ppm"),
        "spectral_groups(mass_tolerance_ppm)": _default(spectral_groups, "mass_tolerance_ppm"),
        "fragment_checks(mass_tolerance_ppm)": _default(fragment_checks, "mass_tolerance_ppm"),
        "_lead_feature(tolerance_ppm)": _default(_lead_feature, "tolerance_ppm"),
    }
    assert {k: v for k, v in defaults.items() if v != DEFAULT_TOLERANCE_PPM} == {}


def test_fragment_tolerance_is_the_msms_one():
    from nmrcheck.ms.msms import assign_fragments, check_fragments
    from nmrcheck.plate.lcms import fragment_checks

    for func, name in ((assign_fragments, "tolerance_ppm"), (check_fragments, "tolerance_ppm"), (fragment_checks, "fragment_tolerance_ppm")):
        assert _default(func, name) == FRAGMENT_TOLERANCE_PPM
    for func in (assign_fragments, check_fragments):
        assert _default(func, "tolerance_mda") == FRAGMENT_TOLERANCE_MDA


@pytest.mark.parametrize(
    ("error_a_ppm", "error_b_ppm", "agree"),
    [(2.9, -2.9, True), (3.0, 3.0, True), (0.0, 5.9, True), (3.5, -3.5, False), (0.0, 6.5, False)],
)
def test_two_measured_masses_agree_when_each_can_be_within_the_tolerance(error_a_ppm, error_b_ppm, agree):
    """Each within 3 ppm of the true mass, so at most about 6 ppm apart (triangle inequality)."""
    true = 500.2134
    a, b = true * (1 + error_a_ppm * 1e-6), true * (1 + error_b_ppm * 1e-6)
    assert masses_agree(a, b, DEFAULT_TOLERANCE_PPM) is agree
    assert masses_agree(b, a, DEFAULT_TOLERANCE_PPM) is agree
