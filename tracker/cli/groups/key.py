"""``tracker key``: make your signing key, register and revoke keys (managers), list them."""

from pathlib import Path
from typing import Annotated

import typer

from tracker.cli.out_options import Force, kept_note
from tracker.cli.state import (
    database,
    emit,
    passphrase,
    perform,
    read_upload,
    state,
    writing,
)
from tracker.domain.errors import InputError
from tracker.present.aligned import AlignedTable
from tracker.present.text import done, plain_table

app = typer.Typer(
    epilog="Example: tracker --as tomas key new",
    help="Personal signing keys: every event is signed by its operator's key.",
    no_args_is_help=True,
)


@app.command("new", epilog="Example: tracker --as tomas key new --out tomas.pub")
def key_new(
    ctx: typer.Context,
    out: Annotated[
        Path | None,
        typer.Option("--out", help="New file for the public key; default <you>-<key ID>.pub."),
    ] = None,
    force: Force = False,
) -> None:
    """Make your key pair (asking for a new passphrase, twice).

    The private key is kept in your config folder, encrypted with the passphrase and
    readable by you only; it never goes into the database. Hand the public key file to
    a manager, who registers it: `tracker --as MANAGER key register YOU FILE`.
    """
    from tracker.db import outputs
    from tracker.domain.signing import public_pem
    from tracker.services.admin import keys

    code = state(ctx).actor
    if not code:
        raise InputError("--as", None, "say whose key this is: pass --as YOUR-CODE")
    made = keys.make_key(code, passphrase(f"your new key ({code})", new=True))
    target = out or Path.cwd() / f"{code}-{made.key_id}.pub"
    written = outputs.write_new(target, public_pem(made.public_hex), "out", force=force)
    answer = {
        "operator": code,
        "key_id": made.key_id,
        "public_key": made.public_hex,
        "key_file": str(made.key_file.path),
        "public_key_file": str(target),
    }
    emit(
        ctx,
        answer,
        lambda: (
            f"made key {made.key_id} for {code}; private key kept in {made.key_file.path}\n"
            f"hand {target} to a manager: tracker --as MANAGER key register {code} {target.name}"
            + kept_note(written.replaced)
        ),
    )


@app.command("register", epilog="Example: tracker --as ines key register tomas tomas.pub")
def key_register(
    ctx: typer.Context,
    operator: Annotated[str, typer.Argument(help="Whose key it is.", metavar="OPERATOR")],
    public_key_file: Annotated[
        Path, typer.Argument(help="Their public key file (from `tracker key new`).")
    ],
) -> None:
    """Register an operator's public key in the ledger (managers; signed with your key).

    In a database kept before signing began (no key registered yet), a manager first
    registers their own key; that registration is signed by the key it registers.
    """
    from tracker.domain.signing import key_id
    from tracker.services.admin import keys

    upload = read_upload(public_key_file, "public key file", limit=64 * 1024)
    assert upload is not None
    public_hex = keys.public_key_from(upload["content"], "public key file")
    request = {"operator": operator, "public_key": public_hex}
    with writing(ctx, first_key=key_id(public_hex)) as db:
        answer = keys.register_key(db, state(ctx).actor, request)
    emit(ctx, answer, lambda: done(answer, f"key {answer.item.key_id} registered for {operator}"))


@app.command(
    "revoke", epilog="Example: tracker --as ines key revoke tomas --reason 'laptop stolen'"
)
def key_revoke(
    ctx: typer.Context,
    operator: Annotated[str, typer.Argument(help="Whose key.", metavar="OPERATOR")],
    reason: Annotated[str, typer.Option("--reason", help="Why, for the ledger.")],
    key: Annotated[
        str | None, typer.Option("--key", help="Which key ID, when they have several.")
    ] = None,
) -> None:
    """Revoke an operator's key (managers): from now on it signs nothing. A forgotten
    passphrase: revoke the key, and register the new one the person makes."""
    from tracker.services.admin import keys

    request = {"operator": operator, "key": key, "reason": reason}
    answer = perform(ctx, keys.revoke_key, request)
    emit(ctx, answer, lambda: done(answer, f"key {answer.item.key_id} of {operator} revoked"))


@app.command("list", epilog="Example: tracker key list")
def key_list(ctx: typer.Context) -> None:
    """Every key the ledger registered: whose, when, revoked or not, and whether its
    private key file is on this machine."""
    from tracker.services.admin import keys

    with database(ctx) as db:
        rows = keys.list_keys(db)

    def table() -> AlignedTable:
        t = plain_table("key", "operator", "registered", "revoked", "here")
        for k in rows:
            revoked = (
                f"#{k.revoked_event} {k.revoked_reason or ''}".strip() if k.revoked_event else ""
            )
            t.add_row(
                k.key_id,
                k.operator,
                f"#{k.registered_event} by {k.registered_by}",
                revoked or "no",
                "yes" if k.on_this_machine else "no",
            )
        return t

    emit(ctx, rows, table)
