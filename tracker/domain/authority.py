"""Who may sign what: operators, their roles and their keys, as the ledger's own events say.

The ``operator`` table's ``role`` and ``active`` columns are for display; they decide
nothing. Authority is replayed from the ledger: the founder's ``ledger.opened``,
``operator.added``, ``operator.role_changed``, ``operator.deactivated``, ``key.registered``
and ``key.revoked`` — each naming the operator as its object, each signed by a manager (the
founder's first event and the first key of a ledger kept before signing sign themselves).
Editing a table therefore cannot make a technician a manager: the verifier and every unit
of work read roles and keys from here.

:meth:`Authority.admit` is the one judgement of a signed event, used by the chain walk of
:mod:`tracker.domain.ledger` (every event, in order) and by every unit of work (the
authority events only, to learn who may sign now). It checks the key named by the event —
registered earlier to the event's operator, not revoked, its operator active — the
signature over the event's hash, and that a manager signed whatever needs one
(:func:`manager_needed`, decided from the event alone, so a forged insert cannot dodge it).
Events of format "tracker-ledger/1" were recorded before signing existed: they are counted
as unsigned, never as valid signatures, and one recorded after signing began is refused.
"""

from __future__ import annotations

import json
from dataclasses import dataclass, field, replace
from typing import Any

from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PublicKey

from tracker.domain.signing import KeyFileError, key_id, public_key, verify

FORMAT_1 = "tracker-ledger/1"
FORMAT_2 = "tracker-ledger/2"
MANAGER, TECHNICIAN = "manager", "technician"
OPERATOR_PREFIX = "OP-"  # an operator's public ID (tracker.domain.ids.Kind.OPERATOR)

# Actions that are refused unless a manager signs them, and how a refusal names them.
MANAGER_ACTIONS: dict[str, str] = {
    "operator.added": "adding an operator",
    "operator.role_changed": "changing an operator's role",
    "operator.deactivated": "deactivating an operator",
    "operator.login_bound": "binding a database login to an operator",
    "key.registered": "registering a signing key",
    "key.revoked": "revoking a signing key",
    "loan.amended": "amending a loan",
    "loan.closed": "closing a loan",
    "settings.backdating_window_set": "setting the backdating window",
    "settings.recovery_window_set": "setting the dissolution recovery window",
    "labels.uri_prefix_set": "setting the label URI prefix",
    "reference.value_set": "setting an accepted reference value",
}
# The events authority is replayed from: each names an operator as its object.
AUTHORITY_ACTIONS: tuple[str, ...] = (
    "ledger.opened",
    "operator.added",
    "operator.role_changed",
    "operator.deactivated",
    "key.registered",
    "key.revoked",
)
REGISTERS_KEY = ("ledger.opened", "operator.added", "key.registered")
# The same list as SQL text, for the partial index that finds these events (revision
# 0009) and the query that reads them: literal, so the planner can match the two.
AUTHORITY_SQL = "action IN (" + ", ".join(f"'{a}'" for a in AUTHORITY_ACTIONS) + ")"


def manager_needed(action: str, operator: str, payload: str) -> str | None:
    """What about this event needs a manager, or None. Decided from the event alone.

    Whole actions (:data:`MANAGER_ACTIONS`), and facts its payload records: an override
    of a loan limit, an entry dated beyond the backdating window, a correction of another
    operator's entry or one that takes a loan over a limit, a restore that lost events.
    The payload is parsed only when it can hold such a fact.
    """
    if action in MANAGER_ACTIONS:
        return MANAGER_ACTIONS[action]
    if not any(mark in payload for mark in _MARKS):
        return None
    facts = _facts(payload)
    if facts.get("backdated"):
        return "an entry dated beyond the backdating window"
    if action == "powder.drilled" and facts.get("override"):
        return "overriding a loan limit"
    if action.endswith(".corrected"):
        author = facts.get("entry_by")
        if isinstance(author, str) and author != operator:
            return f"correcting an entry recorded by {author}"
        effects = facts.get("effects")
        if isinstance(effects, dict) and effects.get("limits"):
            return "a correction that takes the loan over a limit"
    if action == "database.restored" and facts.get("events_lost"):
        return "a restore that loses events"
    return None


_MARKS = ('"backdated"', '"override"', '"entry_by"', '"events_lost"')


def _facts(payload: str) -> dict[str, Any]:
    try:
        found = json.loads(payload)
    except ValueError:
        return {}
    return found if isinstance(found, dict) else {}


@dataclass(frozen=True)
class Claim:
    """What judging one event's signature needs of it (its stored columns)."""

    seq: int
    operator: str
    action: str
    object_ref: str
    payload: str
    hash: str
    format: str
    key_id: str | None
    signature: str | None


@dataclass
class KeyRecord:
    key_id: str
    operator: str
    public_hex: str
    public: Ed25519PublicKey
    registered_seq: int
    registered_by: str
    revoked_seq: int | None = None
    revoked_reason: str | None = None


@dataclass
class Person:
    code: str
    role: str
    active: bool = True
    since_seq: int = 0
    deactivated_seq: int | None = None


@dataclass
class Authority:
    """Operators and keys as the events admitted so far establish them."""

    people: dict[str, Person] = field(default_factory=dict)
    keys: dict[str, KeyRecord] = field(default_factory=dict)
    signing_since: int | None = None  # the first signed event
    signed: int = 0
    unsigned: int = 0  # events recorded before signing began
    last_seq: int = 0

    # ------------------------------------------------------------------ questions
    def role(self, code: str) -> str | None:
        person = self.people.get(code)
        return person.role if person else None

    def is_manager(self, code: str) -> bool:
        person = self.people.get(code)
        return person is not None and person.active and person.role == MANAGER

    def managers(self) -> list[str]:
        return sorted(p.code for p in self.people.values() if p.active and p.role == MANAGER)

    def valid_keys(self, code: str) -> list[KeyRecord]:
        """The keys that may sign for ``code`` now (none once the operator is deactivated)."""
        person = self.people.get(code)
        if person is None or not person.active:
            return []
        return [k for k in self.keys.values() if k.operator == code and k.revoked_seq is None]

    def key_problem(self, code: str, key: str) -> str | None:
        """Why ``key`` may not sign for ``code`` now, or None when it may."""
        record = self.keys.get(key)
        if record is None:
            return f"key {key} is not registered in this ledger"
        if record.operator != code:
            return f"key {key} is registered to {record.operator}, not to {code}"
        if record.revoked_seq is not None:
            why = f" ({record.revoked_reason})" if record.revoked_reason else ""
            return f"key {key} was revoked at event #{record.revoked_seq}{why}"
        person = self.people.get(code)
        if person is not None and not person.active:
            return f"{code} was deactivated at event #{person.deactivated_seq}"
        return None

    # ------------------------------------------------------------------ the judgement
    def admit(self, event: Claim) -> str | None:
        """Judge one event (in ledger order, its hash already checked); None when it is
        admitted, which also applies what it establishes. A problem changes nothing."""
        if event.format == FORMAT_1:
            if self.signing_since is not None:
                return f"unsigned event recorded after signing began at event #{self.signing_since}"
            self.unsigned += 1
            return self._apply(event, _facts(event.payload), unsigned=True)
        if event.format != FORMAT_2:
            return f"unknown ledger format {event.format!r}"
        if not event.key_id or not event.signature:
            return "a tracker-ledger/2 event without its key ID and signature"
        facts = _facts(event.payload) if event.action in AUTHORITY_ACTIONS else {}
        problem = self._signer_problem(event, facts)
        if problem is None:
            problem = self._apply(event, facts, unsigned=False)
        if problem is None:
            self.signed += 1
            self.signing_since = self.signing_since or event.seq
        return problem

    def _signer_problem(self, event: Claim, facts: dict[str, Any]) -> str | None:
        assert event.key_id is not None and event.signature is not None
        record = self.keys.get(event.key_id) or self._self_registered(event, facts)
        if record is None:
            return f"signed with key {event.key_id}, which no earlier event registered"
        problem = (
            self.key_problem(event.operator, event.key_id) if event.key_id in self.keys else None
        )
        if problem is not None:
            return f"signed by {event.operator}: {problem}"
        if not verify(record.public, event.signature, event.hash.encode("ascii")):
            return (
                f"the signature does not match the event's hash under key {event.key_id} "
                "(altered after signing, or made with another key)"
            )
        reason = manager_needed(event.action, event.operator, event.payload)
        role = self._role_signing(event, facts)
        if reason is not None and role != MANAGER:
            return f"{reason} needs a manager's signature; {event.operator} is a {role}"
        return None

    def _self_registered(self, event: Claim, facts: dict[str, Any]) -> KeyRecord | None:
        """The key an event registers and is signed with: the founder's (event 1), or the
        first key of a ledger kept before signing, registered by a manager for themselves."""
        new = _new_key(event, facts)
        if new is None or new.key_id != event.key_id or new.operator != event.operator:
            return None
        if event.action == "ledger.opened" and event.seq == 1:
            return new
        if event.action == "key.registered" and not self.keys and self.is_manager(new.operator):
            return new
        return None

    def _role_signing(self, event: Claim, facts: dict[str, Any]) -> str:
        if event.action == "ledger.opened" and event.seq == 1:
            return MANAGER  # the founder is the first manager by this very event
        return self.role(event.operator) or "stranger to this ledger"

    # ------------------------------------------------------------------ what events establish
    def _apply(self, event: Claim, facts: dict[str, Any], *, unsigned: bool) -> str | None:
        """Apply what an authority event establishes; a problem applies nothing. Events from
        before signing establish roles (they are the only history there is) but no keys,
        and one that cannot be read is passed over rather than failing an old ledger."""
        self.last_seq = event.seq
        if event.action not in AUTHORITY_ACTIONS:
            return None
        if unsigned:
            _HANDLERS[event.action](self, event, facts)
            return None
        if not event.object_ref.startswith(OPERATOR_PREFIX):
            return f"{event.action} names no operator as its object ({event.object_ref!r})"
        new = _new_key(event, facts)
        if new is not None and new.key_id in self.keys:
            earlier = self.keys[new.key_id].registered_seq
            return f"key {new.key_id} is already registered (event #{earlier})"
        if new is not None and new.operator != _subject(event, facts, new.operator):
            return f"{event.action} registers a key for {new.operator}, not for its operator"
        problem = _HANDLERS[event.action](self, event, facts)
        if problem is None and new is not None:
            self.keys[new.key_id] = new
        return problem

    def _opened(self, event: Claim, facts: dict[str, Any]) -> str | None:
        if event.seq != 1:
            return "the ledger is opened once, by event 1"
        code = str(facts.get("operator") or event.operator)
        self.people[code] = Person(code, MANAGER, since_seq=event.seq)
        return None

    def _added(self, event: Claim, facts: dict[str, Any]) -> str | None:
        code, role = facts.get("code"), facts.get("role")
        if not isinstance(code, str) or role not in (MANAGER, TECHNICIAN):
            return "operator.added without the operator's code and role"
        if code in self.people:
            return f"operator {code} is added twice"
        self.people[code] = Person(code, str(role), since_seq=event.seq)
        return None

    def _role_changed(self, event: Claim, facts: dict[str, Any]) -> str | None:
        person = self.people.get(str(facts.get("operator")))
        role = facts.get("role")
        if person is None or role not in (MANAGER, TECHNICIAN):
            return "operator.role_changed names no known operator and role"
        self.people[person.code] = replace(person, role=str(role))
        return None

    def _deactivated(self, event: Claim, facts: dict[str, Any]) -> str | None:
        person = self.people.get(str(facts.get("operator")))
        if person is None:
            return "operator.deactivated names no known operator"
        self.people[person.code] = replace(person, active=False, deactivated_seq=event.seq)
        return None

    def _registered(self, event: Claim, facts: dict[str, Any]) -> str | None:
        new = _new_key(event, facts)
        if new is None or new.operator not in self.people:
            return "key.registered without a known operator's public key"
        return None

    def _revoked(self, event: Claim, facts: dict[str, Any]) -> str | None:
        record = self.keys.get(str(facts.get("key_id")))
        if record is None:
            return "key.revoked names no registered key"
        if record.revoked_seq is None:
            record.revoked_seq, record.revoked_reason = event.seq, str(facts.get("reason") or "")
        return None


_HANDLERS = {
    "ledger.opened": Authority._opened,
    "operator.added": Authority._added,
    "operator.role_changed": Authority._role_changed,
    "operator.deactivated": Authority._deactivated,
    "key.registered": Authority._registered,
    "key.revoked": Authority._revoked,
}


def _subject(event: Claim, facts: dict[str, Any], owner: str) -> str:
    """Whose key an event may register: the founder's, the added operator's, or anyone's."""
    if event.action == "ledger.opened":
        return str(facts.get("operator") or event.operator)
    if event.action == "operator.added":
        return str(facts.get("code"))
    return owner


def key_payload(code: str, public_hex: str) -> dict[str, str]:
    """How an event registers a key: its ID, its owner and its 64-hex-digit public key."""
    return {"id": key_id(public_hex), "operator": code, "public_key": public_hex}


def _new_key(event: Claim, facts: dict[str, Any]) -> KeyRecord | None:
    """The key this event registers (payload ``key``), if it registers one."""
    if event.action not in REGISTERS_KEY or event.format != FORMAT_2:
        return None
    found = facts.get("key")
    if not isinstance(found, dict):
        return None
    public_hex, owner = found.get("public_key"), found.get("operator")
    if not isinstance(public_hex, str) or not isinstance(owner, str):
        return None
    try:
        public = public_key(public_hex)
    except KeyFileError:
        return None
    if found.get("id") != key_id(public_hex):
        return None
    return KeyRecord(key_id(public_hex), owner, public_hex, public, event.seq, event.operator)
