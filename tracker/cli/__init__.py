"""The ``tracker`` command: global options, and every command registered in one place."""

from typing import Annotated

import typer

from tracker import __version__
from tracker.cli import (
    cmd_backup,
    cmd_budget,
    cmd_correct,
    cmd_inspect,
    cmd_instrument,
    cmd_keys,
    cmd_lab,
    cmd_labels,
    cmd_ledger,
    cmd_loans,
    cmd_logins,
    cmd_reports,
    cmd_setup,
)
from tracker.cli.cmd_demo import DEMO_EPILOG, demo
from tracker.cli.state import State, TrackerGroup

app = typer.Typer(
    cls=TrackerGroup,
    help="Sample tracking and chain of custody for isotope-geochemistry labs.\n\n"
    "Run with no command to open the terminal interface (on a terminal) or print the loans "
    "overview (when the output is piped or --json is given).",
    epilog="Example: tracker --db lab.sqlite --as amira show SP-00001-W",
    add_completion=False,
    rich_markup_mode=None,
    pretty_exceptions_enable=False,
)


def _version(value: bool) -> None:
    if value:
        typer.echo(f"tracker {__version__}")
        raise typer.Exit()


@app.callback(invoke_without_command=True)
def root(
    ctx: typer.Context,
    db: Annotated[
        str | None,
        typer.Option("--db", envvar="TRACKER_DB", help="Database file or URL (postgresql://...)."),
    ] = None,
    actor: Annotated[
        str | None,
        typer.Option(
            "--as", envvar="TRACKER_OPERATOR", help="Operator code recorded in the ledger."
        ),
    ] = None,
    as_json: Annotated[
        bool, typer.Option("--json", help="Print exactly one JSON document on stdout.")
    ] = False,
    version: Annotated[
        bool, typer.Option("--version", callback=_version, is_eager=True, help="Show the version.")
    ] = False,
) -> None:
    """Global options; with no command, open the terminal interface or show the overview."""
    ctx.obj = State(db=db, actor=actor, as_json=as_json)
    if ctx.invoked_subcommand is None:
        cmd_inspect.open_or_overview(ctx)


def _register() -> None:
    command = app.command
    command("init", epilog=cmd_setup.INIT_EPILOG)(cmd_setup.init)
    command("backdating-window", epilog=cmd_setup.BACKDATING_EPILOG)(cmd_setup.backdating_window)
    command("demo", epilog=DEMO_EPILOG)(demo)
    command("backup", epilog=cmd_backup.BACKUP_EPILOG)(cmd_backup.backup)
    command("restore", epilog=cmd_backup.RESTORE_EPILOG)(cmd_backup.restore)
    command("overview", epilog=cmd_inspect.OVERVIEW_EPILOG)(cmd_inspect.show_overview)
    command("show", epilog=cmd_inspect.SHOW_EPILOG)(cmd_inspect.show)
    command("checkin", epilog=cmd_loans.CHECKIN_EPILOG)(cmd_loans.checkin)
    command("return", epilog=cmd_loans.RETURN_EPILOG)(cmd_loans.return_specimen)
    command("move", epilog=cmd_lab.MOVE_EPILOG)(cmd_lab.move)
    command("drill", epilog=cmd_lab.DRILL_EPILOG)(cmd_lab.drill)
    command("dissolve", epilog=cmd_lab.DISSOLVE_EPILOG)(cmd_lab.dissolve)
    command("concentration", epilog=cmd_lab.CONCENTRATION_EPILOG)(cmd_lab.concentration)
    command("aliquot", epilog=cmd_lab.ALIQUOT_EPILOG)(cmd_lab.aliquot)
    command("dispose", epilog=cmd_lab.DISPOSE_EPILOG)(cmd_lab.dispose)
    command("lookup", epilog=cmd_labels.LOOKUP_EPILOG)(cmd_labels.lookup)
    command("plan", epilog=cmd_budget.PLAN_EPILOG)(cmd_budget.plan)
    command("reconcile", epilog=cmd_budget.RECONCILE_EPILOG)(cmd_budget.reconcile_command)
    loan = cmd_loans.loan_app.command
    loan("amend", epilog=cmd_budget.AMEND_EPILOG)(cmd_budget.amend)
    loan("attach", epilog=cmd_budget.ATTACH_EPILOG)(cmd_budget.attach)
    instrument = cmd_instrument
    loan("curve", epilog=instrument.LOAN_CURVE_EPILOG)(instrument.loan_curve)
    command("results", epilog=instrument.RESULTS_EPILOG)(instrument.results_command)
    command("screen", epilog=instrument.SCREEN_EPILOG)(instrument.screen_command)
    batch = cmd_lab.batch_app.command
    batch("cut", epilog=instrument.BATCH_CUT_EPILOG)(instrument.batch_cut)
    batch("show", epilog="Example: tracker batch show CB-00001-G")(instrument.batch_show)
    batch("sheet", epilog=instrument.BATCH_SHEET_EPILOG)(instrument.batch_sheet)
    batch(
        "blank-delta",
        epilog="Example: tracker batch blank-delta CB-00001-G --ratio 44/40 --delta -0.8",
    )(instrument.batch_blank_delta)
    cmd_lab.reference_app.command("value", epilog=instrument.REFERENCE_VALUE_EPILOG)(
        instrument.reference_value
    )
    app.add_typer(cmd_setup.operator_app, name="operator")
    app.add_typer(cmd_keys.key_app, name="key")
    app.add_typer(cmd_setup.location_app, name="location")
    app.add_typer(cmd_loans.lender_app, name="lender")
    app.add_typer(cmd_loans.loan_app, name="loan")
    app.add_typer(cmd_loans.specimen_app, name="specimen")
    app.add_typer(cmd_lab.reference_app, name="reference")
    app.add_typer(cmd_budget.material_app, name="material")
    app.add_typer(cmd_instrument.profile_app, name="profile")
    app.add_typer(cmd_instrument.session_app, name="session")
    app.add_typer(cmd_instrument.curve_app, name="curve")
    app.add_typer(cmd_reports.report_app, name="report")
    app.add_typer(cmd_reports.manifest_app, name="manifest")
    app.add_typer(cmd_reports.export_app, name="export")
    app.add_typer(cmd_reports.shipment_app, name="shipment")
    cmd_loans.specimen_app.command("photo", epilog=cmd_reports.PHOTO_EPILOG)(
        cmd_reports.specimen_photo
    )
    app.add_typer(cmd_lab.batch_app, name="batch")
    app.add_typer(cmd_labels.labels_app, name="labels")
    app.add_typer(cmd_ledger.ledger_app, name="ledger")
    app.add_typer(cmd_correct.correct_app, name="correct")
    db = cmd_setup.db_app.command
    db("workstation-grants", epilog=cmd_logins.GRANTS_EPILOG)(cmd_logins.workstation_grants)
    db("add-login", epilog=cmd_logins.ADD_LOGIN_EPILOG)(cmd_logins.add_login)
    app.add_typer(cmd_setup.db_app, name="db")


_register()


def main() -> None:
    """Console-script entry point."""
    app(prog_name="tracker")
