"""The interface and signing keys: the passphrase asked once when the operator is chosen, the
key locked again after the idle time; a technician's manager action refused however the
form is filled, even after the ``operator`` table was edited."""

from __future__ import annotations

import pytest
from sqlalchemy import text
from textual.app import App
from textual.widgets import Input, Static

from tests.ui.conftest import Lab, clock, events_after, head, scan, settle, text_of, until
from tracker.db.keyring import PROCESS
from tracker.demo import DEMO_PASSPHRASE, demo_operators, demo_signer, leave_key_files
from tracker.domain.errors import InputError
from tracker.ui.app import TrackerApp
from tracker.ui.screens.drill import DrillScreen
from tracker.ui.screens.ledger import LedgerScreen
from tracker.ui.screens.passphrase import PassphraseScreen
from tracker.ui.settings import LOCK_AFTER_ENV, lock_after

TOMAS = demo_signer("tomas").key_id


def _asking(app: App[None]) -> bool:
    """The passphrase screen is on top, composed (pushed is not yet drawn) and its field has
    the focus, so what a person types and Enter go to it."""
    if not isinstance(app.screen, PassphraseScreen):
        return False
    fields = app.screen.query("#passphrase")
    return bool(fields) and app.focused is fields.first()


async def test_the_passphrase_is_asked_once_and_again_after_the_idle_time(lab: Lab) -> None:
    leave_key_files(demo_operators())  # in this test's config folder
    PROCESS.forget()
    app = TrackerApp(str(lab.db_path), "tomas", clock=clock, out_dir=lab.out, lock_after=1.5)
    async with app.run_test(size=(100, 30)) as pilot:
        await until(pilot, lambda: _asking(pilot.app))
        field = pilot.app.screen.query_one("#passphrase", Input)
        assert field.password  # typed characters are not shown
        field.value = "not the passphrase at all"
        await pilot.press("enter")
        problem = pilot.app.screen.query_one("#passphrase-problem", Static)
        await until(pilot, lambda: "does not unlock tomas's key" in text_of(problem))
        assert PROCESS.get(TOMAS) is None and isinstance(pilot.app.screen, PassphraseScreen)
        field.value = DEMO_PASSPHRASE
        await pilot.press("enter")
        await until(pilot, lambda: not isinstance(pilot.app.screen, PassphraseScreen))
        assert PROCESS.get(TOMAS) is not None
        for _ in range(3):  # working (keys pressed within the idle time): never asked again
            await pilot.press("f6")
            await pilot.pause(0.3)
            assert not isinstance(pilot.app.screen, PassphraseScreen)
        assert isinstance(pilot.app.screen, LedgerScreen)
        await until(pilot, lambda: _asking(pilot.app), seconds=10)
        assert PROCESS.get(TOMAS) is None  # forgotten: the key is locked again
        assert "Locked after" in text_of(pilot.app.screen.query_one(".intro", Static))


async def test_a_technician_cannot_override_from_the_interface_even_as_a_manager_in_the_table(
    lab: Lab,
) -> None:
    db = lab.open()
    with db.engine.begin() as conn:
        conn.execute(text("UPDATE operator SET role = 'manager' WHERE code = 'tomas'"))
    db.close()
    start = head(lab)
    async with lab.app("tomas").run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        assert isinstance(pilot.app, TrackerApp)
        assert "no overrides" in pilot.app.operator_label  # the ledger's role, not the table's
        await pilot.press("d")
        await settle(pilot)
        form = pilot.app.screen
        assert isinstance(form, DrillScreen)
        override = form.query_one("#f-override-reason", Input)
        assert override.disabled
        await scan(pilot, "SP-00010-U")
        form.query_one("#f-tare", Input).value = "1200.000 mg"
        form.query_one("#f-gross", Input).value = "1201.500 mg"  # over the specimen's limit
        override.value = "forced into the disabled field"  # what a determined person could do
        await pilot.press("ctrl+s")
        await settle(pilot)
        await pilot.press("y")  # an override is confirmed first
        await until(pilot, lambda: "refused" in text_of(form.query_one("#outcome", Static)))
        outcome = text_of(form.query_one("#outcome", Static))
        assert "overriding a loan limit needs an operator with the manager role" in outcome
        assert "(tomas is a technician)" in outcome
    assert events_after(lab, start) == []


@pytest.mark.parametrize("given", ["soon", "0", "-5", "nan", "86401", "1e9"])
def test_an_idle_time_that_is_not_one_is_refused_in_one_line(
    given: str, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.setenv(LOCK_AFTER_ENV, given)
    with pytest.raises(InputError) as caught:
        lock_after()
    assert caught.value.field == LOCK_AFTER_ENV and caught.value.value == given


def test_the_idle_time_is_fifteen_minutes_unless_set(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.delenv(LOCK_AFTER_ENV, raising=False)
    assert lock_after() == 15 * 60
    monkeypatch.setenv(LOCK_AFTER_ENV, "90")
    assert lock_after() == 90
