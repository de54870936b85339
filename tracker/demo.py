"""Build the demo database from ``demo_db/scenario.toml``, deterministically.

The scenario is plain text a person can read and edit. Every step goes through
the same service a person would call, with the ledger clock set to the step's
time, so the demo database — IDs, timestamps and hash chain — is identical on
every machine.

Its people sign with invented keys derived from public seeds (``tracker demo key
<code>``), and its events say they come from an invented user and host: the signatures
are the same on every machine, and they prove nothing about anyone — anybody can derive
these keys. Building the demo also leaves each demo operator's key file in the user's
config folder (when it is not there yet), encrypted with the demo's own passphrase,
:data:`DEMO_PASSPHRASE`, so a person can try writing as a demo operator.
"""

from __future__ import annotations

import tomllib
from collections.abc import Callable
from dataclasses import dataclass, field
from datetime import datetime
from importlib import resources
from pathlib import Path
from typing import Any

from tracker.db import keyfiles, outputs
from tracker.db.database import Database
from tracker.db.engine import resolve_url, sqlite_path
from tracker.db.keyring import Keyring
from tracker.db.sqlite_files import fold_log
from tracker.domain.errors import InputError
from tracker.domain.signing import Signer, seeded_signer
from tracker.services.admin import materials, setup
from tracker.services.bench import chemistry, columns, custody, drilling, solutions
from tracker.services.instrument import reduction, results, screening, sessions
from tracker.services.labels import handling
from tracker.services.loans import amendments, lending, shipments, specimens

Service = Callable[[Database, str, dict[str, Any]], Any]

SERVICES: dict[str, Service] = {
    "operator": setup.add_operator,
    "location": setup.add_location,
    "lender": lending.add_lender,
    "loan": lending.add_loan,
    "specimen": specimens.add_specimen,
    "checkin": specimens.check_in,
    "return": specimens.return_specimen,
    "move": custody.move,
    "dispose": custody.dispose,
    "loan_returned": custody.mark_loan_returned,
    "drill": drilling.drill,
    "dissolve": solutions.dissolve,
    "concentration": solutions.record_concentration,
    "aliquot": solutions.take_aliquot,
    "reference": chemistry.add_reference_material,
    "batch": chemistry.create_batch,
    "position": chemistry.add_position,
    "amend": amendments.amend_loan,
    "attach": amendments.attach_document,
    "material": materials.add_material,
    "cut": columns.record_cut,
    "blank_delta": columns.set_blank_delta,
    "profile": sessions.save_profile,
    "session_import": sessions.import_session,
    "reduce": reduction.reduce_session,
    "reference_value": results.set_reference_value,
    "curve": screening.add_curve,
    "loan_curve": screening.use_curve,
    "shipment": shipments.add_shipment,
    "photo": shipments.add_photo,
    "label_queue": handling.queue_labels,
    "label_cancel": handling.cancel_labels,
}


# The demo's passphrase, documented in the README: it unlocks the demo operators' key files.
DEMO_PASSPHRASE = "demo passphrase, invented"
# Where the demo's events say they come from (invented, so its ledger is the same anywhere).
DEMO_MACHINE = ("demo", "demo-lab.invalid")


def demo_signer(code: str) -> Signer:
    """A demo operator's invented key: derived from a public seed, so anyone can sign with it."""
    return seeded_signer(f"tracker demo key {code}")


def demo_keyring(codes: list[str]) -> Keyring:
    """The demo people's keys, unlocked, and the demo's invented user and host."""
    return Keyring({s.key_id: s for s in map(demo_signer, codes)}, machine=DEMO_MACHINE)


def demo_operators(data: dict[str, Any] | None = None) -> list[str]:
    """The founder's code and every operator the scenario adds."""
    data = data or load_scenario()
    added = [step["args"]["code"] for step in data["steps"] if step["do"] == "operator"]
    return [data["founder"]["code"], *added]


def leave_key_files(codes: list[str]) -> None:
    """Each demo operator's key file in the config folder, unless one is there already."""
    for code in codes:
        signer = demo_signer(code)
        if keyfiles.file_for(signer.key_id) is None:
            keyfiles.write_key(code, signer, DEMO_PASSPHRASE)


def scenario_path() -> Path:
    """The scenario in the source tree, else the copy packaged into the wheel."""
    source = Path(__file__).resolve().parents[1] / "demo_db" / "scenario.toml"
    if source.exists():
        return source
    return Path(str(resources.files("tracker") / "_demo_db" / "scenario.toml"))


@dataclass
class StepClock:
    """A clock that reads whatever time the current step says."""

    now: datetime

    def __call__(self) -> datetime:
        return self.now


@dataclass
class Replay:
    db: Database
    clock: StepClock
    folder: Path
    aliases: dict[str, str] = field(default_factory=dict)

    def resolve(self, value: Any, key: str = "") -> Any:
        """Aliases become IDs; ``document``, ``file`` and ``definition_file`` name files
        beside the scenario (a document is uploaded, a file's bytes and name are handed
        over, a definition file is read as TOML)."""
        if key in ("document", "photo") and isinstance(value, str):
            path = self.folder / value
            return {"filename": path.name, "content": path.read_bytes()}
        if isinstance(value, dict) and "file" in value:
            path = self.folder / value.pop("file")
            value = {**value, "filename": path.name, "content": path.read_bytes()}
        if isinstance(value, dict) and "definition_file" in value:
            path = self.folder / value.pop("definition_file")
            value = {**value, "definition": tomllib.loads(path.read_text(encoding="utf-8"))}
        if isinstance(value, str) and value.startswith("@"):
            try:
                return self.aliases[value[1:]]
            except KeyError:
                raise InputError("scenario", value, "alias used before it is defined") from None
        if isinstance(value, dict):
            return {name: self.resolve(item, name) for name, item in value.items()}
        if isinstance(value, list):
            return [self.resolve(item) for item in value]
        return value

    def run(self, number: int, step: dict[str, Any]) -> None:
        action = step["do"]
        if action not in SERVICES:
            raise InputError(f"steps[{number}].do", action, "unknown demo action")
        self.clock.now = _aware(step["at"])
        args = self.resolve(step.get("args", {}))
        if action == "operator":  # the person's invented key, registered with them
            args = {**args, "public_key": demo_signer(args["code"]).public_hex}
        answer = SERVICES[action](self.db, step["by"], args)
        if "as" in step:
            self.aliases[step["as"]] = answer.item.id


def _aware(value: datetime | str) -> datetime:
    moment = value if isinstance(value, datetime) else datetime.fromisoformat(value)
    if moment.tzinfo is None:
        raise InputError("scenario.at", str(value), "needs a time zone")
    return moment


def load_scenario(path: Path | None = None) -> dict[str, Any]:
    with (path or scenario_path()).open("rb") as handle:
        return tomllib.load(handle)


def build_demo(out: Path, scenario: Path | None = None) -> int:
    """Write the demo database to a new file ``out``; returns the number of steps.

    An existing ``out`` is refused (a demo never replaces anything, least of all a lab's
    database); the demo is built under a hidden name beside it and published only when
    whole (:mod:`tracker.db.outputs`).
    """
    _refuse_existing(out)
    outputs.check_target(out, "out", forceable=False)
    building = outputs.temp_path(out.parent, out.name)
    try:
        steps = run_scenario(building, scenario)
        fold_log(building)  # the file alone must hold every row before it gets its name
        outputs.publish(building, out, "out", forceable=False)
        leave_key_files(demo_operators(load_scenario(scenario)))
    finally:
        outputs.discard(*(Path(f"{building}{suffix}") for suffix in ("", *outputs.SIDE_SUFFIXES)))
    return steps


def run_scenario(target: str | Path, scenario: Path | None = None) -> int:
    """Open a new database at ``target`` (a file or an empty PostgreSQL database) and run
    the scenario's steps through the services; returns the number of steps."""
    data = load_scenario(scenario)
    steps = sorted(data["steps"], key=lambda s: _aware(s["at"]))  # stable: file order on ties
    founder = data["founder"]
    clock = StepClock(_aware(founder["at"]))
    first = {"code": founder["code"], "name": founder["name"]}
    keyring = demo_keyring(demo_operators(data))
    db = setup.init_database(
        target, first, clock, signer=demo_signer(founder["code"]), keyring=keyring
    )
    try:
        replay = Replay(db, clock, (scenario or scenario_path()).parent)
        for number, step in enumerate(steps):
            replay.run(number, step)
    finally:
        db.close()
    return len(steps)


def free_demo_path(folder: Path, name: str = "tracker-demo.sqlite") -> Path:
    """The first of ``tracker-demo.sqlite``, ``tracker-demo-2.sqlite`` … in ``folder`` that is
    free with its logs: running the demo again builds a second demo beside the first."""
    for candidate in outputs.variants(folder / name):
        if not any(_taken(Path(f"{candidate}{s}")) for s in ("", *outputs.SIDE_SUFFIXES)):
            return candidate
    raise InputError("out", str(folder / name), "no free file name; give one with --out")


def demo_file(database: str) -> Path:
    """The new SQLite file a database named for the demo (``--db``, ``TRACKER_DB``) is:
    the demo is built there, never over an existing file and never in a shared server's
    database."""
    path = sqlite_path(resolve_url(database))
    if path is None:
        raise InputError(
            "database", database, "is not a file; the demo is built in a new SQLite file"
        )
    _refuse_existing(path, "database")
    return path


def _taken(path: Path) -> bool:
    return path.exists() or path.is_symlink()


def _refuse_existing(out: Path, field: str = "out") -> None:
    """One line for an existing file (or a database's leftover log beside the name)."""
    for suffix in ("", *outputs.SIDE_SUFFIXES):
        taken = Path(f"{out}{suffix}")
        if _taken(taken):
            raise InputError(
                field,
                str(taken),
                "already exists; the demo never replaces a file — choose another path",
            )
