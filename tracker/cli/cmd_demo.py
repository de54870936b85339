"""``tracker demo``: build the invented demo database and show it."""

from pathlib import Path
from typing import Annotated

import typer

from tracker.cli import cmd_inspect
from tracker.cli.state import cli_fields, errors, state

DEMO_FILE = "tracker-demo.sqlite"
DEMO_EPILOG = f"Example: tracker demo --out {DEMO_FILE}"


def demo(
    ctx: typer.Context,
    out: Annotated[
        Path | None,
        typer.Option(
            "--out",
            help=f"New file for the demo database (an existing file is refused); default "
            f"{DEMO_FILE} here, or tracker-demo-2.sqlite … when that is taken.",
        ),
    ] = None,
    no_open: Annotated[
        bool,
        typer.Option("--no-open", help="Print the overview instead of opening the interface."),
    ] = False,
) -> None:
    """Build the demo database (invented loans and specimens) and open it.

    On a terminal the interface opens on the demo; piped, with --json or with --no-open
    the loans overview is printed instead. The demo's people sign with invented keys; their
    key files are left in your config folder, locked with the demo's passphrase
    "demo passphrase, invented" (README, Quick start).
    """
    from tracker.db.keyring import PROCESS
    from tracker.demo import build_demo, demo_operators, demo_signer, free_demo_path

    with cli_fields(ctx):
        out = out or free_demo_path(Path.cwd(), DEMO_FILE)
        steps = build_demo(out)
    for code in demo_operators():  # invented, public keys: the demo opens without asking
        PROCESS.add(demo_signer(code))
    errors.print(
        f"built {out} from the demo scenario ({steps} steps, all invented data)",
        markup=False,
        soft_wrap=True,
    )
    errors.print(f"explore it: tracker --db {out} show KF-2026-014", markup=False, soft_wrap=True)
    state(ctx).db = str(out)
    if no_open:
        cmd_inspect.show_overview(ctx)
    else:
        cmd_inspect.open_or_overview(ctx)
