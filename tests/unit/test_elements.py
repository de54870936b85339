"""Standard atomic weights: every value checked against periodictable (CIAAW 2021)."""

from __future__ import annotations

import periodictable
import pytest

from tracker.domain.elements import ATOMIC_NUMBER, ATOMIC_WEIGHT, ELEMENTS, is_element

# CIAAW (from memory): elements with no standard atomic weight, i.e. no stable isotope or
# long-lived radionuclide of characteristic terrestrial isotopic composition
NO_STANDARD_WEIGHT = {"Tc", "Pm", "Po", "At", "Rn", "Fr", "Ra", "Ac"} | {
    periodictable.elements[z].symbol for z in range(93, 119)
}


def test_one_row_per_element_in_atomic_number_order() -> None:
    # reference: periodictable 2.1 symbols and atomic numbers (IUPAC)
    assert len(ELEMENTS) == 118
    for z, (symbol, _, _) in enumerate(ELEMENTS, start=1):
        assert periodictable.elements[z].symbol == symbol
        assert ATOMIC_NUMBER[symbol] == z


@pytest.mark.parametrize("z", range(1, 119))
def test_standard_atomic_weight_matches_periodictable(z: int) -> None:
    # periodictable 2.1 (abridged standard atomic weights, CIAAW 2021 / Prohaska et al. 2022)
    symbol, _, weight = ELEMENTS[z - 1]
    reference = periodictable.elements[z]
    if symbol in NO_STANDARD_WEIGHT:
        assert weight is None
        # periodictable gives these the mass number of the longest-lived isotope, e.g. [98] for Tc
        assert reference.mass == int(reference.mass)
    else:
        assert weight == reference.mass
        assert ATOMIC_WEIGHT[symbol] == reference.mass


def test_calcium_and_strontium() -> None:
    # CIAAW 2021 abridged standard atomic weights: Ca 40.078(4), Sr 87.62(1)
    assert ATOMIC_WEIGHT["Ca"] == 40.078
    assert ATOMIC_WEIGHT["Sr"] == 87.62
    assert ATOMIC_NUMBER["Ca"] == 20
    assert ATOMIC_NUMBER["Sr"] == 38


def test_none_exactly_for_elements_without_standard_weight() -> None:
    # CIAAW (from memory): Tc, Pm, Po through Ac, and Np onwards; Th, Pa and U do have one
    missing = {symbol for symbol, _, weight in ELEMENTS if weight is None}
    assert missing == NO_STANDARD_WEIGHT
    assert {"Th", "Pa", "U", "Bi"}.isdisjoint(missing)


@pytest.mark.parametrize("symbol", ["Ca", "Sr", "H", "O", "Og", "Tc"])
def test_is_element(symbol: str) -> None:
    assert is_element(symbol)


@pytest.mark.parametrize("symbol", ["CA", "ca", "cA", "SR", "Xx", "", " Ca", "Ca ", "D", "calcium"])
def test_is_element_is_case_exact(symbol: str) -> None:
    # IUPAC symbol convention (common practice): first letter upper case, second lower case
    assert not is_element(symbol)
