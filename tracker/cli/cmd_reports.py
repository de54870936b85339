"""Return reports, manifests in, exports out, shipments and condition photos."""

import json
import mimetypes
from collections.abc import Callable
from datetime import datetime
from pathlib import Path
from typing import Annotated, Any

import typer

from tracker.cli.out_options import Despite, Force, kept_as, kept_note
from tracker.cli.state import database, emit, errors, perform, read_upload, state, writing
from tracker.db import outputs
from tracker.domain.errors import InputError
from tracker.domain.models import ShipmentDirection
from tracker.domain.text_rules import visible
from tracker.output import report_files
from tracker.present.text import done, plain_table
from tracker.services.loans import manifests, shipments
from tracker.services.read import exports

Opt = typer.Option

report_app = typer.Typer(
    help="Reports for lenders.",
    no_args_is_help=True,
    epilog="Example: tracker report return NMFI-25-033",
)
manifest_app = typer.Typer(
    help="Lenders' specimen lists (Darwin Core headings).",
    no_args_is_help=True,
    epilog="Example: tracker manifest preview KF-2026-014 list.csv",
)
export_app = typer.Typer(
    help="Darwin Core and JSON exports for the lender's database.",
    no_args_is_help=True,
    epilog="Example: tracker export specimens --loan KF-2026-014 --out s.csv",
)
shipment_app = typer.Typer(
    help="Parcels to and from lenders.",
    no_args_is_help=True,
    epilog="Example: tracker shipment add NMFI-25-033 --direction outgoing --date 2026-06-12",
)


@report_app.command(
    "return",
    epilog="Example: tracker --as ines report return NMFI-25-033 "
    "--format pdf --out nmfi-return.pdf",
)
def report_return(
    ctx: typer.Context,
    loan: Annotated[str, typer.Argument(help="Loan ID or reference.")],
    fmt: Annotated[str, Opt("--format", help="pdf, csv, xlsx or json.")] = "pdf",
    out: Annotated[
        Path | None,
        Opt("--out", help="New file to write; default <loan>-return-report-event-<n>.<format>."),
    ] = None,
    force: Force = False,
    despite: Despite = False,
) -> None:
    """The lender's return report: terms, every specimen's account, results, ledger head.

    Refused when the loan's books differ from the ledger (`tracker ledger audit`);
    --despite-discrepancies writes it anyway, every discrepancy listed on its first page.
    Its anchor file is signed by your key, so the report is written by a manager.
    """
    with writing(ctx) as db:
        written = report_files.write_return_report(
            db,
            state(ctx).actor,
            loan,
            fmt,
            out,
            Path.cwd(),
            force=force,
            despite_discrepancies=despite,
        )
    record = written.record
    emit(ctx, record, lambda: done(record, f"{written.target} (sha256 {written.sha256[:16]}…)"))
    photos = f" and {written.photos} photo(s) in {written.photo_folder}" if written.photos else ""
    errors.print(
        f"wrote {1 + written.photos} companion file(s): the ledger anchor{photos}",
        markup=False,
        soft_wrap=True,
    )
    for replaced in written.replaced:
        errors.print(f"kept the replaced file as {replaced}", markup=False, soft_wrap=True)


def _manifest_request(loan: str, file: Path, mapping: str | None) -> dict[str, Any]:
    upload = read_upload(file, "FILE") or {}
    return {
        "loan": loan,
        "filename": upload.get("filename"),
        "content": upload.get("content"),
        "mapping": mapping,
    }


def _preview_table(preview: manifests.ManifestPreview) -> Any:
    from rich.console import Group
    from rich.text import Text

    head = Text(
        visible(
            f"{preview.file}: {preview.create} to create, {preview.update} to update, "
            f"{preview.unchanged} unchanged, {preview.problems} problem(s)"
            + (
                f"; kept as extra terms: {', '.join(preview.kept_as_extra)}"
                if preview.kept_as_extra
                else ""
            )
        )
    )
    table = plain_table("row", "catalogue no.", "action", "problems / changes")
    for r in preview.rows:
        if r.action == "unchanged":
            continue
        detail = "; ".join(r.problems) or "; ".join(
            f"{k}: {v[0]!r} → {v[1]!r}" for k, v in r.changes.items()
        )
        table.add_row(
            str(r.row),
            r.catalog_number or "—",
            "ERROR" if r.action == "error" else r.action,
            detail,
        )
    return Group(head, table)


@manifest_app.command("preview", epilog="Example: tracker manifest preview KF-2026-014 list.csv")
def manifest_preview(
    ctx: typer.Context,
    loan: Annotated[str, typer.Argument(help="Loan ID or reference.")],
    file: Annotated[Path, typer.Argument(help="CSV, TSV or XLSX.")],
    mapping: Annotated[
        str | None, Opt("--mapping", help="Saved mapping for non-Darwin-Core headings.")
    ] = None,
) -> None:
    """Show, row by row, what importing the list would create, update and refuse."""
    with database(ctx) as db:
        preview = manifests.preview_manifest(db, _manifest_request(loan, file, mapping))
    emit(ctx, preview, lambda: _preview_table(preview))
    if preview.problems:
        raise typer.Exit(2)


@manifest_app.command(
    "import", epilog="Example: tracker --as ines manifest import KF-2026-014 list.csv"
)
def manifest_import(
    ctx: typer.Context,
    loan: Annotated[str, typer.Argument(help="Loan ID or reference.")],
    file: Annotated[Path, typer.Argument(help="CSV, TSV or XLSX.")],
    mapping: Annotated[str | None, Opt("--mapping", help="Saved mapping.")] = None,
) -> None:
    """Create and update the loan's specimens from a clean list (one transaction)."""
    outcome = perform(ctx, manifests.import_manifest, _manifest_request(loan, file, mapping))
    emit(
        ctx,
        outcome,
        lambda: (
            f"created {len(outcome.created)}, updated {len(outcome.updated)}, unchanged "
            f"{outcome.preview.unchanged}"
            + (
                f" (ledger event #{outcome.event_seq})"
                if outcome.event_seq
                else " — nothing to write"
            )
        ),
    )


@manifest_app.command("mapping", epilog="Example: tracker manifest mapping museum-x map.toml")
def manifest_mapping(
    ctx: typer.Context,
    name: Annotated[str, typer.Argument(help="Name to save it under.")],
    file: Annotated[
        Path,
        typer.Argument(help="TOML or JSON: format, sheet, header_row, columns {term = heading}."),
    ],
) -> None:
    """Save a column mapping for lists whose headings are not Darwin Core terms."""
    from tracker.cli.cmd_instrument import definition_file, named_file

    with named_file(file):
        answer = perform(
            ctx, manifests.save_mapping, {"name": name, "definition": definition_file(file)}
        )
    emit(ctx, answer, lambda: done(answer, f"manifest mapping {name}"))


def _write_export(
    ctx: typer.Context, out: Path, force: bool, build: Callable[[Any], bytes]
) -> outputs.Written:
    """Refuse the target before reading anything, then build the file from one export
    service and write it (:mod:`tracker.db.outputs`)."""
    with database(ctx) as db:
        outputs.check_target(out, "--out", force=force, database=db.path)
        data = build(db)
        return outputs.write_new(out, data, "--out", force=force, database=db.path)


def _export_rows(
    ctx: typer.Context, reader: Any, loan: str, out: Path, noun: str, force: bool, despite: bool
) -> None:
    """Read rows through one export service and write them as CSV or XLSX."""
    from tracker.output import tabular

    counted: list[int] = []

    def build(db: Any) -> bytes:
        columns, rows = reader(db, loan, despite)
        counted.append(len(rows))
        if out.suffix.lower() == ".xlsx":
            return tabular.xlsx_bytes(columns, rows, noun)
        return tabular.csv_bytes(columns, rows)

    written = _write_export(ctx, out, force, build)
    emit(
        ctx,
        {
            "out": str(out),
            "rows": counted[0],
            "sha256": written.sha256,
            "replaced_kept_as": kept_as(written.replaced),
        },
        lambda: f"wrote {counted[0]} {noun} to {out}" + kept_note(written.replaced),
    )


OutTable = Annotated[Path, Opt("--out", help="New CSV or XLSX file.")]


@export_app.command(
    "specimens", epilog="Example: tracker export specimens --loan KF-2026-014 --out specimens.csv"
)
def export_specimens(
    ctx: typer.Context,
    loan: Annotated[str, Opt("--loan", help="Loan ID or reference.")],
    out: OutTable,
    force: Force = False,
    despite: Despite = False,
) -> None:
    """Specimens with Darwin Core headings (refused when the loan's books differ from the
    ledger, unless --despite-discrepancies: then listing them first)."""
    _export_rows(ctx, exports.specimen_rows, loan, out, "specimens", force, despite)


@export_app.command(
    "measurements",
    epilog="Example: tracker export measurements --loan KF-2026-014 --out measurements.csv",
)
def export_measurements(
    ctx: typer.Context,
    loan: Annotated[str, Opt("--loan", help="Loan ID or reference.")],
    out: OutTable,
    force: Force = False,
    despite: Despite = False,
) -> None:
    """Drilled masses and results as Darwin Core measurement rows (refused when the loan's
    books differ from the ledger, unless --despite-discrepancies: then listing them first)."""
    _export_rows(ctx, exports.measurement_rows, loan, out, "measurements", force, despite)


@export_app.command("loan", epilog="Example: tracker export loan KF-2026-014 --out loan.json")
def export_loan(
    ctx: typer.Context,
    loan: Annotated[str, typer.Argument(help="Loan ID or reference.")],
    out: Annotated[Path, Opt("--out", help="New JSON file.")],
    force: Force = False,
    despite: Despite = False,
) -> None:
    """The whole loan as JSON: the return report's content and every specimen's lineage."""

    def build(db: Any) -> bytes:
        document = exports.loan_document(db, loan, despite)
        return (json.dumps(document, indent=2, ensure_ascii=False) + "\n").encode()

    written = _write_export(ctx, out, force, build)
    emit(
        ctx,
        {"out": str(out), "sha256": written.sha256, "replaced_kept_as": kept_as(written.replaced)},
        lambda: f"wrote {out}" + kept_note(written.replaced),
    )


@shipment_app.command(
    "add",
    epilog="Example: tracker shipment add NMFI-25-033 --direction "
    "outgoing --date 2026-06-12 --carrier 'courier' --tracking X123",
)
def shipment_add(
    ctx: typer.Context,
    loan: Annotated[str, typer.Argument(help="Loan ID or reference.")],
    direction: Annotated[ShipmentDirection, Opt("--direction", help="incoming or outgoing.")],
    date: Annotated[datetime, Opt("--date", formats=["%Y-%m-%d"], help="Day it was sent.")],
    carrier: Annotated[str | None, Opt("--carrier", help="Carrier.")] = None,
    tracking: Annotated[str | None, Opt("--tracking", help="Tracking number.")] = None,
) -> None:
    """Record a parcel; returned specimens and powders then name it (`--shipment`)."""
    request = {
        "loan": loan,
        "direction": direction,
        "shipped_on": date.date(),
        "carrier": carrier,
        "tracking": tracking,
    }
    answer = perform(ctx, shipments.add_shipment, request)
    emit(ctx, answer, lambda: done(answer, f"{answer.item.id} {direction.value}"))


def specimen_photo(
    ctx: typer.Context,
    specimen: Annotated[str, typer.Argument(help="Specimen ID.")],
    file: Annotated[Path, typer.Argument(help="JPEG, PNG, TIFF or WebP.")],
    stage: Annotated[str, Opt("--stage", help="receipt, return or other.")] = "receipt",
    caption: Annotated[str | None, Opt("--caption", help="What it shows.")] = None,
) -> None:
    """Keep a photograph of a specimen's condition (by SHA-256)."""
    upload = read_upload(file, "FILE") or {}
    if mimetypes.guess_type(file.name)[0] is None:
        raise InputError("FILE", str(file), "has no image file extension")
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


PHOTO_EPILOG = "Example: tracker specimen photo SP-00001-W front.jpg --stage receipt"
