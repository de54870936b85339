"""Chronostratigraphic names checked against the International Chronostratigraphic Chart.

CHART names the version: ICS International Chronostratigraphic Chart v2023/09 (Cohen,
Finney, Gibbard and Fan). The table holds the Phanerozoic eras, periods, epochs/series,
and the Cenozoic stages, each with the ages of its base and top in Ma. It was written
from memory; the Cenozoic stage ages were compared with a published rendering of
v2023/09. Mesozoic and Paleozoic stages are not in it (too many to write reliably from
memory): a stage name outside the Cenozoic is reported as not found.

Names are matched without regard to case or surrounding blanks, with the British
"Palaeo-" read as "Paleo-". The chart names series Lower/Middle/Upper where the time
scale names epochs Early/Middle/Late: "Early Cretaceous" is read as the series "Lower
Cretaceous". For Cenozoic epochs, which the chart does not split into series, "Early",
"Middle" and "Late" (or "Lower", "Upper") Miocene, Eocene ... are read as the common
informal subseries, spanning the stages listed in SUBSERIES (common practice).
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from functools import lru_cache
from typing import Literal

CHART = "ICS International Chronostratigraphic Chart v2023/09"
Rank = Literal["era", "period", "epoch", "stage"]


@dataclass(frozen=True)
class Unit:
    name: str  # as the chart writes it
    rank: Rank
    base_ma: float  # age of its base (its oldest point)
    top_ma: float  # age of its top (its youngest point)


# Boundary ages (Ma), ICS chart v2023/09, from memory (Cenozoic stages compared, see above).
# Each tuple: name, base, top.
_ERAS = (("Cenozoic", 66.0, 0.0), ("Mesozoic", 251.902, 66.0), ("Paleozoic", 538.8, 251.902))
_PERIODS = (
    ("Quaternary", 2.58, 0.0),
    ("Neogene", 23.03, 2.58),
    ("Paleogene", 66.0, 23.03),
    ("Cretaceous", 145.0, 66.0),
    ("Jurassic", 201.4, 145.0),
    ("Triassic", 251.902, 201.4),
    ("Permian", 298.9, 251.902),
    ("Carboniferous", 358.9, 298.9),
    ("Devonian", 419.2, 358.9),
    ("Silurian", 443.8, 419.2),
    ("Ordovician", 486.85, 443.8),
    ("Cambrian", 538.8, 486.85),
)
_EPOCHS = (
    ("Holocene", 0.0117, 0.0),
    ("Pleistocene", 2.58, 0.0117),
    ("Pliocene", 5.333, 2.58),
    ("Miocene", 23.03, 5.333),
    ("Oligocene", 33.9, 23.03),
    ("Eocene", 56.0, 33.9),
    ("Paleocene", 66.0, 56.0),
    ("Upper Cretaceous", 100.5, 66.0),
    ("Lower Cretaceous", 145.0, 100.5),
    ("Upper Jurassic", 161.5, 145.0),
    ("Middle Jurassic", 174.7, 161.5),
    ("Lower Jurassic", 201.4, 174.7),
    ("Upper Triassic", 237.0, 201.4),
    ("Middle Triassic", 247.2, 237.0),
    ("Lower Triassic", 251.902, 247.2),
    ("Lopingian", 259.51, 251.902),
    ("Guadalupian", 273.01, 259.51),
    ("Cisuralian", 298.9, 273.01),
    ("Pennsylvanian", 323.2, 298.9),  # subsystems of the Carboniferous, used as its series
    ("Mississippian", 358.9, 323.2),
    ("Upper Devonian", 382.7, 358.9),
    ("Middle Devonian", 393.3, 382.7),
    ("Lower Devonian", 419.2, 393.3),
    ("Pridoli", 423.0, 419.2),
    ("Ludlow", 427.4, 423.0),
    ("Wenlock", 433.4, 427.4),
    ("Llandovery", 443.8, 433.4),
    ("Upper Ordovician", 458.4, 443.8),
    ("Middle Ordovician", 471.3, 458.4),
    ("Lower Ordovician", 486.85, 471.3),
    ("Furongian", 497.0, 486.85),
    ("Miaolingian", 506.5, 497.0),
    ("Series 2", 521.0, 506.5),
    ("Terreneuvian", 538.8, 521.0),
)
_CENOZOIC_STAGES = (
    ("Meghalayan", 0.0042, 0.0),
    ("Northgrippian", 0.0082, 0.0042),
    ("Greenlandian", 0.0117, 0.0082),
    ("Upper Pleistocene", 0.129, 0.0117),  # the chart's stage, not yet named
    ("Chibanian", 0.774, 0.129),
    ("Calabrian", 1.80, 0.774),
    ("Gelasian", 2.58, 1.80),
    ("Piacenzian", 3.600, 2.58),
    ("Zanclean", 5.333, 3.600),
    ("Messinian", 7.246, 5.333),
    ("Tortonian", 11.63, 7.246),
    ("Serravallian", 13.82, 11.63),
    ("Langhian", 15.98, 13.82),
    ("Burdigalian", 20.44, 15.98),
    ("Aquitanian", 23.03, 20.44),
    ("Chattian", 27.82, 23.03),
    ("Rupelian", 33.9, 27.82),
    ("Priabonian", 37.71, 33.9),
    ("Bartonian", 41.2, 37.71),
    ("Lutetian", 47.8, 41.2),
    ("Ypresian", 56.0, 47.8),
    ("Thanetian", 59.2, 56.0),
    ("Selandian", 61.6, 59.2),
    ("Danian", 66.0, 61.6),
)
# Informal Lower/Middle/Upper subseries of Cenozoic epochs: their oldest and youngest stage
# (common practice). Their ages are those stages' bounds, looked up, never typed twice.
SUBSERIES = {
    "Lower Pleistocene": ("Gelasian", "Calabrian"),
    "Middle Pleistocene": ("Chibanian", "Chibanian"),
    "Lower Pliocene": ("Zanclean", "Zanclean"),
    "Upper Pliocene": ("Piacenzian", "Piacenzian"),
    "Lower Miocene": ("Aquitanian", "Burdigalian"),
    "Middle Miocene": ("Langhian", "Serravallian"),
    "Upper Miocene": ("Tortonian", "Messinian"),
    "Lower Oligocene": ("Rupelian", "Rupelian"),
    "Upper Oligocene": ("Chattian", "Chattian"),
    "Lower Eocene": ("Ypresian", "Ypresian"),
    "Middle Eocene": ("Lutetian", "Bartonian"),
    "Upper Eocene": ("Priabonian", "Priabonian"),
    "Lower Paleocene": ("Danian", "Danian"),
    "Middle Paleocene": ("Selandian", "Selandian"),
    "Upper Paleocene": ("Thanetian", "Thanetian"),
}


def _units() -> dict[str, Unit]:
    units: dict[str, Unit] = {}
    ranked: tuple[tuple[Rank, tuple[tuple[str, float, float], ...]], ...] = (
        ("era", _ERAS),
        ("period", _PERIODS),
        ("epoch", _EPOCHS),
        ("stage", _CENOZOIC_STAGES),
    )
    for rank, table in ranked:
        for name, base, top in table:
            units[_key(name)] = Unit(name, rank, base, top)
    for name, (oldest, youngest) in SUBSERIES.items():
        base, top = units[_key(oldest)].base_ma, units[_key(youngest)].top_ma
        units.setdefault(_key(name), Unit(name, "epoch", base, top))
    return units


_SPELLINGS = (
    (re.compile(r"^early\b"), "lower"),
    (re.compile(r"^late\b"), "upper"),
    (re.compile(r"palaeo"), "paleo"),
    (re.compile(r"\s+"), " "),
)


def _key(name: str) -> str:
    key = name.strip().casefold()
    for pattern, replacement in _SPELLINGS:
        key = pattern.sub(replacement, key)
    return key


UNITS = _units()


@lru_cache(maxsize=1024)  # a list repeats its few names on every row
def find_unit(name: str) -> Unit | None:
    """The chart's unit this name means (see the module's note on spellings), or None."""
    return UNITS.get(_key(name))


# The Darwin Core geological-context terms (TDWG) naming chart units: (earliest, latest, rank).
TERM_PAIRS: tuple[tuple[str, str, Rank], ...] = (
    ("earliestEraOrLowestErathem", "latestEraOrHighestErathem", "era"),
    ("earliestPeriodOrLowestSystem", "latestPeriodOrHighestSystem", "period"),
    ("earliestEpochOrLowestSeries", "latestEpochOrHighestSeries", "epoch"),
    ("earliestAgeOrLowestStage", "latestAgeOrHighestStage", "stage"),
)
RANK_OF_TERM: dict[str, Rank] = {
    term: rank for earliest, latest, rank in TERM_PAIRS for term in (earliest, latest)
}


def name_problem(term: str, name: str) -> str | None:
    """Why ``name`` is not a unit the term may hold (unknown, or of another rank), or None."""
    unit = find_unit(name)
    rank = RANK_OF_TERM[term]
    if unit is None:
        return f"is not a unit of the {CHART} (Phanerozoic; stages of the Cenozoic only)"
    if unit.rank != rank:
        return f"is a {unit.rank} in the {CHART}, not a{'n' if rank[0] in 'ae' else ''} {rank}"
    return None


def range_problem(earliest: str, latest: str) -> str | None:
    """Why an earliest/latest pair is the wrong way round, or None.

    Wrong when the earliest unit lies wholly after the latest: its base is no older than
    the latest's top (units of one rank do not overlap; a subseries lies in its epoch).
    """
    first, last = find_unit(earliest), find_unit(latest)
    if first is None or last is None or first.base_ma > last.top_ma:
        return None
    return (
        f"{first.name} ({first.base_ma:g}-{first.top_ma:g} Ma) is younger than "
        f"{last.name} ({last.base_ma:g}-{last.top_ma:g} Ma) ({CHART})"
    )
