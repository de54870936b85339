"""JSON Schemas for every file tracker reads or writes, generated from the pydantic models.

``python -m tracker.schemas`` rewrites ``schemas/``; a test fails when a committed
schema differs from what the code generates, so the files never drift from the code.
"""

from __future__ import annotations

import json
import sys
from collections.abc import Callable
from pathlib import Path
from typing import Any

from pydantic import TypeAdapter

from tracker.output.stocks import Stock
from tracker.services.admin.backups import BackupView
from tracker.services.bench.batch_sheet import SheetView
from tracker.services.bench.columns import BatchSummary
from tracker.services.core.views import Done
from tracker.services.corrections.correcting import CorrectionView
from tracker.services.instrument.reduction import Reduction
from tracker.services.instrument.reproducibility import ControlChart
from tracker.services.instrument.results import SpecimenResult
from tracker.services.instrument.screening import Screening
from tracker.services.instrument.sessions import ProfileDefinition, SessionView
from tracker.services.ledger.chain import AnchorFile, LedgerLine
from tracker.services.loans.manifest_terms import record_model
from tracker.services.loans.manifests import ManifestMapping, ManifestPreview
from tracker.services.loans.planning import Plan
from tracker.services.read.lineage import ItemDetail
from tracker.services.read.reconcile import LoanLine
from tracker.services.read.report_views import ReturnReport

SCHEMA_DIALECT = "https://json-schema.org/draft/2020-12/schema"


def _of(kind: Any) -> Callable[[], dict[str, Any]]:
    return lambda: TypeAdapter(kind).json_schema(mode="serialization")


def _stock_file() -> dict[str, Any]:
    """A label-stock TOML file: [stock.NAME] tables, each one stock without name/source."""
    entry = Stock.model_json_schema()
    for key in ("name", "source"):
        entry["properties"].pop(key)
        entry["required"] = [r for r in entry.get("required", []) if r != key]
    return {
        "type": "object",
        "additionalProperties": False,
        "properties": {"stock": {"type": "object", "additionalProperties": entry}},
    }


def _ledger_lines() -> dict[str, Any]:
    schema = LedgerLine.model_json_schema()
    schema["description"] = (
        "One line of `tracker ledger export` (JSON Lines); the file is "
        "one such object per line, in sequence order."
    )
    return schema


# file name -> (title, description, generator)
DOCUMENTS: dict[str, tuple[str, str, Callable[[], dict[str, Any]]]] = {
    "plan.schema.json": ("tracker plan", "Output of `tracker --json plan`.", _of(Plan)),
    "reconcile.schema.json": (
        "tracker reconcile",
        "Output of `tracker --json reconcile`.",
        _of(list[LoanLine]),
    ),
    "show.schema.json": ("tracker show", "Output of `tracker --json show`.", _of(ItemDetail)),
    "batch-summary.schema.json": (
        "tracker batch show",
        "Output of `tracker --json batch show`.",
        _of(BatchSummary),
    ),
    "session-import.schema.json": (
        "tracker session import",
        "Output of `tracker --json session import`.",
        _of(Done[SessionView]),
    ),
    "reduction.schema.json": (
        "tracker session reduce",
        "Output of `tracker --json session reduce`.",
        _of(Done[Reduction]),
    ),
    "results.schema.json": (
        "tracker results",
        "Output of `tracker --json results`.",
        _of(list[SpecimenResult]),
    ),
    "control-chart.schema.json": (
        "tracker reference chart",
        "Output of `tracker --json reference chart`.",
        _of(ControlChart),
    ),
    "screening.schema.json": (
        "tracker screen",
        "Output of `tracker --json screen`.",
        _of(list[Screening]),
    ),
    "mapping-profile.schema.json": (
        "mapping profile",
        "A column mapping profile file, read by `tracker profile save NAME FILE`.",
        _of(ProfileDefinition),
    ),
    "manifest-row.schema.json": (
        "manifest row",
        "One row of a lender's specimen list "
        "(Darwin Core terms), read by `tracker manifest import`.",
        _of(record_model()),
    ),
    "manifest-mapping.schema.json": (
        "manifest mapping",
        "A manifest column mapping file, read by `tracker manifest mapping NAME FILE`.",
        _of(ManifestMapping),
    ),
    "manifest-preview.schema.json": (
        "manifest preview",
        "Output of `tracker --json manifest preview`.",
        _of(ManifestPreview),
    ),
    "return-report.schema.json": (
        "return report",
        "The return report as JSON (`tracker report return LOAN --format json`).",
        _of(ReturnReport),
    ),
    "ledger-line.schema.json": ("ledger line", "A line of an exported ledger.", _ledger_lines),
    "label-stocks.schema.json": (
        "label stocks",
        "A label-stock TOML file (`--stocks FILE` or TRACKER_LABEL_STOCKS).",
        _stock_file,
    ),
    "anchor.schema.json": (
        "ledger anchor",
        "An anchor file, written by `tracker ledger anchor` "
        "and beside every return report, read by `tracker ledger verify "
        "--anchor`.",
        _of(AnchorFile),
    ),
    "correction.schema.json": (
        "tracker correct",
        "Output of `tracker --json correct ...`.",
        _of(Done[CorrectionView]),
    ),
    "batch-sheet.schema.json": (
        "tracker batch sheet",
        "Output of `tracker --json batch sheet`.",
        _of(Done[SheetView]),
    ),
    "backup.schema.json": ("tracker backup", "Output of `tracker --json backup`.", _of(BackupView)),
}


def generate(name: str) -> dict[str, Any]:
    title, description, make = DOCUMENTS[name]
    return {
        "$schema": SCHEMA_DIALECT,
        "$id": f"https://example.invalid/tracker/{name}",
        "title": title,
        "description": description,
        **make(),
    }


def render(name: str) -> str:
    return json.dumps(generate(name), indent=2, sort_keys=True, ensure_ascii=False) + "\n"


def write_all(folder: Path) -> list[Path]:
    folder.mkdir(parents=True, exist_ok=True)
    written = []
    for name in DOCUMENTS:
        path = folder / name
        path.write_text(render(name), encoding="utf-8")
        written.append(path)
    return written


if __name__ == "__main__":  # pragma: no cover - developer tool
    target = Path(sys.argv[1]) if len(sys.argv) > 1 else Path("schemas")
    for path in write_all(target):
        print(path)
