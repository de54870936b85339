"""How much of everything a synthetic lab holds at a given scale, decided before any step.

Scale 1 is a busy lab's decade: 300 loans, 20,000 specimens, 50,000 powders and solutions,
100,000 aliquots, 2,000 column batches, 60,000 measurements and at least 1,000,000 custody
events. The totals are met exactly (events: at least) by distributing them over loans and
specimens up front, so the plan can be generated one loan at a time and still add up.
"""

from __future__ import annotations

import math
import random
from dataclasses import dataclass
from datetime import UTC, datetime, timedelta

GENERATOR_VERSION = 2  # bump whenever the plan or what it writes changes: caches are keyed by it
SEED = 20_160_104
START = datetime(2015, 1, 5, 8, 0, tzinfo=UTC)
DECADE = timedelta(days=3652)
END = START + DECADE  # the benchmark's "today"
FIRST_LOAN = START + timedelta(days=1)  # the day after the setup (people, places, lenders)

# Scale 1 (the numbers).
LOANS, SPECIMENS, POWDERS, ALIQUOTS = 300, 20_000, 50_000, 100_000
BATCHES, MEASUREMENTS, EVENTS = 2_000, 60_000, 1_000_000
LENDERS = 40
EVENT_MARGIN = 1.02  # aim a little above the floor of events so rounding never falls short

SAMPLES_PER_BATCH = 12  # sample columns; each batch also runs one blank and one reference
TARGETS_PER_BATCH = SAMPLES_PER_BATCH + 2
BATCHES_PER_SESSION = 3
UNSAMPLED_SHARE = 0.1  # specimens a loan lists but nobody drills
# The showcase specimen: 4 powders, 4 solutions, 24 aliquots, 9 columns, 9 cuts = 50 descendants.
SHOWCASE_POWDERS, SHOWCASE_ALIQUOTS, SHOWCASE_COLUMNS = 4, 6, 9
SHOWCASE_EVERY = 10  # loans 0, 10, 20, ... have one


@dataclass(frozen=True)
class LoanShape:
    """One loan's composition: specimens → powders → aliquots per solution; batches, sessions."""

    index: int
    start: datetime
    length: timedelta  # the loan's bench work fits in the first 80 % of this
    powders: tuple[int, ...]  # per specimen (0: listed, never drilled)
    aliquots: tuple[tuple[int, ...], ...]  # per specimen, per powder (one solution each)
    batches: int
    duplicates: tuple[int, ...]  # per session: sample runs measured a second time
    extra_standards: tuple[int, ...]  # per session: standards appended at its end
    events: int  # the loan's share of the event total; moves fill up to it
    showcase: bool

    @property
    def specimens(self) -> int:
        return len(self.powders)

    @property
    def sessions(self) -> int:
        return len(self.duplicates)


@dataclass(frozen=True)
class Shape:
    scale: float
    loans: tuple[LoanShape, ...]
    lenders: int
    measurements: int
    events: int

    def total(self, what: str) -> int:
        """Planned totals, for the plan's own checks and for tests."""
        if what == "specimens":
            return sum(loan.specimens for loan in self.loans)
        if what in ("powders", "solutions"):
            return sum(sum(loan.powders) for loan in self.loans)
        if what == "aliquots":
            return sum(sum(map(sum, loan.aliquots)) for loan in self.loans)
        if what == "batches":
            return sum(loan.batches for loan in self.loans)
        raise ValueError(what)


def scaled(count: int, scale: float, least: int = 1) -> int:
    return max(least, round(count * scale))


def spread(total: int, n: int, lo: int, hi: int, rng: random.Random) -> list[int]:
    """``n`` integers in [lo, hi] summing to ``total``, chosen at random."""
    if not n * lo <= total <= n * hi:
        raise ValueError(f"cannot spread {total} over {n} within [{lo}, {hi}]")
    values = [lo] * n
    left = total - n * lo
    while left:
        i = rng.randrange(n)
        if values[i] < hi:
            values[i] += 1
            left -= 1
    return values


def shape_for(scale: float, seed: int = SEED, loans: int | None = None) -> Shape:
    """The exact composition of the synthetic lab at ``scale`` (1 = a busy lab's decade).

    ``loans`` overrides the number of loans (tests use a few small loans instead of one).
    """
    if not 0 < scale <= 64:
        raise ValueError(f"scale {scale} is outside (0, 64]")
    rng = random.Random(seed)
    n_loans = loans or scaled(LOANS, scale)
    per_loan = spread(max(scaled(SPECIMENS, scale), n_loans), n_loans, 1, 10**9, rng)
    showcase = [i % SHOWCASE_EVERY == 0 and per_loan[i] > 1 for i in range(n_loans)]
    powders = _powders(per_loan, showcase, scaled(POWDERS, scale), rng)
    aliquots = _aliquots(powders, showcase, scaled(ALIQUOTS, scale), rng)
    batches = _batches(aliquots, showcase, scaled(BATCHES, scale), rng)
    sessions = [math.ceil(b / BATCHES_PER_SESSION) for b in batches]
    duplicates, extra = _measurement_fill(batches, sessions, scaled(MEASUREMENTS, scale))
    events = math.ceil(EVENTS * scale * EVENT_MARGIN)
    step = (END - FIRST_LOAN) / n_loans
    loan_shapes = tuple(
        LoanShape(
            index=i,
            start=FIRST_LOAN + step * i,
            length=step,
            powders=tuple(powders[i]),
            aliquots=tuple(tuple(a) for a in aliquots[i]),
            batches=batches[i],
            duplicates=tuple(duplicates[i]),
            extra_standards=tuple(extra[i]),
            events=math.ceil(events * per_loan[i] / sum(per_loan)),
            showcase=showcase[i],
        )
        for i in range(n_loans)
    )
    return Shape(
        scale=scale,
        loans=loan_shapes,
        lenders=min(scaled(LENDERS, scale), n_loans),
        measurements=scaled(MEASUREMENTS, scale),
        events=events,
    )


def _powders(
    per_loan: list[int], showcase: list[bool], total: int, rng: random.Random
) -> list[list[int]]:
    """Powders per specimen: the showcase specimen 4, unsampled ones 0, the rest 1-4."""
    slots: list[tuple[int, int]] = []  # (loan, specimen) drilled freely
    result = [[0] * n for n in per_loan]
    fixed = 0
    for loan, count in enumerate(per_loan):
        first = 0
        if showcase[loan]:
            result[loan][0], first = SHOWCASE_POWDERS, 1
            fixed += SHOWCASE_POWDERS
        unsampled = int(count * UNSAMPLED_SHARE) if count >= 10 else 0
        slots += [(loan, k) for k in range(first, count - unsampled)]
    counts = spread(max(total - fixed, len(slots)), len(slots), 1, 4, rng)
    for (loan, k), n in zip(slots, counts, strict=True):
        result[loan][k] = n
    return result


def _aliquots(
    powders: list[list[int]], showcase: list[bool], total: int, rng: random.Random
) -> list[list[list[int]]]:
    """Aliquots per solution: the showcase specimen's 6 each, the rest 1-3."""
    free = [
        (loan, k)
        for loan, row in enumerate(powders)
        for k, n in enumerate(row)
        if not (showcase[loan] and k == 0)
        for _ in range(n)
    ]
    fixed = sum(SHOWCASE_POWDERS * SHOWCASE_ALIQUOTS for s in showcase if s)
    counts = iter(spread(max(total - fixed, len(free)), len(free), 1, 3, rng))
    result: list[list[list[int]]] = []
    for loan, row in enumerate(powders):
        result.append([])
        for k, n in enumerate(row):
            special = showcase[loan] and k == 0
            result[-1].append([SHOWCASE_ALIQUOTS if special else next(counts) for _ in range(n)])
    return result


def _batches(
    aliquots: list[list[list[int]]], showcase: list[bool], total: int, rng: random.Random
) -> list[int]:
    """Column batches per loan, in proportion to its aliquots; each needs 12 sample aliquots."""
    room = [sum(map(sum, row)) // SAMPLES_PER_BATCH for row in aliquots]
    least = [1 if s else 0 for s in showcase]  # the showcase specimen's columns need a batch
    wanted = min(total, sum(room))
    counts = least[:]
    while sum(counts) < wanted:
        loan = rng.randrange(len(room))
        if counts[loan] < room[loan]:
            counts[loan] += 1
    return counts


def _measurement_fill(
    batches: list[int], sessions: list[int], total: int
) -> tuple[list[list[int]], list[list[int]]]:
    """Duplicate sample runs (two rows each) and extra standards so rows sum to ``total``.

    A session of T targets reads standard, target, standard, ... standard: 2T + 1 rows.
    """
    slots: list[tuple[int, int, int]] = []  # (loan, session within the loan, targets)
    for loan, n in enumerate(sessions):
        left = batches[loan]
        for k in range(n):
            taken = min(BATCHES_PER_SESSION, left)
            left -= taken
            slots.append((loan, k, taken * TARGETS_PER_BATCH))
    deficit = max(0, total - sum(2 * targets + 1 for _, _, targets in slots))
    pairs, odd = divmod(deficit, 2)
    room = [targets // TARGETS_PER_BATCH * SAMPLES_PER_BATCH for _, _, targets in slots]
    chosen = [0] * len(slots)
    usable = min(pairs, sum(room))
    while usable:
        for i in range(len(slots)):
            if usable and chosen[i] < room[i]:
                chosen[i] += 1
                usable -= 1
    duplicates = [[0] * n for n in sessions]
    extra = [[0] * n for n in sessions]
    for (loan, k, _), count in zip(slots, chosen, strict=True):
        duplicates[loan][k] = count
    if slots:  # whatever duplicates cannot cover becomes standards at the very end
        loan, k, _ = slots[-1]
        extra[loan][k] = odd + 2 * (pairs - sum(chosen))
    return duplicates, extra
