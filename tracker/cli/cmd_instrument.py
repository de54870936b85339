"""Column results, instrument sessions, delta reduction, results and strontium screening."""

import json
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import Annotated, Any

import typer

from tracker.cli.out_options import Force, kept_as, kept_note
from tracker.cli.state import database, emit, errors, perform, read_upload
from tracker.db import outputs
from tracker.domain.errors import InputError, TrackerError, at_cell
from tracker.domain.textfiles import MAX_SETTINGS_BYTES, FileProblem, load_settings
from tracker.present import text as words
from tracker.present.lab import batch_table, reduction_table, results_table, screen_table
from tracker.present.text import done
from tracker.services.bench import batch_sheet as batch_sheet_service
from tracker.services.bench import columns
from tracker.services.instrument import reduction, results, screening, sessions

Opt = typer.Option

profile_app = typer.Typer(
    help="Column mapping profiles for instrument exports.",
    no_args_is_help=True,
    epilog="Example: tracker profile list",
)
session_app = typer.Typer(
    help="Instrument sessions: import, reduce, plot.",
    no_args_is_help=True,
    epilog="Example: tracker session reduce IS-00001-P",
)
curve_app = typer.Typer(
    help="Strontium reference curves for age screening.",
    no_args_is_help=True,
    epilog="Example: tracker curve add --help",
)


def batch_cut(
    ctx: typer.Context,
    position: Annotated[str, typer.Argument(help="Column position ID (CP-...).")],
    cut: Annotated[str, Opt("--cut", help="Cut name, one of the batch's cuts.")],
    recovered: Annotated[
        str | None, Opt("--recovered", help="Element recovered, e.g. '9.87 ug'.")
    ] = None,
    u: Annotated[str | None, Opt("--u", help="Its standard uncertainty, with unit.")] = None,
    rel_u: Annotated[float | None, Opt("--rel-u", help="Or relative uncertainty, %.")] = None,
    to: Annotated[str | None, Opt("--to", help="Location of the cut's vial.")] = None,
) -> None:
    """Record a collected cut of a column and what element it recovered."""
    request = {
        "position": position,
        "cut": cut,
        "recovered": recovered,
        "uncertainty": u,
        "relative_uncertainty_percent": rel_u,
        "location": to,
    }
    answer = perform(ctx, columns.record_cut, request)
    item = answer.item
    emit(ctx, answer, lambda: done(answer, words.cut_recorded(item)))


BATCH_CUT_EPILOG = "Example: tracker batch cut CP-00002-6 --cut Ca --recovered '10.2 ug' --rel-u 1"


def batch_sheet(
    ctx: typer.Context,
    batch: Annotated[str, typer.Argument(help="Batch ID (CB-...).")],
    file: Annotated[Path, typer.Argument(help="Sheet: CSV, TSV or XLSX, one row per column.")],
) -> None:
    """Enter a batch's columns and cuts from a sheet, all at once; safe to repeat.

    Columns: slot, kind (sample, blank, reference), item (aliquot ID or reference
    material), loaded (reference materials, with unit), and per cut of the batch a
    column named like the cut with the element recovered (with unit) and optionally
    '<cut> u' with its standard uncertainty. Rows already entered are passed over.
    """
    upload = read_upload(file, "FILE") or {}
    answer = perform(ctx, batch_sheet_service.enter_sheet, {"batch": batch, **upload})
    item = answer.item
    emit(
        ctx,
        answer,
        lambda: done(
            answer,
            f"{len(item.positions_added)} column(s) and {len(item.cuts_added)} cut(s) added "
            f"to {item.batch}; {item.already_entered} already entered",
        ),
    )


BATCH_SHEET_EPILOG = "Example: tracker batch sheet CB-00001-G columns-2026-11-20.csv"


def batch_show(
    ctx: typer.Context,
    batch: Annotated[str, typer.Argument(help="Batch ID (CB-...).")],
) -> None:
    """Yields and blank fractions of every column of a batch, flagged against its limits."""
    with database(ctx) as db:
        summary = columns.summarize_batch(db, batch)
    emit(ctx, summary, lambda: batch_table(summary))


def batch_blank_delta(
    ctx: typer.Context,
    batch: Annotated[str, typer.Argument(help="Batch ID.")],
    ratio: Annotated[str, Opt("--ratio", help="e.g. 44/40.")],
    delta: Annotated[float, Opt("--delta", help="The blank's δ, ‰, on the session scale.")],
) -> None:
    """Record the procedural blank's δ so results get the blank mixing correction."""
    answer = perform(
        ctx, columns.set_blank_delta, {"batch": batch, "ratio": ratio, "delta_permil": delta}
    )
    emit(ctx, answer, lambda: done(answer, words.blank_delta_set(ratio, delta, batch)))


def definition_file(path: Path) -> dict[str, Any]:
    """A settings file (TOML or JSON) read safely; problems name the file, row and column."""
    upload = read_upload(path, "FILE", limit=MAX_SETTINGS_BYTES) or {}
    try:
        return load_settings(upload["content"], path.suffix.lower())
    except FileProblem as problem:
        where = at_cell(path.name, problem.row, problem.column)
        raise InputError(where, None, problem.reason) from None


@contextmanager
def named_file(path: Path) -> Iterator[None]:
    """A definition the service refuses names the file and the key (its "column")."""
    try:
        yield
    except TrackerError as error:
        if error.field.startswith("definition"):
            error.field = f"{path.name}, key {error.field.removeprefix('definition.')}"
        raise


@profile_app.command(
    "save", epilog="Example: tracker profile save mc-ca demo_db/instrument/mc-ca-profile.toml"
)
def profile_save(
    ctx: typer.Context,
    name: Annotated[str, typer.Argument(help="Name to save it under.")],
    file: Annotated[Path, typer.Argument(help="TOML or JSON file (see schemas/profile).")],
) -> None:
    """Save a column mapping profile (replaces one of the same name)."""
    with named_file(file):
        answer = perform(
            ctx, sessions.save_profile, {"name": name, "definition": definition_file(file)}
        )
    emit(ctx, answer, lambda: done(answer, f"profile {name}"))


@profile_app.command("list", epilog="Example: tracker --json profile list")
def profile_list(ctx: typer.Context) -> None:
    """List saved profiles."""
    with database(ctx) as db:
        rows = sessions.list_profiles(db)
    emit(
        ctx,
        rows,
        lambda: (
            "\n".join(f"{p.name}: {json.dumps(p.definition)}" for p in rows) or "no profiles yet"
        ),
    )


def _pairs(values: list[str]) -> dict[str, float]:
    parsed = {}
    for item in values:
        ratio, _, number = item.partition("=")
        try:
            parsed[ratio.strip()] = float(number)
        except ValueError:
            raise InputError(
                "--standard-value", item, "write RATIO=VALUE, e.g. 87/86=0.710248"
            ) from None
    return parsed


@session_app.command(
    "import",
    epilog="Example: tracker session import run.csv --profile mc-ca "
    "--name 'Ca 2026-11-24' --instrument 'MC-ICP-MS 2' --element Ca "
    "--standard 'SRM 915a'",
)
def session_import(
    ctx: typer.Context,
    file: Annotated[Path, typer.Argument(help="The instrument's export (CSV, TSV or XLSX).")],
    profile: Annotated[str, Opt("--profile", help="Saved mapping profile.")],
    name: Annotated[str, Opt("--name", help="Session name.")],
    instrument_name: Annotated[str, Opt("--instrument", help="Which instrument.")],
    element: Annotated[str, Opt("--element", help="Element measured.")],
    standard: Annotated[str, Opt("--standard", help="Bracketing standard as named in the file.")],
    mode: Annotated[str, Opt("--mode", help="delta (‰) or ratio (normalised ratios).")] = "delta",
    standard_value: Annotated[
        list[str] | None,
        Opt("--standard-value", help="Ratio mode: RATIO=VALUE accepted for the standard."),
    ] = None,
    started: Annotated[str | None, Opt("--started", help="Start, ISO 8601 with zone.")] = None,
) -> None:
    """Import an instrument export through a saved profile; unmatched rows are listed."""
    upload = read_upload(file, "FILE") or {}
    request = {
        "profile": profile,
        "filename": upload.get("filename"),
        "content": upload.get("content"),
        "name": name,
        "instrument": instrument_name,
        "element": element,
        "bracketing_standard": standard,
        "mode": mode,
        "standard_values": _pairs(standard_value or []),
        "started_at": started,
    }
    answer = perform(ctx, sessions.import_session, request)
    item = answer.item

    def human() -> str:
        lines = [
            f"session {item.id}: {item.measurements} rows — {item.standards} standards, "
            f"{item.samples} samples, {item.references} reference materials, "
            f"{item.blanks} blanks, {len(item.unmatched)} unmatched"
        ]
        lines += [
            f"  unmatched row {u.row} (run {u.run_order}) {u.sample_name!r}: {u.reason}"
            for u in item.unmatched
        ]
        return "\n".join(lines)

    emit(ctx, answer, human)


@session_app.command("reduce", epilog="Example: tracker --json session reduce IS-00001-P")
def session_reduce(
    ctx: typer.Context,
    session: Annotated[str, typer.Argument(help="Session ID (IS-...).")],
) -> None:
    """Bracket, average and check a session: δ with 2SD and n, reference materials pass/fail."""
    answer = perform(ctx, reduction.reduce_session, {"session": session})
    emit(ctx, answer, lambda: reduction_table(answer.item))


@session_app.command("plot", epilog="Example: tracker session plot IS-00001-P --out drift.png")
def session_plot(
    ctx: typer.Context,
    session: Annotated[str, typer.Argument(help="Session ID.")],
    out: Annotated[Path, Opt("--out", help="New PNG file to write.")],
    force: Force = False,
) -> None:
    """Plot the bracketing standard's drift over the session (PNG)."""
    from tracker.output.plots import drift_png

    with database(ctx) as db:
        outputs.check_target(out, "--out", force=force, database=db.path)
        series = sessions.standard_drift(db, session)
        written = outputs.write_new(
            out, drift_png(series), "--out", force=force, database=db.path, clock=db.clock
        )
    emit(
        ctx,
        {
            "out": str(out),
            "standards": len(series.runs),
            "replaced_kept_as": kept_as(written.replaced),
        },
        lambda: f"wrote {out}" + kept_note(written.replaced),
    )


def results_command(
    ctx: typer.Context,
    loan: Annotated[str | None, Opt("--loan", help="Only this loan.")] = None,
    scale: Annotated[str | None, Opt("--scale", help="Report on this reference's scale.")] = None,
    plot: Annotated[
        Path | None, Opt("--plot", help="Also write δ against age to a new PNG file.")
    ] = None,
    ratio: Annotated[str, Opt("--ratio", help="Ratio to plot.")] = "44/40",
    force: Force = False,
) -> None:
    """Results per specimen (δ with 2SD and n), optionally on another reference scale."""
    with database(ctx) as db:
        if plot is not None:
            outputs.check_target(plot, "--plot", force=force, database=db.path)
        rows = results.results(db, loan, scale)
        if plot is not None:
            _write_plot(db, rows, ratio, plot, force)
    emit(ctx, rows, lambda: results_table(rows))


def _write_plot(db: Any, rows: Any, ratio: str, plot: Path, force: bool) -> None:
    from tracker.output.plots import delta_vs_age_png

    try:
        picture = delta_vs_age_png(rows, ratio)
    except ValueError as error:
        raise InputError("--ratio", ratio, str(error)) from None
    written = outputs.write_new(
        plot, picture, "--plot", force=force, database=db.path, clock=db.clock
    )
    if written.replaced is not None:
        errors.print(f"kept the replaced file as {written.replaced}", markup=False, soft_wrap=True)


RESULTS_EPILOG = "Example: tracker results --loan KF-2026-014 --scale 'Seawater in-house'"


def reference_value(
    ctx: typer.Context,
    name: Annotated[str, typer.Argument(help="Reference material name or ID.")],
    ratio: Annotated[str, Opt("--ratio", help="e.g. 44/40.")],
    scale: Annotated[str, Opt("--scale", help="Scale the value is on, e.g. 'SRM 915a'.")],
    value: Annotated[float, Opt("--value", help="Accepted δ (‰) or ratio.")],
    two_sd: Annotated[float, Opt("--two-sd", help="Tolerance: 2SD of the lab's record.")],
    source: Annotated[str, Opt("--source", help="Where the value comes from.")],
    kind: Annotated[str, Opt("--kind", help="delta or ratio.")] = "delta",
) -> None:
    """Record an accepted value for a reference material (managers only)."""
    request = {
        "reference": name,
        "ratio": ratio,
        "scale": scale,
        "value": value,
        "two_sd": two_sd,
        "source": source,
        "kind": kind,
    }
    answer = perform(ctx, results.set_reference_value, request)
    emit(ctx, answer, lambda: done(answer, f"{name} δ{ratio} = {value} ± {two_sd} on {scale}"))


REFERENCE_VALUE_EPILOG = (
    "Example: tracker reference value 'SRM 915b' --ratio 44/40 --scale "
    "'SRM 915a' --value 0.72 --two-sd 0.10 --source 'lab long-term record'"
)


@curve_app.command("add", epilog="Example: tracker curve add devonian-demo curve.csv")
def curve_add(
    ctx: typer.Context,
    name: Annotated[str, typer.Argument(help="Name of the curve.")],
    file: Annotated[Path, typer.Argument(help="CSV: age_ma, 87sr/86sr, u; sorted by age.")],
    note: Annotated[str | None, Opt("--note", help="Where the curve comes from.")] = None,
) -> None:
    """Store a ⁸⁷Sr/⁸⁶Sr reference curve for age screening."""
    upload = read_upload(file, "FILE") or {}
    answer = perform(
        ctx,
        screening.add_curve,
        {
            "name": name,
            "content": upload.get("content"),
            "filename": upload.get("filename"),
            "note": note,
        },
    )
    emit(ctx, answer, lambda: done(answer, f"curve {name} ({answer.item.points} points)"))


def loan_curve(
    ctx: typer.Context,
    loan: Annotated[str, typer.Argument(help="Loan ID or reference.")],
    curve: Annotated[str, typer.Argument(help="Stored curve name.")],
) -> None:
    """Screen a loan's specimens against a stored Sr reference curve."""
    answer = perform(ctx, screening.use_curve, {"loan": loan, "curve": curve})
    emit(ctx, answer, lambda: done(answer, f"{answer.item.reference} screens with {curve}"))


LOAN_CURVE_EPILOG = "Example: tracker loan curve MDGC/LN/0457 devonian-demo"


def screen_command(
    ctx: typer.Context,
    loan: Annotated[str, typer.Argument(help="Loan ID or reference.")],
) -> None:
    """Ages each specimen's ⁸⁷Sr/⁸⁶Sr allows on the loan's curve, and whether they fit."""
    with database(ctx) as db:
        lines = screening.screen(db, loan)
    emit(ctx, lines, lambda: screen_table(lines))


SCREEN_EPILOG = "Example: tracker screen MDGC/LN/0457"
