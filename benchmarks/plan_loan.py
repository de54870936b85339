"""One loan's life as service requests: listed, received, drilled, dissolved, split, columned,
measured — and, for loans that went home before the decade ended, returned.

Masses are drawn as whole balance steps (µg for powders, 0.1 mg for solutions), so every
weighing is typed exactly as a person would type it and every closure is exact. Limits are
set so that no drill breaks the loan's terms; the executors check that anyway.
"""

from __future__ import annotations

import random
from dataclasses import dataclass, field
from datetime import datetime, timedelta
from typing import Any

from benchmarks.plan import (
    MANAGERS,
    PROFILE,
    REFERENCES,
    STANDARD,
    TECHNICIANS,
    Ids,
    Step,
    World,
)
from benchmarks.plan_session import Target, session_csv
from benchmarks.shape import (
    BATCHES_PER_SESSION,
    END,
    SAMPLES_PER_BATCH,
    SHOWCASE_COLUMNS,
    LoanShape,
)
from tracker.domain.ids import Kind

_TISSUES = [("enamel",), ("enamel", "dentine"), ("enameloid",), ("otolith",), ("shell",)]
_ELEMENT = {
    "enamel": "tooth",
    "dentine": "tooth",
    "enameloid": "tooth",
    "otolith": "otolith",
    "shell": "shell",
}
PER_SPECIMEN_MG = 30


def mg(ug: int) -> str:
    """A microbalance reading (whole µg) typed in mg with three decimals."""
    return f"{ug // 1000}.{ug % 1000:03d} mg"


def grams(units: int) -> str:
    """An analytical-balance reading (whole 0.1 mg) typed in g with four decimals."""
    return f"{units // 10000}.{units % 10000:04d} g"


@dataclass
class Vial:
    id: str
    purpose: str  # which boxes it moves between
    place: str | None = None
    mass: int = 0  # powder µg or solution 0.1 mg still in the vial
    extra: dict[str, Any] = field(default_factory=dict)


class LoanPlanner:
    """Drafts one loan's steps in order, each stamped as it is drafted."""

    def __init__(self, loan: LoanShape, ids: Ids, world: World, rng: random.Random) -> None:
        self.loan, self.ids, self.world, self.rng = loan, ids, world, rng
        self.steps: list[Step] = []
        self.tissues = rng.choice(_TISSUES)
        self.partial = [[rng.random() < 0.5 for _ in range(n)] for n in loan.powders]
        bench_done = loan.start + loan.length * 0.8
        self.back = bench_done + timedelta(days=rng.randint(300, 700))  # the loan goes home
        self.due = self.back + timedelta(days=rng.randint(20, 200))
        self.returned = self.back + timedelta(days=1) < END
        total = self._count_window()
        self.spacing = loan.length * 0.8 / max(total, 1)
        self.expected = total
        self.specimens: list[Vial] = []
        self.powders: list[Vial] = []
        self.solutions: list[Vial] = []

    # ------------------------------------------------------------------ counting
    def _returns_count(self) -> int:
        if not self.returned:
            return 0
        partial = sum(map(sum, self.partial))
        return self.loan.specimens + partial + sum(self.loan.powders) + 1

    def _count_window(self) -> int:
        loan = self.loan
        powders, sampled = sum(loan.powders), sum(1 for n in loan.powders if n)
        aliquots = sum(map(sum, loan.aliquots))
        positions = loan.batches * (SAMPLES_PER_BATCH + 2)
        fixed = 1 + 2 * loan.specimens + 3 * powders + aliquots + loan.batches + 2 * positions
        fixed += 2 * loan.sessions
        moves = 2 * sampled + 2 * powders + aliquots + positions
        self.extra_moves = max(0, loan.events - fixed - moves - self._returns_count())
        return fixed + moves + self.extra_moves

    # ------------------------------------------------------------------ drafting
    def emit(self, by: str, do: str, args: dict[str, Any], makes: Kind | None = None) -> str:
        made = self.ids.take(makes) if makes else None
        at = self.loan.start + self.spacing * len(self.steps)
        self.steps.append(Step(at, by, do, args, made))
        return made or ""

    @property
    def now(self) -> datetime:
        return self.loan.start + self.spacing * len(self.steps)

    def tech(self) -> str:
        return self.rng.choice(TECHNICIANS)

    def move(self, vial: Vial) -> None:
        boxes = [b for b in self.world.places[vial.purpose] if b != vial.place]
        vial.place = self.rng.choice(boxes)
        self.emit(self.tech(), "move", {"item": vial.id, "to": vial.place})

    def window(self) -> list[Step]:
        """The loan's bench work, in order; every step inside the loan's window."""
        loan_id = self._loan()
        self._specimens(loan_id)
        self._drills()
        self._dissolve()
        aliquots = self._aliquots()
        self._extra_moves(aliquots)
        cuts = self._columns(aliquots)
        self._sessions(cuts)
        if len(self.steps) != self.expected:
            raise AssertionError(f"planned {self.expected} steps, drafted {len(self.steps)}")
        return self.steps

    def _loan(self) -> str:
        rng, index = self.rng, self.loan.index
        drills = [[rng.randint(1500, 6000) for _ in range(n)] for n in self.loan.powders]
        self.drill_ug = drills
        total_ug = sum(map(sum, drills)) * rng.uniform(1.05, 1.6)
        sampled = sum(1 for n in self.loan.powders if n)
        terms = {
            "permitted_tissues": list(self.tissues),
            "max_mass_per_specimen": f"{PER_SPECIMEN_MG} mg",
            "max_total_mass": f"{int(total_ug // 1000) + 1} mg",
            "max_specimens_sampled": sampled + rng.randint(0, 3),
            "due_on": self.due.date().isoformat(),
            "powder_disposition": "return",
            "solution_disposition": "destroy",
        }
        lender = self.world.lenders[index % len(self.world.lenders)]
        args = {
            "lender": lender,
            "reference": f"SYN-{self.loan.start.year}-{index + 1:04d}",
            "title": f"Synthetic loan {index + 1:04d}: {' and '.join(self.tissues)}, Ca",
            "borrower": f"Synthetic Borrower {rng.randint(1, 12):02d}",
            "received_on": self.loan.start.date().isoformat(),
            "terms": terms,
        }
        return self.emit(self.rng.choice(MANAGERS), "loan", args, Kind.LOAN)

    def _specimens(self, loan_id: str) -> None:
        rng, number = self.rng, self.loan.index + 1
        for k in range(self.loan.specimens):
            young = round(rng.uniform(0.01, 60.0), 2)
            args: dict[str, Any] = {
                "loan": loan_id,
                "catalog_number": f"SYN P {number:04d}.{k + 1:03d}",
                "institution_code": f"SM{number % 9973:04d}",
                "scientific_name": f"Synthetic taxon {rng.randint(1, 400):03d}",
                "skeletal_element": _ELEMENT[self.tissues[0]],
                "locality": f"Synthetic locality {rng.randint(1, 900):04d}",
                "formation": f"Synthetic Formation {rng.randint(1, 60):02d}",
                "age_min_ma": young,
                "age_max_ma": round(young + rng.uniform(0.0, 5.0), 2),
            }
            if rng.random() < 0.5:
                args["extra"] = {"fieldNumber": f"SYN-F-{rng.randint(1, 99999):05d}"}
            made = self.emit(self.tech(), "specimen", args, Kind.SPECIMEN)
            self.specimens.append(Vial(made, "loan"))
        home = self.world.places["loan"][self.loan.index % len(self.world.places["loan"])]
        for vial in self.specimens:
            vial.place = home
            args = {
                "specimen": vial.id,
                "condition": "complete; synthetic record",
                "location": home,
            }
            self.emit(self.tech(), "checkin", args)

    def _drills(self) -> None:
        bench = self.world.places["bench"][0]
        for vial, masses in zip(self.specimens, self.drill_ug, strict=True):
            if not masses:
                continue
            home, vial.place = vial.place, bench
            self.emit(self.tech(), "move", {"item": vial.id, "to": bench})
            for n, mass in enumerate(masses):
                tare = self.rng.randint(800_000, 1_600_000)
                args = {
                    "specimen": vial.id,
                    "tissue": self.rng.choice(self.tissues),
                    "site": f"site {n + 1}",
                    "tare": mg(tare),
                    "gross": mg(tare + mass),
                }
                made = self.emit(self.tech(), "drill", args, Kind.POWDER)
                self.powders.append(Vial(made, "powder", mass=mass))
            vial.place = home
            self.emit(self.tech(), "move", {"item": vial.id, "to": home})
        for powder in self.powders:
            self.move(powder)

    def _dissolve(self) -> None:
        flags = [p for row in self.partial for p in row[: len(row)]]
        for powder, partial in zip(self.powders, flags, strict=True):
            tare, units = self.rng.randint(50_000, 60_000), self.rng.randint(8_000, 15_000)
            args: dict[str, Any] = {
                "powder": powder.id,
                "acid": "2 M HNO3",
                "vial_tare": grams(tare),
                "vial_gross": grams(tare + units),
            }
            taken = powder.mass
            if partial:
                taken = int(powder.mass * self.rng.uniform(0.6, 0.9))
                args["powder_taken"] = mg(taken)
            powder.mass -= taken
            made = self.emit(self.tech(), "dissolve", args, Kind.SOLUTION)
            conc = taken / 1000 * 370 / (units / 10000) * self.rng.uniform(0.95, 1.02)
            self.solutions.append(Vial(made, "solution", mass=units, extra={"conc": conc}))
        for solution in self.solutions:
            self.move(solution)
        for solution in self.solutions:
            args = {
                "solution": solution.id,
                "element": "Ca",
                "value": f"{solution.extra['conc']:.1f} ug/g",
                "relative_uncertainty_percent": 2.0,
                "method": "ICP-OES",
            }
            solution.extra["conc"] = round(solution.extra["conc"], 1)
            self.emit(self.tech(), "concentration", args)

    def _aliquots(self) -> list[Vial]:
        counts = [n for row in self.loan.aliquots for n in row]
        made: list[Vial] = []
        for solution, count in zip(self.solutions, counts, strict=True):
            for _ in range(count):
                tare, units = self.rng.randint(19_000, 21_000), self.rng.randint(200, 600)
                purpose = self.rng.choice(["isotopes", "isotopes", "archive", "concentration"])
                args = {
                    "solution": solution.id,
                    "tare": grams(tare),
                    "gross": grams(tare + units),
                    "purpose": purpose,
                }
                loaded = units / 10000 * solution.extra["conc"]
                vial = Vial(self.emit(self.tech(), "aliquot", args, Kind.ALIQUOT), "aliquot")
                vial.extra = {"loaded": loaded, "solution": solution}
                solution.mass -= units
                made.append(vial)
        for vial in made:
            self.move(vial)
        return made

    def _extra_moves(self, aliquots: list[Vial]) -> None:
        """Vials reshuffled between boxes until the loan's share of events is reached."""
        live = [p for p in self.powders if p.mass > 0] + [*self.solutions, *aliquots]
        live = live or self.specimens  # a loan with nothing drilled moves its specimens
        for n in range(self.extra_moves):
            self.move(live[n % len(live)])

    def _columns(self, aliquots: list[Vial]) -> list[list[Target]]:
        """Batches of 12 sample columns, a procedural blank and a reference material each."""
        needed = self.loan.batches * SAMPLES_PER_BATCH
        first: list[Vial] = []
        rest = aliquots
        if self.loan.showcase:  # the showcase specimen's first 9 aliquots, and no others
            showcase = sum(self.loan.aliquots[0])
            first, rest = aliquots[:SHOWCASE_COLUMNS], aliquots[showcase:]
        chosen = first + self.rng.sample(rest, needed - len(first))
        batches: list[list[Target]] = []
        for b in range(self.loan.batches):
            batch = self.emit(self.tech(), "batch", self._batch_args(), Kind.COLUMN_BATCH)
            reference = list(REFERENCES)[b % len(REFERENCES)]
            columns = [(a, "sample") for a in chosen[b * SAMPLES_PER_BATCH :][:SAMPLES_PER_BATCH]]
            positions = []
            for vial, kind in [*columns, (None, "blank"), (None, "reference")]:
                args: dict[str, Any] = {"batch": batch, "kind": kind}
                if vial is not None:
                    args["aliquot"] = vial.id
                if kind == "reference":
                    args |= {"reference_material": reference, "loaded_ug": 20.0, "loaded_u_ug": 0.2}
                made = self.emit(self.tech(), "position", args, Kind.POSITION)
                loaded = vial.extra["loaded"] if vial is not None else 20.0
                positions.append((made, kind, loaded))
            targets = [self._cut(made, kind, loaded, reference) for made, kind, loaded in positions]
            for target in targets:
                self.move(Vial(target.cut, "cut"))
            batches.append(targets)
        return batches

    def _batch_args(self) -> dict[str, Any]:
        return {
            "name": f"Synthetic batch {self.loan.index + 1:04d}-{self.rng.randint(1, 999):03d}",
            "performed_on": self.now.date().isoformat(),
            "element": "Ca",
            "resin": "synthetic cation-exchange resin",
            "elution_scheme": "load in 2 M HNO3; matrix off; Ca collected (synthetic)",
            "cut_names": ["matrix", "Ca"],
        }

    def _cut(self, position: str, kind: str, loaded: float, reference: str) -> Target:
        if kind == "blank":
            recovered = f"0.{self.rng.randint(5, 30):03d} ug"
        else:
            share = min(1.0, self.rng.gauss(0.98, 0.015))
            recovered = f"{loaded * share:.3f} ug"
        args = {
            "position": position,
            "cut": "Ca",
            "recovered": recovered,
            "relative_uncertainty_percent": 1.5,
        }
        made = self.emit(self.tech(), "cut", args, Kind.CUT)
        return Target(made, kind, reference if kind == "reference" else None)

    def _sessions(self, batches: list[list[Target]]) -> None:
        number = self.loan.index + 1
        for k in range(self.loan.sessions):
            group = batches[k * BATCHES_PER_SESSION :][:BATCHES_PER_SESSION]
            targets = [t for batch in group for t in batch]
            content = session_csv(
                targets, self.loan.duplicates[k], self.loan.extra_standards[k], self.rng
            )
            args = {
                "profile": PROFILE,
                "filename": f"synthetic-run-{number:04d}-{k + 1}.csv",
                "content": content,
                "name": f"Synthetic session {number:04d}.{k + 1}",
                "instrument": "Synthetic MC-ICP-MS 1",
                "element": "Ca",
                "bracketing_standard": STANDARD,
            }
            made = self.emit(self.tech(), "session_import", args, Kind.INSTRUMENT_SESSION)
            self.emit(self.tech(), "reduce", {"session": made})

    def returns(self) -> list[Step]:
        """The loan going home: specimens, unused powder (weighed), residual solutions
        destroyed (weighed), then the loan marked returned. Empty for loans still open."""
        if not self.returned:
            return []
        drafts: list[tuple[str, str, dict[str, Any]]] = []
        for vial in self.specimens:
            drafts.append(
                (
                    self.tech(),
                    "return",
                    {"specimen": vial.id, "condition": "as received; drilled where recorded"},
                )
            )
        for powder in (p for p in self.powders if p.mass > 0):
            tare = self.rng.randint(800_000, 1_600_000)
            drafts.append(
                (
                    self.tech(),
                    "dispose",
                    {
                        "item": powder.id,
                        "outcome": "returned",
                        "reason": "unused powder goes home",
                        "residual_tare": mg(tare),
                        "residual_gross": mg(tare + powder.mass),
                    },
                )
            )
        for solution in self.solutions:
            tare = self.rng.randint(50_000, 60_000)
            drafts.append(
                (
                    self.tech(),
                    "dispose",
                    {
                        "item": solution.id,
                        "outcome": "destroyed",
                        "reason": "residual solution destroyed as the terms require",
                        "residual_tare": grams(tare),
                        "residual_gross": grams(tare + solution.mass),
                    },
                )
            )
        loan = self.steps[0].makes
        drafts.append((self.rng.choice(MANAGERS), "loan_returned", {"loan": loan}))
        step = timedelta(seconds=30)
        return [Step(self.back + step * n, by, do, args) for n, (by, do, args) in enumerate(drafts)]
