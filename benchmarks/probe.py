"""Child processes for figures that need a fresh interpreter: ledger verification and its floor.

``python -m benchmarks.probe verify TARGET`` times ``ledger.verify``;
``python -m benchmarks.probe verify-floor FILE`` times the bare loop (raw ``sqlite3``,
``hashlib`` and ``cryptography``'s Ed25519, nothing of tracker imported). Each prints one
JSON line with its own peak resident memory (``VmHWM``). The child must say it: the
kernel's ``ru_maxrss`` for a child also counts the parent's pages it carried between fork
and exec.
"""

from __future__ import annotations

import json
import sys
from collections.abc import Iterator
from typing import Any


def bare_verify(path: str) -> dict[str, object]:
    """Read every event with the sqlite3 module, hash the canonical bytes it stores (by its
    format) and check each signature with the ``cryptography`` package against the key an
    earlier event registered to its operator (nothing of tracker imported)."""
    import sqlite3

    connection = sqlite3.connect(f"file:{path}?mode=ro", uri=True)
    walk = BareChain()
    for _ in walk.events(connection):
        pass
    connection.close()
    return {"events": walk.count, "ok": walk.ok, "head": walk.previous}


class BareChain:
    """The floor's walk of the chain: raw rows hashed by their format, signatures checked
    with ``cryptography``; stops at the first broken link, as ``ledger verify`` does. Both
    floors (verification and the state audit) walk the chain through this one class."""

    def __init__(self) -> None:
        self.previous, self.count, self.ok = "0" * 64, 0, True

    def events(self, connection: Any) -> Iterator[tuple[str, str]]:
        """Each intact event's action and payload, in order."""
        import hashlib

        from cryptography.exceptions import InvalidSignature
        from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PublicKey

        cursor = connection.execute(
            "SELECT seq, at, operator, action, object_ref, parent_ref, prev_hash, payload, hash, "
            "format, os_user, host, db_user, key_id, signature FROM custody_event ORDER BY seq"
        )
        keys: dict[str, tuple[str, Ed25519PublicKey]] = {}
        registers = ("ledger.opened", "operator.added", "key.registered")
        for row in cursor:
            seq, at, operator, action, obj, parent, prev_hash, payload, digest = row[:9]
            fmt, os_user, host, db_user, key_id, signature = row[9:]
            stamp = f"{at[:10]}T{at[11:]}Z"  # stored "2016-01-05 08:00:00.000000" → ISO UTC
            origin = (os_user, host, db_user) if fmt == "tracker-ledger/2" else ()
            fields = (fmt, str(seq), stamp, operator, *origin, action, obj, parent, prev_hash)
            data = "\n".join((*fields, payload)).encode("utf-8")
            if prev_hash != self.previous or hashlib.sha256(data).hexdigest() != digest:
                self.ok = False
                return
            if fmt == "tracker-ledger/2":
                if action in registers or action == "key.revoked":
                    facts = json.loads(payload)
                    key = facts.get("key")
                    if action in registers and key:
                        public = bytes.fromhex(key["public_key"])
                        keys[key["id"]] = (
                            key["operator"],
                            Ed25519PublicKey.from_public_bytes(public),
                        )
                owner, public_key = keys.get(key_id, ("", None))
                try:
                    if public_key is None or owner != operator:
                        raise InvalidSignature
                    public_key.verify(bytes.fromhex(signature), digest.encode("ascii"))
                except InvalidSignature:
                    self.ok = False
                    return
                if action == "key.revoked":
                    keys.pop(facts["key_id"], None)
            self.previous, self.count = digest, self.count + 1
            yield action, payload


def tracker_verify(target: str) -> dict[str, object]:
    from tracker.db.database import open_database
    from tracker.services.ledger import chain

    db = open_database(target, upgrade=False)
    try:
        report = chain.verify(db)
    finally:
        db.close()
    return {"events": report.events, "ok": report.ok, "head": report.head_hash}


def peak_mb() -> float:
    """This process's peak resident memory in MB: VmHWM on Linux, ru_maxrss elsewhere."""
    from pathlib import Path

    try:
        for line in Path("/proc/self/status").read_text(encoding="ascii").splitlines():
            if line.startswith("VmHWM:"):
                return int(line.split()[1]) / 1024  # kB
    except OSError:
        pass
    import resource

    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024


def main(argv: list[str]) -> int:
    from benchmarks.children import print_timed

    what, target = argv[1], argv[2]
    return print_timed(
        lambda: bare_verify(target) if what == "verify-floor" else tracker_verify(target)
    )


if __name__ == "__main__":
    sys.exit(main(sys.argv))
