"""`tracker labels ...` on the demo database: the done-when, refusals in one line, previews."""

from __future__ import annotations

import hashlib
import json
from collections import Counter
from pathlib import Path

import pytest
from PIL import Image

from tests.cli.conftest import counts, invoke, ok_json
from tests.qr_reading import decode, pdfium_pages, pdftoppm_available, pdftoppm_pages

DPI = 300


def _queued(db: Path) -> list[str]:
    return [row["item"] for row in ok_json(invoke("labels", "list", db=db, as_json=True))]


def _events(db: Path) -> int:
    report = ok_json(invoke("ledger", "verify", db=db, as_json=True))
    assert report["ok"]
    return int(report["events"])


def test_done_when_the_demo_queue_prints_on_an_a4_sheet_and_every_qr_reads_back(
    demo: Path, tmp_path: Path
) -> None:
    queued = _queued(demo)
    assert len(queued) > 40  # the demo's check-ins, drills, dissolutions, aliquots, columns
    events = _events(demo)
    out = tmp_path / "demo-labels.pdf"
    job = ok_json(
        invoke(
            "labels",
            "print",
            "--stock",
            "a4-65",
            "--out",
            str(out),
            db=demo,
            actor="ines",
            as_json=True,
        )
    )
    pdf = out.read_bytes()
    assert job["job"]["sha256"] == hashlib.sha256(pdf).hexdigest()
    assert job["job"]["items"] == queued and job["out"] == str(out)
    # rasterised by PDFium (pypdfium2) and decoded by zxing-cpp, neither of them tracker's code
    found = [d.text for page in pdfium_pages(pdf, DPI) for d in decode(page, DPI)]
    assert Counter(found) == Counter(queued)
    assert _events(demo) == events + 1  # exactly one ledger event for the job
    assert _queued(demo) == []
    again = invoke("labels", "print", "--stock", "a4-65", db=demo, actor="ines")
    assert again.exit_code == 1 and "no labels are queued" in again.stderr


def test_done_when_also_holds_through_poppler(demo: Path, tmp_path: Path) -> None:
    if not pdftoppm_available():
        print("skipping: pdftoppm is not installed (apt-get install poppler-utils)")
        pytest.skip("pdftoppm is not installed (apt-get install poppler-utils)")
    queued = _queued(demo)
    out = tmp_path / "sheet.pdf"
    ok_json(
        invoke(
            "labels",
            "print",
            "--stock",
            "letter-30",
            "--start",
            "7",
            "--out",
            str(out),
            db=demo,
            actor="ines",
            as_json=True,
        )
    )
    pages = pdftoppm_pages(out.read_bytes(), DPI)  # poppler's pdftoppm rasterises
    assert len(pages) == -(-(6 + len(queued)) // 30)
    assert Counter(d.text for page in pages for d in decode(page, DPI)) == Counter(queued)


def _stocks_file(tmp_path: Path) -> Path:
    path = tmp_path / "lab-stocks.toml"
    path.write_text(
        "[stock.poster]\npage_width_mm = 100\npage_height_mm = 100\n"
        "label_width_mm = 150\nlabel_height_mm = 20\n",
        encoding="utf-8",
    )
    return path


@pytest.mark.parametrize(
    ("args", "option", "value", "fragment"),
    [
        (("--stock", "a3-1"), "--stock", "a3-1", "no such stock"),
        (("--stock", "poster", "--stocks", "{stocks}"), "--stock", "poster", "larger than its"),
        (("--stock", "a4-65", "--start", "66"), "--start", "66", "past the sheet"),
        (("--stock", "a4-65", "--start", "0"), "--start", "0", "past the sheet"),
        (("--stock", "cap-dot"), "--stock", "cap-dot", "has no room"),
        (("--stock", "a4-65", "--out", "{tmp}/nowhere/x.pdf"), "--out", "/", "folder"),
        (("--stock", "a4-65", "--printer", "bad name"), "--printer", "bad name", "pattern"),
        (("--stock", "a4-65", "--printer", "-h"), "--printer", "-h", "pattern"),
    ],
)
@pytest.mark.parametrize("as_json", [False, True], ids=["human", "json"])
def test_bad_print_options_give_one_line_and_write_nothing(
    demo: Path,
    tmp_path: Path,
    args: tuple[str, ...],
    option: str,
    value: str,
    fragment: str,
    as_json: bool,
) -> None:
    # a long link prefix makes every symbol version 4: too big for a 15 mm dot
    prefix = "HTTPS://" + "L" * 40 + ".EXAMPLE/T/"
    assert invoke("labels", "uri-prefix", prefix, db=demo, actor="ines").exit_code == 0
    before = counts(demo)
    out_dir = tmp_path / "out"
    out_dir.mkdir()
    filled = [a.format(stocks=_stocks_file(tmp_path), tmp=tmp_path) for a in args]
    if "--out" not in filled:
        filled += ["--out", str(out_dir / "labels.pdf")]
    result = invoke("labels", "print", *filled, db=demo, actor="ines", as_json=as_json)
    assert result.exit_code == 2, result.stderr
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith(f"error: {option}: ") and fragment in lines[0]
    assert value in lines[0]
    if as_json:
        error = json.loads(result.stdout)
        assert (error["field"], error["exit_code"]) == (option, 2) and value in error["value"]
    assert counts(demo) == before
    assert list(out_dir.iterdir()) == []


def test_reprint_queue_and_cancel_from_the_command_line(demo: Path, tmp_path: Path) -> None:
    queued = _queued(demo)
    first, second = queued[0], queued[1]
    events = _events(demo)
    cancelled = ok_json(
        invoke(
            "labels",
            "cancel",
            first,
            "--reason",
            "returned unopened",
            db=demo,
            actor="ines",
            as_json=True,
        )
    )
    assert cancelled["item"]["items"] == [first]
    assert _queued(demo) == queued[1:]
    assert invoke("labels", "queue", first, db=demo, actor="ines").exit_code == 0
    twice = invoke("labels", "queue", second, db=demo, actor="ines")
    assert twice.exit_code == 1 and "already has a label in the queue" in twice.stderr
    out = tmp_path / "again.pdf"
    job = ok_json(
        invoke(
            "labels",
            "reprint",
            first.lower(),
            "--reason",
            "label torn",
            "--stock",
            "specimen-bag",
            "--out",
            str(out),
            db=demo,
            actor="ines",
            as_json=True,
        )
    )
    assert job["job"]["kind"] == "reprint" and job["job"]["items"] == [first]
    assert [d.text for d in decode(pdfium_pages(out.read_bytes(), DPI)[0], DPI)] == [first]
    assert _events(demo) == events + 3  # cancel, queue, reprint: one event each
    no_reason = invoke("labels", "reprint", first, "--stock", "a4-65", db=demo, actor="ines")
    assert no_reason.exit_code == 2 and "--reason" in no_reason.stderr


def test_preview_draws_the_queue_and_records_nothing(demo: Path, tmp_path: Path) -> None:
    queued = _queued(demo)
    before = counts(demo)
    out = tmp_path / "sheet.png"
    answer = ok_json(
        invoke(
            "labels",
            "preview",
            "--stock",
            "a4-24",
            "--out",
            str(out),
            "--dpi",
            str(DPI),
            db=demo,
            as_json=True,
        )
    )
    assert answer["items"] == queued[:24] and answer["pages"] == -(-len(queued) // 24)
    found = [d.text for d in decode(Image.open(out), DPI)]  # zxing-cpp
    assert Counter(found) == Counter(queued[:24])
    assert counts(demo) == before
    named = ok_json(
        invoke(
            "labels",
            "preview",
            queued[3],
            "--stock",
            "cap-dot",
            "--out",
            str(out.with_name("one.png")),  # a new file: the first sheet is never replaced
            db=demo,
            as_json=True,
        )
    )
    assert named["items"] == [queued[3]]


def test_stocks_lists_presets_and_flags_a_broken_lab_stock(tmp_path: Path) -> None:
    rows = ok_json(
        invoke("labels", "stocks", "--stocks", str(_stocks_file(tmp_path)), as_json=True)
    )
    by_name = {row["name"]: row for row in rows}
    assert by_name["a4-65"]["ok"] and by_name["a4-65"]["grid"] == [5, 13]
    assert not by_name["poster"]["ok"] and "larger than its" in by_name["poster"]["problem"]
    human = invoke("labels", "stocks", "--stocks", str(_stocks_file(tmp_path)))
    assert human.exit_code == 0 and "NOT USABLE" in human.stdout
    missing = invoke("labels", "stocks", "--stocks", str(tmp_path / "none.toml"))
    assert missing.exit_code == 2 and missing.stderr.startswith("error: --stocks: ")


def test_the_uri_prefix_is_shown_set_and_cleared(demo: Path) -> None:
    assert "none" in invoke("labels", "uri-prefix", db=demo).stdout
    refused = invoke("labels", "uri-prefix", "HTTPS://LAB.EXAMPLE/T/", db=demo, actor="tomas")
    assert refused.exit_code == 1 and "manager" in refused.stderr
    bad = invoke("labels", "uri-prefix", "not a link", db=demo, actor="ines")
    assert bad.exit_code == 2 and bad.stderr.startswith("error: URI_PREFIX: 'not a link'")
    assert (
        invoke("labels", "uri-prefix", "HTTPS://LAB.EXAMPLE/T/", db=demo, actor="ines").exit_code
        == 0
    )
    queued = _queued(demo)[0]
    found = ok_json(invoke("lookup", "https://lab.example/t/" + queued, db=demo, as_json=True))
    assert found["id"] == queued
    assert invoke("labels", "uri-prefix", "--clear", db=demo, actor="ines").exit_code == 0
    assert "none" in invoke("labels", "uri-prefix", db=demo).stdout


def test_chosen_items_print_and_the_rest_stay_queued(demo: Path, tmp_path: Path) -> None:
    queued = _queued(demo)
    chosen = [queued[0], queued[-1].lower().replace("-", "")]  # as typed or scanned
    out = tmp_path / "two.pdf"
    job = ok_json(
        invoke(
            "labels",
            "print",
            "--stock",
            "a4-65",
            "--item",
            chosen[0],
            "--item",
            chosen[1],
            "--out",
            str(out),
            db=demo,
            actor="ines",
            as_json=True,
        )
    )
    assert job["job"]["items"] == [queued[0], queued[-1]]
    pdf = out.read_bytes()
    found = [d.text for page in pdfium_pages(pdf, DPI) for d in decode(page, DPI)]
    assert sorted(found) == sorted([queued[0], queued[-1]])
    assert _queued(demo) == queued[1:-1]
    before = counts(demo)
    refused = invoke(
        "labels", "print", "--stock", "a4-65", "--item", queued[0], db=demo, actor="ines"
    )
    assert refused.exit_code == 1  # printed already: not queued any more
    (line,) = refused.stderr.strip().splitlines()
    assert queued[0] in line and "has no queued label" in line
    assert counts(demo) == before
