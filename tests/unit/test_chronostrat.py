"""Chart names and ages against the ICS International Chronostratigraphic Chart v2023/09.

The expected ages below are the chart's (v2023/09, Cohen, Finney, Gibbard and Fan; from
memory, the Cenozoic ones compared with a published rendering of that version): the base
of the Cenozoic 66.0 Ma, of the Neogene and Miocene 23.03, the Pliocene 5.333, the
Quaternary and Pleistocene 2.58, the Holocene 0.0117, the Eocene 56.0, the Oligocene
33.9, the Burdigalian 20.44, the Langhian 15.98, the Chattian 27.82; the Mesozoic 251.902.
"""

from __future__ import annotations

from itertools import pairwise

import pytest

from tracker.domain.chronostrat import (
    CHART,
    SUBSERIES,
    UNITS,
    find_unit,
    name_problem,
    range_problem,
)

CHART_BASES = {
    "Cenozoic": 66.0,
    "Mesozoic": 251.902,
    "Neogene": 23.03,
    "Quaternary": 2.58,
    "Miocene": 23.03,
    "Pliocene": 5.333,
    "Pleistocene": 2.58,
    "Holocene": 0.0117,
    "Eocene": 56.0,
    "Oligocene": 33.9,
    "Burdigalian": 20.44,
    "Langhian": 15.98,
    "Chattian": 27.82,
}


def test_the_chart_version_is_named() -> None:
    assert "v2023/09" in CHART


@pytest.mark.parametrize(("name", "base"), CHART_BASES.items())
def test_units_have_the_chart_base_ages(name: str, base: float) -> None:
    unit = find_unit(name)
    assert unit is not None and unit.base_ma == base


def test_units_of_one_rank_tile_the_time_they_span() -> None:
    # each unit's top is the next younger unit's base: no gap, no overlap (stages: Cenozoic)
    for rank in ("era", "period", "epoch", "stage"):
        units = sorted(
            (u for u in UNITS.values() if u.rank == rank and u.name not in SUBSERIES),
            key=lambda u: u.top_ma,
        )
        assert units[0].top_ma == 0.0, rank
        for younger, older in pairwise(units):
            assert older.top_ma == younger.base_ma, (younger.name, older.name)
            assert older.base_ma > older.top_ma


@pytest.mark.parametrize(
    ("typed", "chart"),
    [
        ("miocene", "Miocene"),
        ("  MIOCENE ", "Miocene"),
        ("Early Cretaceous", "Lower Cretaceous"),  # epoch Early = series Lower
        ("Late Jurassic", "Upper Jurassic"),
        ("Palaeogene", "Paleogene"),  # British spelling
        ("Early Miocene", "Lower Miocene"),  # informal subseries (common practice)
    ],
)
def test_common_spellings_find_the_chart_unit(typed: str, chart: str) -> None:
    unit = find_unit(typed)
    assert unit is not None and unit.name == chart


def test_an_informal_subseries_spans_its_stages() -> None:
    # Lower Miocene = Aquitanian + Burdigalian: 23.03 to 15.98 Ma (the chart's stage bounds)
    unit = find_unit("Early Miocene")
    assert unit is not None and (unit.base_ma, unit.top_ma) == (23.03, 15.98)


def test_unknown_and_misplaced_names_are_said() -> None:
    said = name_problem("earliestEpochOrLowestSeries", "Mioscene")
    assert said is not None and "v2023/09" in said
    said = name_problem("earliestEpochOrLowestSeries", "Neogene")
    assert said is not None and "period" in said and "epoch" in said
    assert name_problem("latestPeriodOrHighestSystem", "neogene") is None


def test_a_range_the_wrong_way_round_is_said() -> None:
    said = range_problem("Pliocene", "Miocene")  # earliest is the younger
    assert said is not None and "Pliocene" in said and "Miocene" in said
    assert range_problem("Miocene", "Pliocene") is None
    assert range_problem("Miocene", "Miocene") is None
    assert range_problem("Lower Miocene", "Miocene") is None  # within its epoch
    assert range_problem("Mioscene", "Miocene") is None  # unknown names: warned of elsewhere
