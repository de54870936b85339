"""Commands about lenders, loans and specimens: listing, receiving, returning."""

from datetime import datetime
from typing import Annotated

import typer
from rich.table import Table

from tracker.cli.state import database, emit, perform
from tracker.domain.models import Disposition
from tracker.present.text import done, plain_table
from tracker.services.bench import custody
from tracker.services.loans import lending, specimens

lender_app = typer.Typer(
    epilog="Example: tracker lender list",
    help="Institutions that lend specimens.",
    no_args_is_help=True,
)
loan_app = typer.Typer(
    epilog="Example: tracker loan list",
    help="Loan agreements and their terms.",
    no_args_is_help=True,
)
specimen_app = typer.Typer(
    epilog="Example: tracker specimen list --loan KF-2026-014",
    help="Specimens listed on loans.",
    no_args_is_help=True,
)

Opt = typer.Option


@lender_app.command("add", epilog="Example: tracker lender add 'Kestrel Fen Museum' --code KFM")
def lender_add(
    ctx: typer.Context,
    name: Annotated[str, typer.Argument(help="The institution's name.")],
    code: Annotated[str | None, Opt("--code", help="Darwin Core institutionCode.")] = None,
    contact: Annotated[str | None, Opt("--contact", help="Contact person.")] = None,
    email: Annotated[str | None, Opt("--email", help="Contact e-mail.")] = None,
) -> None:
    """Register a lending institution."""
    request = {
        "name": name,
        "institution_code": code,
        "contact_name": contact,
        "contact_email": email,
    }
    answer = perform(ctx, lending.add_lender, request)
    emit(ctx, answer, lambda: done(answer, f"{answer.item.id} {name}"))


@lender_app.command("list", epilog="Example: tracker lender list")
def lender_list(ctx: typer.Context) -> None:
    """List lenders."""
    with database(ctx) as db:
        rows = lending.list_lenders(db)

    def table() -> Table:
        t = plain_table("id", "name", "code", "contact")
        for r in rows:
            t.add_row(r.id, r.name, r.institution_code or "", r.contact_name or "")
        return t

    emit(ctx, rows, table)


@loan_app.command(
    "add",
    epilog="Example: tracker loan add --lender 'Kestrel Fen Museum' --reference KF-2026-014 "
    "--title 'Shark teeth, Ca isotopes' --borrower 'A. Haddad' --tissues enameloid "
    "--max-per-specimen '3 mg' --max-total '15 mg' --max-specimens 6 --due 2027-03-31",
)
def loan_add(
    ctx: typer.Context,
    lender: Annotated[str, Opt("--lender", help="Lender ID (LE-...) or name.")],
    reference: Annotated[str, Opt("--reference", help="The lender's loan number.")],
    title: Annotated[str, Opt("--title", help="What the loan is for.")],
    borrower: Annotated[str, Opt("--borrower", help="Responsible scientist.")],
    tissues: Annotated[str, Opt("--tissues", help="Permitted tissues, comma-separated.")],
    due: Annotated[datetime, Opt("--due", formats=["%Y-%m-%d"], help="Due date.")],
    received: Annotated[
        datetime | None, Opt("--received", formats=["%Y-%m-%d"], help="Date received.")
    ] = None,
    max_per_specimen: Annotated[
        str | None, Opt("--max-per-specimen", help="Mass limit per specimen, e.g. '3 mg'.")
    ] = None,
    max_total: Annotated[str | None, Opt("--max-total", help="Mass limit for the loan.")] = None,
    max_specimens: Annotated[
        int | None, Opt("--max-specimens", help="How many specimens may be sampled.")
    ] = None,
    powder: Annotated[
        Disposition, Opt("--powder", help="Unused powder: return, destroy or retain.")
    ] = Disposition.RETURN,
    solutions: Annotated[
        Disposition, Opt("--solutions", help="Residual solutions.")
    ] = Disposition.DESTROY,
) -> None:
    """Record a loan agreement and its original terms."""
    request = {
        "lender": lender,
        "reference": reference,
        "title": title,
        "borrower": borrower,
        "received_on": received.date() if received else None,
        "terms": {
            "permitted_tissues": tissues,
            "max_mass_per_specimen": max_per_specimen,
            "max_total_mass": max_total,
            "max_specimens_sampled": max_specimens,
            "due_on": due.date(),
            "powder_disposition": powder,
            "solution_disposition": solutions,
        },
    }
    answer = perform(ctx, lending.add_loan, request)
    emit(ctx, answer, lambda: done(answer, f"{answer.item.id} {reference}"))


@loan_app.command("list", epilog="Example: tracker --json loan list")
def loan_list(ctx: typer.Context) -> None:
    """List loans with their current terms."""
    with database(ctx) as db:
        rows = lending.list_loans(db)

    def table() -> Table:
        t = plain_table("id", "reference", "lender", "status", "tissues", "due")
        for r in rows:
            t.add_row(
                r.id,
                r.reference,
                r.lender,
                r.status,
                ", ".join(r.terms.permitted_tissues),
                r.terms.due_on.isoformat(),
            )
        return t

    emit(ctx, rows, table)


@loan_app.command("mark-returned", epilog="Example: tracker loan mark-returned KF-2026-014")
def loan_mark_returned(
    ctx: typer.Context,
    loan: Annotated[str, typer.Argument(help="Loan ID or reference.")],
    on: Annotated[datetime | None, Opt("--on", formats=["%Y-%m-%d"], help="Return date.")] = None,
) -> None:
    """Mark a loan's material as returned once every specimen and powder is dealt with."""
    answer = perform(
        ctx, custody.mark_loan_returned, {"loan": loan, "returned_on": on.date() if on else None}
    )
    emit(ctx, answer, lambda: done(answer, f"{answer.item.reference} returned"))


@loan_app.command(
    "close",
    epilog="Example: tracker --as amira loan close NMFI-25-033 "
    "--reason 'results reported to the lender on 2027-04-02'",
)
def loan_close(
    ctx: typer.Context,
    loan: Annotated[str, typer.Argument(help="Loan ID or reference.")],
    reason: Annotated[str, Opt("--reason", help="Why it is closed: obligations met.")],
) -> None:
    """Close a returned loan when nothing of it is left in the lab (managers only)."""
    answer = perform(ctx, custody.close_loan, {"loan": loan, "reason": reason})
    emit(ctx, answer, lambda: done(answer, f"{answer.item.reference} closed"))


@specimen_app.command(
    "add",
    epilog="Example: tracker specimen add --loan KF-2026-014 --catalog 'KFM P 1001' "
    "--taxon 'Lamniformes indet.' --element tooth",
)
def specimen_add(
    ctx: typer.Context,
    loan: Annotated[str, Opt("--loan", help="Loan ID or reference.")],
    catalog: Annotated[str, Opt("--catalog", help="Catalogue number (dwc:catalogNumber).")],
    taxon: Annotated[str | None, Opt("--taxon", help="dwc:scientificName.")] = None,
    element: Annotated[str | None, Opt("--element", help="Skeletal element, e.g. tooth.")] = None,
    locality: Annotated[str | None, Opt("--locality", help="dwc:locality.")] = None,
    formation: Annotated[str | None, Opt("--formation", help="dwc:formation.")] = None,
    age_max: Annotated[float | None, Opt("--age-max", help="Oldest age, Ma.")] = None,
    age_min: Annotated[float | None, Opt("--age-min", help="Youngest age, Ma.")] = None,
) -> None:
    """List a specimen on a loan (expected until checked in)."""
    request = {
        "loan": loan,
        "catalog_number": catalog,
        "scientific_name": taxon,
        "skeletal_element": element,
        "locality": locality,
        "formation": formation,
        "age_max_ma": age_max,
        "age_min_ma": age_min,
    }
    answer = perform(ctx, specimens.add_specimen, request)
    emit(ctx, answer, lambda: done(answer, f"{answer.item.id} {catalog}"))


@specimen_app.command("list", epilog="Example: tracker specimen list --loan KF-2026-014")
def specimen_list(
    ctx: typer.Context,
    loan: Annotated[str | None, Opt("--loan", help="Only this loan.")] = None,
) -> None:
    """List specimens, their status and location."""
    with database(ctx) as db:
        rows = specimens.list_specimens(db, loan)

    def table() -> Table:
        t = plain_table("id", "loan", "catalogue no.", "taxon", "status", "location")
        for r in rows:
            t.add_row(
                r.id,
                r.loan,
                r.catalog_number,
                r.scientific_name or "",
                r.status.replace("_", " "),
                r.location or "",
            )
        return t

    emit(ctx, rows, table)


def checkin(
    ctx: typer.Context,
    specimen: Annotated[str, typer.Argument(help="Specimen ID (typed or scanned).")],
    condition: Annotated[str, Opt("--condition", help="Condition on receipt.")],
    to: Annotated[str | None, Opt("--to", help="Location ID where it is put.")] = None,
    at: Annotated[str | None, Opt("--at", help="When it arrived, ISO 8601 with zone.")] = None,
) -> None:
    """Receive a listed specimen: note its condition and where it goes."""
    request = {"specimen": specimen, "condition": condition, "location": to, "received_at": at}
    answer = perform(ctx, specimens.check_in, request)
    emit(ctx, answer, lambda: done(answer, f"{answer.item.id} checked in"))


CHECKIN_EPILOG = "Example: tracker checkin SP-00001-W --condition 'complete' --to LC-00005-B"


def return_specimen(
    ctx: typer.Context,
    specimen: Annotated[str, typer.Argument(help="Specimen ID.")],
    condition: Annotated[str, Opt("--condition", help="Condition at return.")],
    note: Annotated[str | None, Opt("--note", help="Any note.")] = None,
    shipment: Annotated[
        str | None, Opt("--shipment", help="Outgoing shipment ID (SH-...).")
    ] = None,
) -> None:
    """Send a specimen back to its lender, recording its condition."""
    request = {"specimen": specimen, "condition": condition, "note": note, "shipment": shipment}
    answer = perform(ctx, specimens.return_specimen, request)
    emit(ctx, answer, lambda: done(answer, f"{answer.item.id} returned"))


RETURN_EPILOG = "Example: tracker return SP-00001-W --condition 'as received, drill pit at tip'"
