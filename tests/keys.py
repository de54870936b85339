"""The test suite's signing keys: invented, derived from public seeds, like the demo's.

Every test starts with the keys of the seeded operators (``boss``, ``tech``) and of the
demo's people unlocked in this process's keyring, and with their key files (locked with
:data:`PASSPHRASE`) in the session's config folder, where TRACKER_PASSPHRASE names it for
commands run in child processes. Tests of unlocking itself empty the keyring first
(the ``locked`` fixture).
"""

from __future__ import annotations

from tracker.db import keyfiles
from tracker.db.keyring import PROCESS
from tracker.demo import DEMO_PASSPHRASE, demo_operators, demo_signer
from tracker.domain.signing import Signer, seeded_signer

PASSPHRASE = DEMO_PASSPHRASE  # one passphrase for every invented key of the session
SEEDED = ("boss", "tech")


def signer(code: str) -> Signer:
    """A test operator's invented key."""
    return seeded_signer(f"tracker test key {code}")


def unlock_all() -> None:
    """The seeded operators' and the demo people's keys, unlocked in this process."""
    for code in SEEDED:
        PROCESS.add(signer(code))
    for code in demo_operators():
        PROCESS.add(demo_signer(code))


def write_key_files() -> None:
    """Key files for the seeded operators in the config folder (the demo leaves its own)."""
    for code in SEEDED:
        if keyfiles.file_for(signer(code).key_id) is None:
            keyfiles.write_key(code, signer(code), PASSPHRASE)


def person(code: str, name: str, role: str = "technician") -> dict[str, str]:
    """``add_operator``'s request for a new person with their invented key (unlocked)."""
    PROCESS.add(signer(code))
    return {"code": code, "name": name, "role": role, "public_key": signer(code).public_hex}
