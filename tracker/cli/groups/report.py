"""``tracker report``: the lender's return report."""

from pathlib import Path
from typing import Annotated

import typer

from tracker.cli.out_options import Despite, Force, say_kept
from tracker.cli.state import emit, errors, state, writing
from tracker.output import report_files
from tracker.present.text import done

Opt = typer.Option

app = typer.Typer(
    help="Reports for lenders.",
    no_args_is_help=True,
    epilog="Example: tracker report return NMFI-25-033",
)


@app.command(
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
        say_kept(replaced)
