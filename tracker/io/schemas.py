"""JSON Schemas for the documents tracker writes, generated from the pydantic models.

``python -m tracker.io.schemas`` rewrites ``schemas/``; a test fails when a committed
schema differs from what the code generates, so the files never drift from the code.
"""

from __future__ import annotations

import json
import sys
from pathlib import Path
from typing import Any

from pydantic import TypeAdapter

from tracker.services.columns import BatchSummary
from tracker.services.instrument import ProfileDefinition, SessionView
from tracker.services.lineage import ItemDetail
from tracker.services.planning import Plan
from tracker.services.reconcile import LoanLine
from tracker.services.reduction import Reduction
from tracker.services.results import SpecimenResult
from tracker.services.screening import Screening
from tracker.services.views import Done

SCHEMA_DIALECT = "https://json-schema.org/draft/2020-12/schema"

# file name -> (type, title, description)
DOCUMENTS: dict[str, tuple[Any, str, str]] = {
    "plan.schema.json": (Plan, "tracker plan", "Output of `tracker --json plan`."),
    "reconcile.schema.json": (
        list[LoanLine],
        "tracker reconcile",
        "Output of `tracker --json reconcile`.",
    ),
    "show.schema.json": (ItemDetail, "tracker show", "Output of `tracker --json show`."),
    "batch-summary.schema.json": (
        BatchSummary,
        "tracker batch show",
        "Output of `tracker --json batch show`.",
    ),
    "session-import.schema.json": (
        Done[SessionView],
        "tracker session import",
        "Output of `tracker --json session import`.",
    ),
    "reduction.schema.json": (
        Done[Reduction],
        "tracker session reduce",
        "Output of `tracker --json session reduce`.",
    ),
    "results.schema.json": (
        list[SpecimenResult],
        "tracker results",
        "Output of `tracker --json results`.",
    ),
    "screening.schema.json": (
        list[Screening],
        "tracker screen",
        "Output of `tracker --json screen`.",
    ),
    "mapping-profile.schema.json": (
        ProfileDefinition,
        "mapping profile",
        "A column mapping profile file, read by `tracker profile save NAME FILE`.",
    ),
}


def generate(name: str) -> dict[str, Any]:
    kind, title, description = DOCUMENTS[name]
    schema = TypeAdapter(kind).json_schema(mode="serialization")
    return {
        "$schema": SCHEMA_DIALECT,
        "$id": f"https://example.invalid/tracker/{name}",
        "title": title,
        "description": description,
        **schema,
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
