"""Tests of calculators/builtin/catalogue.py: OpenNGC look-ups through pyongc, with the dataset as reference."""

import pytest
from pyongc import ongc

from calculators.builtin.catalogue import close_matches, lookup, pretty


@pytest.mark.parametrize("text", ["NGC 891", "NGC891", "ngc 891", "NGC0891"])
def test_spellings_of_a_designation_find_the_same_object(text):
    found = lookup(text)
    # OpenNGC through pyongc is the reference dataset: our sizes are exactly its Dso.dimensions.
    major, minor, _ = ongc.Dso("NGC891").dimensions
    assert (found.designation, found.major_arcmin, found.minor_arcmin) == ("NGC 891", major, minor)


def test_messier_33_is_ngc_598():
    # Messier's catalogue cross-identification (M 33 = NGC 598, the Triangulum Galaxy), as OpenNGC
    # records it; also by its common name and with "Messier" spelled out.
    for text in ("M 33", "m33", "Messier 33", "Triangulum Galaxy"):
        found = lookup(text)
        assert found.designation == "NGC 598"
        assert "M 33" in found.aliases


def test_unknown_name_lists_close_matches():
    with pytest.raises(ValueError) as caught:
        lookup("NGC 8910")
    assert "close matches" in str(caught.value)
    assert "NGC 891" in close_matches("NGC 8910")
    assert close_matches("Andromeda") == ["Andromeda Galaxy"]


def test_pretty_names():
    assert pretty("NGC0598") == "NGC 598"
    assert pretty("IC0434") == "IC 434"
    assert pretty("Mel022") == "Mel 22"


def test_lookups_are_cached_and_misses_are_not():
    from calculators.builtin.catalogue import _lookup

    lookup("NGC 891")
    before = _lookup.cache_info()
    lookup("ngc891")  # same normalised key: served from the cache
    assert _lookup.cache_info().hits == before.hits + 1
    with pytest.raises(ValueError):
        lookup("NGC 9999")
    assert _lookup.cache_info().currsize == before.currsize
