"""``tracker manifest``: lenders' specimen lists previewed, imported, mapped."""

from pathlib import Path
from typing import Annotated, Any

import typer

from tracker.cli.fields import Fills
from tracker.cli.settings_files import definition_file, named_file
from tracker.cli.state import database, emit, perform, read_upload
from tracker.domain.text_rules import visible
from tracker.present.text import done, plain_table
from tracker.services.loans import manifests

Opt = typer.Option

app = typer.Typer(
    help="Lenders' specimen lists (Darwin Core headings).",
    no_args_is_help=True,
    epilog="Example: tracker manifest preview KF-2026-014 list.csv",
)


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
            + (
                f"; not imported (archive extensions): {', '.join(preview.not_imported)}"
                if preview.not_imported
                else ""
            )
        )
    )
    table = plain_table("row", "catalogue no.", "action", "problems / changes")
    for r in preview.rows:
        if r.action == "unchanged" and not r.warnings:
            continue
        table.add_row(
            str(r.row),
            r.catalog_number or "—",
            "ERROR" if r.action == "error" else r.action,
            r.detail(),
        )
    return Group(head, table)


@app.command("preview", epilog="Example: tracker manifest preview KF-2026-014 list.csv")
def manifest_preview(
    ctx: typer.Context,
    loan: Annotated[str, typer.Argument(help="Loan ID or reference.")],
    file: Annotated[
        Path,
        typer.Argument(help="CSV, TSV (.tsv, .txt), XLSX or Darwin Core Archive (.zip)."),
        Fills("content", "filename"),
    ],
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


@app.command("import", epilog="Example: tracker --as ines manifest import KF-2026-014 list.csv")
def manifest_import(
    ctx: typer.Context,
    loan: Annotated[str, typer.Argument(help="Loan ID or reference.")],
    file: Annotated[
        Path,
        typer.Argument(help="CSV, TSV (.tsv, .txt), XLSX or Darwin Core Archive (.zip)."),
        Fills("content", "filename"),
    ],
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


@app.command("mapping", epilog="Example: tracker manifest mapping museum-x map.toml")
def manifest_mapping(
    ctx: typer.Context,
    name: Annotated[str, typer.Argument(help="Name to save it under.")],
    file: Annotated[
        Path,
        typer.Argument(help="TOML or JSON: format, sheet, header_row, columns {term = heading}."),
        Fills("definition"),
    ],
) -> None:
    """Save a column mapping for lists whose headings are not Darwin Core terms."""
    with named_file(file):
        answer = perform(
            ctx, manifests.save_mapping, {"name": name, "definition": definition_file(file)}
        )
    emit(ctx, answer, lambda: done(answer, f"manifest mapping {name}"))
