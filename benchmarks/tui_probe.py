"""Child process for the cold-start figure: a fresh interpreter, until the first screen is ready.

``python -m benchmarks.tui_probe app TARGET OPERATOR`` opens tracker's interface headless
on the database, as the ``tracker`` command does (the command line loaded first), and
prints ``ready`` once the loans overview table holds the services' rows;
``python -m benchmarks.tui_probe bare`` opens a Textual app with one static line and prints
``ready`` once it is mounted. The parent times each from launch to that line.
"""

from __future__ import annotations

import asyncio
import sys

SIZE = (120, 40)


async def _tracker(target: str, operator: str) -> None:
    # What ``tracker --db TARGET --as OPERATOR`` loads and runs: the command line (Typer and
    # every command) reads the options, then opens the interface on them.
    import tracker.cli  # noqa: F401  (loaded for its cost, as the command loads it)
    from tracker.ui import make_app

    app = make_app(target, operator)
    from textual.widgets import DataTable, Static

    async with app.run_test(headless=True, size=SIZE):
        while True:
            await asyncio.sleep(0.002)  # not pilot.pause: it would wait for workers' messages
            if type(app.screen).__name__ != "OverviewScreen":  # pushed; maybe not composed yet
                continue
            tables = list(app.screen.query("#loans").results(DataTable))
            hints = list(app.screen.query("#loan-hint").results(Static))
            said = str(hints[0].render()) if hints else ""
            # ready when the services have answered: their lines in the table, or a lab with
            # no open loan said so (the hint counts the loans it read)
            if tables and (tables[0].row_count or said[:1].isdigit()):
                print(f"ready {tables[0].row_count}", flush=True)
                return


async def _bare() -> None:
    from textual.app import App, ComposeResult
    from textual.widgets import Static

    class Bare(App[None]):
        def compose(self) -> ComposeResult:
            yield Static("tracker")

    app = Bare()
    async with app.run_test(headless=True, size=SIZE) as pilot:
        await pilot.pause(0)
        print("ready 1", flush=True)


def main(argv: list[str]) -> int:
    if argv[1] == "bare":
        asyncio.run(_bare())
    else:
        asyncio.run(_tracker(argv[2], argv[3]))
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv))
