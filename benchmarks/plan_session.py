"""Synthetic instrument exports: standard–sample bracketing rows read through the plan's profile.

A session reads the bracketing standard, a target, the standard, the next target, ... and ends
on the standard, so every target is bracketed (2T + 1 rows); duplicated sample runs follow
the first pass, each again followed by a standard. Ratios are invented: a slowly drifting
standard near 2.12 and targets offset from it by their δ value.
"""

from __future__ import annotations

import random
from dataclasses import dataclass

from benchmarks.plan import REFERENCES, STANDARD

STANDARD_RATIO = 2.1208  # invented value for the synthetic standard's 44/40 ratio
DRIFT_PER_RUN = 2e-7  # relative drift of the standard per run (invented)


@dataclass(frozen=True)
class Target:
    """What a column's cut holds, as the session will read it by the cut's label."""

    cut: str  # public ID on the vial's label
    kind: str  # sample, blank or reference
    reference: str | None = None  # the reference material's name


def session_csv(targets: list[Target], duplicates: int, extra: int, rng: random.Random) -> bytes:
    """The export file's bytes: header, then runs in order with their 44/40 ratio and 2SE."""
    truth = {t.cut: _delta(t, rng) for t in targets}
    order: list[str | None] = [None]  # None: the bracketing standard
    for target in targets:
        order += [target.cut, None]
    samples = [t.cut for t in targets if t.kind == "sample"]
    for cut in samples[:duplicates]:
        order += [cut, None]
    order += [None] * extra
    lines = ["Run,Sample,44Ca/40Ca,2SE"]
    for run, vial in enumerate(order, start=1):
        base = STANDARD_RATIO * (1 + DRIFT_PER_RUN * run)
        if vial is None:
            name, ratio = STANDARD, base * (1 + rng.gauss(0, 2e-6))
        else:
            name, ratio = vial, base * (1 + (truth[vial] + rng.gauss(0, 0.03)) / 1000)
        lines.append(f"{run},{name},{ratio:.8f},{rng.uniform(1.5e-5, 3e-5):.7f}")
    return ("\n".join(lines) + "\n").encode("utf-8")


def _delta(target: Target, rng: random.Random) -> float:
    """The invented true δ (‰) of what a cut holds."""
    if target.kind == "reference" and target.reference is not None:
        return REFERENCES[target.reference] + rng.gauss(0, 0.04)
    if target.kind == "blank":
        return rng.gauss(-1.0, 0.8)
    return rng.gauss(-0.9, 0.25)
