"""planner.filters.names: types and families as the chain shows them, read back exactly.

The short family names (LR, BW, BE) are the chain's own labels (planner.filters.iir); the
orders a family has are its registry field's choices.
"""

import pytest

from planner import filters as fk
from planner.errors import ProjectError


@pytest.mark.parametrize("text, type_", [
    ("high shelf", "high_shelf"), ("High-Shelf", "high_shelf"), ("high_shelf", "high_shelf"),
    ("low shelf", "low_shelf"), ("peak", "peaking"), ("peaking EQ", "peaking"),
    ("all-pass", "allpass"), ("band-pass", "bandpass"), ("LOWPASS", "lowpass"),
    ("HPF", "highpass"), ("linkwitz transform", "linkwitz_transform"),
])
def test_read_type_accepts_what_the_screen_shows(text, type_):
    assert fk.read_type(text) == type_


def test_read_type_names_the_known_types_when_it_cannot():
    with pytest.raises(ProjectError, match=r"type: unknown filter type 'shelfish'; known types: "
                                           r"lowpass, highpass, .*high shelf"):
        fk.read_type("shelfish")


@pytest.mark.parametrize("text, family, order", [
    ("LR4", "linkwitz-riley", 4), ("lr 4", "linkwitz-riley", 4), ("LR-8", "linkwitz-riley", 8),
    ("BW2", "butterworth", 2), ("Bessel", "bessel", None), ("BE3", "bessel", 3),
    ("linkwitz-riley", "linkwitz-riley", None), ("Linkwitz Riley", "linkwitz-riley", None),
    ("butter", "butterworth", None), ("fir", "fir", None), ("cookbook", "cookbook", None),
])
def test_read_family_accepts_short_names_with_orders(text, family, order):
    assert fk.read_family("lowpass", text) == (family, order)


def test_read_family_refuses_an_order_the_family_does_not_have():
    # Linkwitz-Riley filters are squared Butterworths: even orders only (Linkwitz and Riley 1976).
    with pytest.raises(ProjectError, match="family: LR3: a linkwitz-riley highpass has orders "
                                           "2, 4, 6, 8"):
        fk.read_family("highpass", "LR3")


def test_read_family_refuses_a_family_of_another_type():
    with pytest.raises(ProjectError, match="a peaking filter has no family"):
        fk.read_family("peaking", "LR4")


def test_family_choices_list_each_order_as_the_chain_shows_it():
    shown = [c[0].split()[0] for c in fk.family_choices("lowpass")]
    assert shown[:9] == ["BW1", "BW2", "BW3", "BW4", "BW5", "BW6", "BW7", "BW8", "LR2"]
    assert ("fir", "fir", None) in fk.family_choices("lowpass")
    # Every choice reads back to itself.
    for text, fam, order in fk.family_choices("highpass"):
        assert fk.read_family("highpass", text.split()[0]) == (fam, order)
