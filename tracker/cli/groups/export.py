"""``tracker export``: Darwin Core and JSON exports for the lender's database."""

import json
from collections.abc import Callable
from pathlib import Path
from typing import Annotated, Any

import typer

from tracker.cli.out_options import Despite, Force, kept_as, kept_note
from tracker.cli.state import database, emit
from tracker.db import outputs
from tracker.services.read import exports

Opt = typer.Option

app = typer.Typer(
    help="Darwin Core and JSON exports for the lender's database.",
    no_args_is_help=True,
    epilog="Example: tracker export specimens --loan KF-2026-014 --out s.csv",
)


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


@app.command(
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


@app.command(
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


@app.command("loan", epilog="Example: tracker export loan KF-2026-014 --out loan.json")
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
