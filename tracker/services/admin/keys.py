"""Personal signing keys: making one, registering and revoking it, unlocking it to sign.

A person makes their key pair on their own machine (:func:`make_key`): the private key goes
into a key file in their config folder, encrypted with their passphrase; the public key is
what they hand to a manager, who registers it in the ledger (:func:`register_key`, a signed
event). A lost passphrase or a lost laptop: a manager revokes the key (:func:`revoke_key`)
and registers a new one. A ledger kept before signing existed gets its first key from a
manager who registers their own (that first registration signs itself).

Entry points unlock a key before a write: :func:`key_to_unlock` says which key file the
operator signs with on this machine (or why none can), :func:`unlock_file` opens it with the
passphrase the entry point asked for and puts the signer in the database's keyring.
"""

from __future__ import annotations

from dataclasses import dataclass

from pydantic import Field
from sqlalchemy import select

from tracker.db import keyfiles
from tracker.db.database import Database
from tracker.db.keyfiles import KeyFile
from tracker.domain.authority import Authority, KeyRecord, key_payload
from tracker.domain.errors import InputError, RuleViolation
from tracker.domain.models import Operator
from tracker.domain.signing import KeyFileError, Signer, key_id, new_signer, public_hex_of
from tracker.services.admin.setup import PublicKeyHex
from tracker.services.core import authority as signing
from tracker.services.core.common import finish
from tracker.services.core.inputs import Raw, Request, ShortCode, Text, parse
from tracker.services.core.uow import unit_of_work
from tracker.services.core.views import Done, View


class KeyView(View):
    key_id: str
    operator: str
    public_key: str
    registered_event: int
    registered_by: str
    revoked_event: int | None
    revoked_reason: str | None
    on_this_machine: bool  # a key file for it is in this user's config folder


@dataclass(frozen=True)
class MadeKey:
    key_file: KeyFile
    public_hex: str

    @property
    def key_id(self) -> str:
        return key_id(self.public_hex)


def make_key(operator: str, passphrase: str) -> MadeKey:
    """A new key pair for ``operator``: the private key in a new key file (encrypted with
    ``passphrase``), the public key returned to be handed to a manager."""
    signer = new_signer()
    return MadeKey(keyfiles.write_key(operator, signer, passphrase), signer.public_hex)


def public_key_from(data: bytes, field: str) -> str:
    """The public key a file holds (PEM or 64 hex digits), or one line saying why not."""
    try:
        return public_hex_of(data)
    except KeyFileError as error:
        raise InputError(field, None, str(error)) from None


class Registration(Request):
    operator: ShortCode
    public_key: PublicKeyHex


def register_key(db: Database, actor: str | None, data: Registration | Raw) -> Done[KeyView]:
    """Register an operator's public key (a manager signs it). In a ledger with no key yet,
    a manager registers their own first key, and that key signs its own registration."""
    request = parse(Registration, data)
    new_id = key_id(request.public_key)
    with unit_of_work(db, actor) as uow:
        first = not uow.authority.keys
        if first:  # the ledger's first key: a manager's own, unlocked to sign itself
            if request.operator != uow.operator.code:
                raise RuleViolation(
                    "operator", request.operator, f"the first key is a manager's own: {_FIRST}"
                )
            uow.signer = db.keyring.get(new_id)
            if uow.signer is None:
                raise InputError("public key file", new_id, f"is not unlocked here: {_FIRST}")
        uow.require_manager("registering a signing key")
        owner = uow.session.scalars(
            select(Operator).where(Operator.code == request.operator)
        ).one_or_none()
        if owner is None or request.operator not in uow.authority.people:
            raise InputError("operator", request.operator, "no such operator")
        if new_id in uow.authority.keys:
            known = uow.authority.keys[new_id]
            raise RuleViolation(
                "public key file",
                new_id,
                f"is already registered to {known.operator} (event #{known.registered_seq})",
            )
        payload: dict[str, object] = {"key": key_payload(request.operator, request.public_key)}
        if first:
            payload["first"] = True

        def registered() -> KeyView:
            return KeyView(
                key_id=new_id,
                operator=request.operator,
                public_key=request.public_key,
                registered_event=uow.events[0].seq,
                registered_by=uow.operator.code,
                revoked_event=None,
                revoked_reason=None,
                on_this_machine=keyfiles.file_for(new_id) is not None,
            )

        return finish(uow, "key.registered", owner, payload, registered)


_FIRST = "make it on this machine, then register it for yourself"


class Revocation(Request):
    operator: ShortCode
    key: str | None = Field(default=None, pattern=r"^[0-9a-f]{16}$")  # which, if several
    reason: Text = Field(min_length=3)


def revoke_key(db: Database, actor: str | None, data: Revocation | Raw) -> Done[KeyView]:
    """Revoke an operator's key (a manager signs it): from the next event on it signs nothing."""
    request = parse(Revocation, data)
    with unit_of_work(db, actor) as uow:
        uow.require_manager("revoking a signing key")
        owner = uow.session.scalars(
            select(Operator).where(Operator.code == request.operator)
        ).one_or_none()
        if owner is None:
            raise InputError("operator", request.operator, "no such operator")
        record = _key_to_revoke(uow.authority, request)
        payload = {"operator": record.operator, "key_id": record.key_id, "reason": request.reason}
        view = _view(record, uow.authority)

        def revoked() -> KeyView:
            seq = uow.events[0].seq
            return view.model_copy(update={"revoked_event": seq, "revoked_reason": request.reason})

        return finish(uow, "key.revoked", owner, payload, revoked)


def _key_to_revoke(authority: Authority, request: Revocation) -> KeyRecord:
    valid = authority.valid_keys(request.operator) or [
        k
        for k in authority.keys.values()
        if k.operator == request.operator and k.revoked_seq is None
    ]
    if request.key is not None:
        found = authority.keys.get(request.key)
        if found is None or found.operator != request.operator:
            raise InputError("key", request.key, f"is not one of {request.operator}'s keys")
        if found.revoked_seq is not None:
            raise RuleViolation("key", request.key, f"was revoked at event #{found.revoked_seq}")
        return found
    if not valid:
        raise RuleViolation("operator", request.operator, "has no key to revoke")
    if len(valid) > 1:
        ids = ", ".join(k.key_id for k in valid)
        raise InputError("key", None, f"{request.operator} has several keys ({ids}): name one")
    return valid[0]


def list_keys(db: Database) -> list[KeyView]:
    """Every key the ledger has registered, oldest first, with its state."""
    authority = signing.read(db)
    records = sorted(authority.keys.values(), key=lambda k: k.registered_seq)
    return [_view(record, authority) for record in records]


def _view(record: KeyRecord, authority: Authority) -> KeyView:
    return KeyView(
        key_id=record.key_id,
        operator=record.operator,
        public_key=record.public_hex,
        registered_event=record.registered_seq,
        registered_by=record.registered_by,
        revoked_event=record.revoked_seq,
        revoked_reason=record.revoked_reason,
        on_this_machine=keyfiles.file_for(record.key_id) is not None,
    )


# ---------------------------------------------------------------------- unlocking


def key_to_unlock(db: Database, operator: str, *, first_key: str | None = None) -> KeyFile | None:
    """The key file ``operator`` signs with on this machine; None when their key is unlocked
    already or when the ledger cannot know them (the service then says so). A key file that
    may not sign (revoked, unknown to this ledger, its operator deactivated) is refused in
    one line, as is a machine with no key file for the operator's registered key.

    ``first_key``: the key a manager is registering as the ledger's first (it signs itself).
    """
    authority = signing.read(db)
    if not authority.keys:
        return _first_key_file(operator, first_key)
    if operator not in authority.people:
        return None
    valid = {record.key_id for record in authority.valid_keys(operator)}
    if any(db.keyring.get(key) is not None for key in valid):
        return None
    files = keyfiles.key_files(operator)
    usable = [f for f in files if f.key_id in valid]
    if usable:
        return usable[0]
    if files:  # keys on this machine, none of which may sign
        found = files[-1]
        problem = authority.key_problem(operator, found.key_id)
        raise RuleViolation("operator", operator, f"{problem} (key file {found.path})")
    if valid:
        raise InputError(
            "operator",
            operator,
            f"no key file on this machine for key {sorted(valid)[0]} "
            f"(looked in {keyfiles.keys_dir()})",
        )
    raise signing.why_no_signer(authority, operator, registered=False)


def _first_key_file(operator: str, first_key: str | None) -> KeyFile | None:
    if first_key is None:
        return None  # the service says the ledger has no key yet
    found = keyfiles.file_for(first_key)
    if found is None:
        raise InputError(
            "public key file", first_key, f"no key file for it on this machine: {_FIRST}"
        )
    if found.operator != operator:
        raise InputError("public key file", first_key, f"was made for {found.operator}")
    return found


def unlock_file(db: Database, key_file: KeyFile, passphrase: str) -> Signer:
    """Open ``key_file`` with ``passphrase``; its signer joins the database's keyring."""
    signer = keyfiles.unlock(key_file, passphrase)
    db.keyring.add(signer)
    return signer


def lock(db: Database, operator: str) -> None:
    """Forget every unlocked key of ``operator`` (the interface's idle lock)."""
    authority = signing.read(db)
    db.keyring.forget(*(k.key_id for k in authority.keys.values() if k.operator == operator))
