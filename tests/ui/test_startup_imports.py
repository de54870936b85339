"""Opening the interface loads only what the loans overview needs.

Every start pays for what it imports before the overview fills: numpy (through
``uncertainties``), the label services, the drawing libraries and the other screens are
loaded when a person first uses them. A fresh interpreter opens the app on the demo
database until the overview holds its rows, then names what it had loaded.
"""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

from tests.ui.conftest import Lab

_OPEN_TO_OVERVIEW = """
import asyncio, sys
from textual.widgets import DataTable
from tracker.ui import make_app

async def main(target: str) -> None:
    app = make_app(target, "ines")
    async with app.run_test(headless=True, size=(120, 40)) as pilot:
        rows = 0
        for _ in range(2000):
            await pilot.pause(0.005)
            if type(app.screen).__name__ == "OverviewScreen":
                tables = list(app.screen.query("#loans").results(DataTable))
                rows = tables[0].row_count if tables else 0
                if rows:
                    break
        loaded = sorted(sys.modules)
    print(rows)
    print(" ".join(loaded))

asyncio.run(main(sys.argv[1]))
"""

# Loaded on first use, never to show the overview.
HEAVY = ("numpy", "uncertainties", "reportlab", "qrcode", "PIL", "matplotlib", "alembic")
LATER = (
    "tracker.services.labels.handling",
    "tracker.services.read.lineage",
    "tracker.services.labels.wording",
    "tracker.output",
    "tracker.demo",
    "tracker.ui.screens.loan",
    "tracker.ui.screens.batch",
    "tracker.ui.screens.labels",
    "tracker.ui.screens.ledger",
    "tracker.ui.screens.item",
    "tracker.ui.screens.drill",
)


def _opened(lab: Lab) -> tuple[int, set[str]]:
    root = Path(__file__).resolve().parents[2]
    result = subprocess.run(
        [sys.executable, "-c", _OPEN_TO_OVERVIEW, str(lab.db_path)],
        capture_output=True,
        text=True,
        check=True,
        cwd=root,
        timeout=120,
    )
    rows, modules = result.stdout.strip().splitlines()[-2:]
    return int(rows), set(modules.split())


def test_the_overview_opens_without_numpy_labels_or_other_screens(lab: Lab) -> None:
    rows, modules = _opened(lab)
    assert rows > 0  # the overview really filled: the demo's loans are listed
    assert "tracker.ui.screens.overview" in modules
    tops = {name.split(".")[0] for name in modules}
    assert tops.isdisjoint(HEAVY), sorted(tops & set(HEAVY))
    early = sorted(m for m in modules if m.startswith(LATER))
    assert early == []
