"""``tracker specimen``: specimens listed on loans, and photographs of their condition."""

from pathlib import Path
from typing import Annotated

import typer

from tracker.cli.state import database, emit, perform, read_upload
from tracker.present.aligned import AlignedTable
from tracker.present.text import done, plain_table
from tracker.services.loans import shipments, specimens

Opt = typer.Option

app = typer.Typer(
    epilog="Example: tracker specimen list --loan KF-2026-014",
    help="Specimens listed on loans.",
    no_args_is_help=True,
)


@app.command(
    "add",
    epilog="Example: tracker specimen add --loan KF-2026-014 --catalog 'KFM P 1001' "
    "--taxon 'Lamniformes indet.' --element tooth",
)
def specimen_add(
    ctx: typer.Context,
    loan: Annotated[str, Opt("--loan", help="Loan ID or reference.")],
    catalog_number: Annotated[str, Opt("--catalog", help="Catalogue number (dwc:catalogNumber).")],
    scientific_name: Annotated[str | None, Opt("--taxon", help="dwc:scientificName.")] = None,
    skeletal_element: Annotated[
        str | None, Opt("--element", help="Skeletal element, e.g. tooth.")
    ] = None,
    locality: Annotated[str | None, Opt("--locality", help="dwc:locality.")] = None,
    formation: Annotated[str | None, Opt("--formation", help="dwc:formation.")] = None,
    age_max_ma: Annotated[float | None, Opt("--age-max", help="Oldest age, Ma.")] = None,
    age_min_ma: Annotated[float | None, Opt("--age-min", help="Youngest age, Ma.")] = None,
) -> None:
    """List a specimen on a loan (expected until checked in)."""
    request = {
        "loan": loan,
        "catalog_number": catalog_number,
        "scientific_name": scientific_name,
        "skeletal_element": skeletal_element,
        "locality": locality,
        "formation": formation,
        "age_max_ma": age_max_ma,
        "age_min_ma": age_min_ma,
    }
    answer = perform(ctx, specimens.add_specimen, request)
    emit(ctx, answer, lambda: done(answer, f"{answer.item.id} {catalog_number}"))


@app.command("list", epilog="Example: tracker specimen list --loan KF-2026-014")
def specimen_list(
    ctx: typer.Context,
    loan: Annotated[str | None, Opt("--loan", help="Only this loan.")] = None,
) -> None:
    """List specimens, their status and location."""
    with database(ctx) as db:
        rows = specimens.list_specimens(db, loan)

    def table() -> AlignedTable:
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


PHOTO_EPILOG = "Example: tracker specimen photo SP-00001-W front.jpg --stage receipt"


@app.command("photo", epilog=PHOTO_EPILOG)
def specimen_photo(
    ctx: typer.Context,
    specimen: Annotated[str, typer.Argument(help="Specimen ID.")],
    photo: Annotated[Path, typer.Argument(help="JPEG, PNG, TIFF or WebP.", metavar="file")],
    stage: Annotated[str, Opt("--stage", help="receipt, return or other.")] = "receipt",
    caption: Annotated[str | None, Opt("--caption", help="What it shows.")] = None,
) -> None:
    """Keep a photograph of a specimen's condition (by SHA-256)."""
    upload = read_upload(photo, "photo") or {}
    answer = perform(
        ctx,
        shipments.add_photo,
        {"specimen": specimen, "stage": stage, "photo": upload, "caption": caption},
    )
    emit(
        ctx,
        answer,
        lambda: done(answer, f"{stage} photo of {specimen} ({answer.item.document.sha256[:16]}…)"),
    )
