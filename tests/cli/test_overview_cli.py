"""The loans overview as printed: at any terminal width every flag of every loan is shown
whole (beside its loan when there is room, under the table when there is not), never cut
to a few letters."""

from __future__ import annotations

from pathlib import Path

import pytest

from tests.cli.conftest import invoke, ok_json


@pytest.mark.parametrize("width", [60, 80, 100, 160])
def test_every_flag_is_printed_whole_at_any_width(
    demo_db: Path, monkeypatch: pytest.MonkeyPatch, width: int
) -> None:
    loans = ok_json(invoke("overview", db=demo_db, as_json=True))
    flags = {(loan["reference"], flag) for loan in loans for flag in loan["flags"]}
    assert flags  # the demo has loans with flags to show
    monkeypatch.setenv("COLUMNS", str(width))
    printed = invoke("overview", db=demo_db)
    assert printed.exit_code == 0, printed.stderr
    assert "…" not in printed.stdout
    lines = printed.stdout.splitlines()
    assert max(len(line.rstrip()) for line in lines) <= width
    for _, flag in flags:
        assert any(flag in line for line in lines), (width, flag)
