"""Child processes for the state audit's figure: the audit and its floor, each fresh.

``python -m benchmarks.audit_probe audit TARGET`` times ``audit.audit`` (the whole lab:
the ledger replayed, every row compared); ``python -m benchmarks.audit_probe audit-floor
FILE`` times the same answer computed by hand: the chain walked as its floor walks it
(``probe.BareChain``: raw ``sqlite3`` rows, ``hashlib``, ``cryptography``), ``json``
payloads, dictionaries, SQLite's own schema for the columns' types — nothing of tracker's
services imported. Both print one JSON line: events replayed, rows compared, discrepancies
found, seconds and the process's peak resident memory (see ``probe.peak_mb``).
"""

from __future__ import annotations

import json
import sys
from collections.abc import Callable
from typing import Any

# The public IDs' prefixes by table (the README's ID scheme), and ISO/IEC 7064 MOD 37-2.
PREFIXES = {
    "lender": "LE",
    "loan": "LN",
    "specimen": "SP",
    "powder": "PW",
    "solution": "SO",
    "aliquot": "AQ",
    "column_batch": "CB",
    "batch_position": "CP",
    "cut": "CU",
    "reference_material": "RM",
    "instrument_session": "IS",
    "location": "LC",
    "shipment": "SH",
    "operator": "OP",
    "document": "DC",
    "user_material": "MT",
    "label_job": "PJ",
}
_ALPHABET = "0123456789ABCDEFGHIJKLMNOPQRSTUVWXYZ"


def _public(prefix: str, number: int) -> str:
    digits = f"{number:05d}"
    total = 0
    for char in prefix + digits:  # the pure system MOD 37-2: modulus 37, weights 2^i
        total = (2 * (total + _ALPHABET.index(char))) % 37
    return f"{prefix}-{digits}-{(_ALPHABET + '*')[(1 - total) % 37]}"


Read = Callable[[Any], Any]


def _as_is(value: Any) -> Any:
    return value


def _moment(value: Any) -> Any:
    return None if value is None else f"{value[:10]}T{value[11:]}Z"  # stored → ISO 8601 UTC


def _flag(value: Any) -> Any:
    return None if value is None else bool(value)


def _number(value: Any) -> Any:
    return None if value is None else float(value)


def _parsed(value: Any) -> Any:
    return None if value is None else json.loads(value)


def _digest(value: Any) -> Any:
    import hashlib

    return None if value is None else "sha256:" + hashlib.sha256(value).hexdigest()


def _reference(prefix: str) -> Read:
    def read(value: Any) -> Any:
        return None if value is None else _public(prefix, value)

    return read


_BY_TYPE: dict[str, Read] = {
    "DATETIME": _moment,
    "BOOLEAN": _flag,
    "FLOAT": _number,
    "JSON": _parsed,
    "BLOB": _digest,
}


def _readers(connection: Any, table: str) -> tuple[list[str], list[int], list[Read]]:
    """Each column's name, which are the key, and how a stored value reads as a fact."""
    targets = {
        row[3]: row[2]
        for row in connection.execute(f"PRAGMA foreign_key_list({table})")
        if row[4] == "id"  # a reference to a row's number (not to an operator's code)
    }
    names: list[str] = []
    key: list[int] = []
    readers: list[Read] = []
    for _, name, declared, _, _, pk in connection.execute(f"PRAGMA table_info({table})"):
        names.append(name)
        if pk:
            key.append(len(names) - 1)
        prefix = PREFIXES.get(targets.get(name, ""))
        if prefix is not None:
            readers.append(_reference(prefix))
        else:
            readers.append(_BY_TYPE.get(declared.upper(), _as_is))
    return names, key, readers


def bare_audit(path: str) -> dict[str, object]:
    """Walk the chain as the verification floor does (hashes and signatures), replay its
    facts into dictionaries, then compare every row by hand."""
    import sqlite3

    from benchmarks.probe import BareChain  # nothing of tracker's services imported

    connection = sqlite3.connect(f"file:{path}?mode=ro", uri=True)
    books: dict[str, dict[str, dict[str, Any]]] = {}
    chain = BareChain()
    for _, payload in chain.events(connection):  # a broken chain: nothing after it replayed
        if '"facts":' not in payload:
            continue
        facts = json.loads(payload)["facts"]
        for table, keys in facts.get("deleted", {}).items():
            for key in keys:
                books.get(table, {}).pop(key, None)
        for table, rows in facts.get("created", {}).items():
            books.setdefault(table, {}).update(rows)
        for table, rows in facts.get("changed", {}).items():
            held = books.setdefault(table, {})
            for key, values in rows.items():
                held.setdefault(key, {}).update(values)
    rows = found = 0
    tables = [
        name
        for (name,) in connection.execute(
            "SELECT name FROM sqlite_master WHERE type = 'table' AND name NOT LIKE 'sqlite_%' "
            "AND name NOT IN ('custody_event', 'alembic_version')"
        )
    ]
    for table in tables:
        names, key, readers = _readers(connection, table)
        prefix = PREFIXES.get(table)
        held = books.pop(table, {})
        for raw in connection.execute(f"SELECT * FROM {table}"):
            rows += 1
            row_key = _public(prefix, raw[key[0]]) if prefix else "/".join(str(raw[n]) for n in key)
            stated = held.pop(row_key, None)
            if stated is None:
                found += 1
                continue
            for n, (name, read) in enumerate(zip(names, readers, strict=True)):
                if n not in key and stated.get(name) != read(raw[n]):
                    found += 1
        found += len(held)
    connection.close()
    return {"events": chain.count, "rows": rows, "discrepancies": found}


def tracker_audit(target: str) -> dict[str, object]:
    from tracker.db.database import open_database
    from tracker.services.ledger import audit

    db = open_database(target, upgrade=False)
    try:
        report = audit.audit(db)
    finally:
        db.close()
    return {
        "events": report.coverage.events,
        "rows": report.rows,
        "discrepancies": len(report.discrepancies),
    }


def main(argv: list[str]) -> int:
    from benchmarks.children import print_timed

    what, target = argv[1], argv[2]
    return print_timed(
        lambda: bare_audit(target) if what == "audit-floor" else tracker_audit(target)
    )


if __name__ == "__main__":
    sys.exit(main(sys.argv))
