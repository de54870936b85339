"""A progress bar on the terminal for the long walks (the ledger, the books).

Drawn on stderr, and only when stderr is a terminal and no JSON was asked for: output a
script reads stays exactly what it was.
"""

from collections.abc import Callable, Iterator
from contextlib import contextmanager

import typer
from rich.progress import BarColumn, MofNCompleteColumn, Progress, TextColumn

from tracker.cli.state import errors, state

Tell = Callable[[int, int], None]  # (done, total), as the services call it


@contextmanager
def progress_bar(ctx: typer.Context, what: str) -> Iterator[Tell | None]:
    """A ``(done, total)`` callback drawing a bar, or None where no bar belongs."""
    if state(ctx).as_json or not errors.is_terminal:
        yield None
        return
    columns = (TextColumn(what), BarColumn(), MofNCompleteColumn())
    with Progress(*columns, console=errors, transient=True) as bar:
        task = bar.add_task(what, total=None)

        def tell(done: int, total: int) -> None:
            bar.update(task, completed=done, total=total)

        yield tell
