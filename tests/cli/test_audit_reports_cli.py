"""Reports, exports and reconciliation vouch only for books that agree with the ledger.

After one value is changed behind the ledger's back, a return report, each export and
`reconcile` of that loan are refused with one line naming the discrepancy, and nothing is
written; with --despite-discrepancies they are made, with every discrepancy listed first
(PDF text read with pypdf, CSV with the csv module) and the report's event saying so.
Another loan's report is not held up by it: each loan's audit reads the rows that loan's
report reads. Both backends.
"""

from __future__ import annotations

import csv
import io
import json
from pathlib import Path
from typing import Any

import pytest
from pypdf import PdfReader

from tests.cli.conftest import counts, invoke
from tests.services.audit_lab import Books
from tracker.domain.ids import Kind, format_id

POWDER = format_id(Kind.POWDER, 1)


def _tamper(books: Books) -> tuple[str, object]:
    """Powder 1's mass set to 1.0 mg without an event: its loan, and the mass it had."""
    ((old, loan),) = books.raw(
        "SELECT powder.mass_mg, loan.reference FROM powder "
        "JOIN specimen ON specimen.id = powder.specimen_id "
        "JOIN loan ON loan.id = specimen.loan_id WHERE powder.id = 1"
    )
    books.raw("UPDATE powder SET mass_mg = 1.0 WHERE id = 1")
    return loan, old


def _said(old: object) -> str:
    """The audit's line; a mass is shown as its stored digits (text on SQLite, NUMERIC on
    PostgreSQL)."""
    return f"powder {POWDER}: mass_mg is 1.0 but the ledger says {old}"


def _other_loan(books: Books, loan: str) -> str:
    rows = books.raw("SELECT reference FROM loan WHERE reference != :r ORDER BY id", r=loan)
    return str(rows[0][0])


def _last_event(books: Books) -> tuple[str, dict[str, Any]]:
    ((action, payload),) = books.raw(
        "SELECT action, payload FROM custody_event ORDER BY seq DESC LIMIT 1"
    )
    return action, json.loads(payload)


def test_a_return_report_is_refused_then_written_despite_listing_them(
    books: Books, tmp_path: Path
) -> None:
    loan, old = _tamper(books)
    before = counts(books.target)
    out = tmp_path / "report.pdf"
    refused = invoke("report", "return", loan, "--out", str(out), db=books.target, actor="ines")
    assert refused.exit_code == 1
    assert _said(old) in refused.stderr and "--despite-discrepancies" in refused.stderr
    assert len(refused.stderr.strip().splitlines()) == 1
    assert counts(books.target) == before and not out.exists()

    args = ("report", "return", loan, "--out", str(out), "--despite-discrepancies")
    written = invoke(*args, db=books.target, actor="ines")
    assert written.exit_code == 0, written.stderr
    first = PdfReader(out).pages[0].extract_text()
    flat = " ".join(first.split())
    assert "Books differ from the ledger" in flat and _said(old) in flat
    whole = " ".join(" ".join(p.extract_text() for p in PdfReader(out).pages).split())
    assert "chain intact" not in whole and "DIFFER from it in 1 place(s)" in whole
    action, payload = _last_event(books)
    assert action == "report.generated" and payload["despite_discrepancies"] == 1


def test_a_report_in_csv_lists_the_discrepancies_first(books: Books, tmp_path: Path) -> None:
    loan, old = _tamper(books)
    out = tmp_path / "report.csv"
    args = ("report", "return", loan, "--format", "csv", "--out", str(out))
    written = invoke(*args, "--despite-discrepancies", db=books.target, actor="ines")
    assert written.exit_code == 0, written.stderr
    rows = list(csv.DictReader(io.StringIO(out.read_text(encoding="utf-8-sig"))))
    assert rows[0]["booksDifferFromLedger"].startswith(_said(old))
    assert rows[0]["trackerId"] == "" and rows[1]["trackerId"]  # then the specimens


def test_another_loans_report_is_not_held_up(books: Books, tmp_path: Path) -> None:
    loan, _ = _tamper(books)
    other = _other_loan(books, loan)
    out = tmp_path / "other.json"
    args = ("report", "return", other, "--format", "json", "--out", str(out))
    written = invoke(*args, db=books.target, actor="ines")
    assert written.exit_code == 0, written.stderr
    report = json.loads(out.read_text(encoding="utf-8"))
    assert report["discrepancies"] == [] and report["ledger"]["books_agree"] is True


def test_a_deleted_specimen_and_its_powders_are_missed_by_its_loans_report(
    books: Books, tmp_path: Path
) -> None:
    """Rows deleted with their children: the loan's audit follows the ledger to them."""
    ((specimen, loan),) = books.raw(
        "SELECT specimen.id, loan.reference FROM specimen JOIN loan ON loan.id = specimen.loan_id "
        "WHERE specimen.id IN (SELECT specimen_id FROM powder) ORDER BY specimen.id LIMIT 1"
    )
    found = books.raw("SELECT id FROM powder WHERE specimen_id = :s", s=specimen)
    powders = [row[0] for row in found]
    books.raw("DELETE FROM powder WHERE specimen_id = :s", s=specimen)
    books.raw("DELETE FROM specimen WHERE id = :s", s=specimen)
    out = tmp_path / "r.json"
    args = ("report", "return", loan, "--format", "json", "--out", str(out))
    refused = invoke(*args, db=books.target, actor="ines")
    assert refused.exit_code == 1
    written = invoke(*args, "--despite-discrepancies", db=books.target, actor="ines")
    assert written.exit_code == 0
    listed = json.loads(out.read_text(encoding="utf-8"))["discrepancies"]
    gone = {(d["table"], d["key"]) for d in listed if d["kind"] == "missing"}
    assert ("specimen", format_id(Kind.SPECIMEN, specimen)) in gone
    assert {("powder", format_id(Kind.POWDER, p)) for p in powders} <= gone


def test_reconcile_prints_both_verdicts_and_refuses_altered_books(books: Books) -> None:
    clean = invoke("reconcile", db=books.target)
    assert clean.exit_code == 0
    flat = " ".join(clean.stdout.split())
    assert "ledger intact:" in flat and "books agree with the ledger" in flat
    loan, old = _tamper(books)
    # every loan's reconcile audits what changed since the whole-lab audit it just made; a
    # value changed by hand with no event since is not among those changes (the limit its
    # verdict states): the loan's own reconcile, and any whole-lab audit, find it
    unseen = invoke("reconcile", db=books.target)
    assert unseen.exit_code == 0
    assert "loans changed since event #" in " ".join(unseen.stdout.split())
    assert "in this computer's audit of" in " ".join(unseen.stdout.split())
    assert invoke("ledger", "audit", db=books.target).exit_code == 1  # and drops the mark
    for scope in ((), ("--loan", loan)):
        refused = invoke("reconcile", *scope, db=books.target)
        assert refused.exit_code == 1 and _said(old) in refused.stderr
        despite = invoke("reconcile", *scope, "--despite-discrepancies", db=books.target)
        assert despite.exit_code == 0
        flat = " ".join(despite.stdout.split())
        assert _said(old) in flat and "ledger intact" not in flat
    as_json = invoke("reconcile", "--despite-discrepancies", db=books.target, as_json=True)
    assert isinstance(json.loads(as_json.stdout), list)  # the document keeps its shape
    assert _said(old) in " ".join(as_json.stderr.split())


@pytest.mark.parametrize("what", ["specimens", "measurements"])
def test_exports_refuse_altered_books_or_list_them_first(
    books: Books, tmp_path: Path, what: str
) -> None:
    loan, old = _tamper(books)
    out = tmp_path / f"{what}.csv"
    refused = invoke("export", what, "--loan", loan, "--out", str(out), db=books.target)
    assert refused.exit_code == 1 and not out.exists()
    args = ("export", what, "--loan", loan, "--out", str(out), "--despite-discrepancies")
    assert invoke(*args, db=books.target).exit_code == 0
    rows = list(csv.DictReader(io.StringIO(out.read_text(encoding="utf-8-sig"))))
    assert rows[0]["booksDifferFromLedger"].startswith(_said(old))


def test_a_loan_export_carries_the_discrepancies(books: Books, tmp_path: Path) -> None:
    loan, old = _tamper(books)
    out = tmp_path / "loan.json"
    assert invoke("export", "loan", loan, "--out", str(out), db=books.target).exit_code == 1
    args = ("export", "loan", loan, "--out", str(out), "--despite-discrepancies")
    assert invoke(*args, db=books.target).exit_code == 0
    report = json.loads(out.read_text(encoding="utf-8"))["report"]
    (said,) = (d["said"] for d in report["discrepancies"])
    assert said.startswith(_said(old))
    assert report["ledger"]["books_agree"] is False
