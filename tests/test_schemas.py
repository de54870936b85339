"""The checked-in JSON Schemas match the pydantic models and are valid Draft 2020-12 schemas.

A model change without ``python -m tracker.schemas`` leaves ``schemas/`` stale;
these tests then fail, so the files scripts rely on never drift from the code.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from jsonschema import Draft202012Validator
from jsonschema.exceptions import SchemaError

from tracker.schemas import DOCUMENTS, SCHEMA_DIALECT, render

SCHEMAS = Path(__file__).resolve().parents[1] / "schemas"
NAMES = sorted(DOCUMENTS)


def test_every_document_has_a_schema_file_and_no_file_is_orphaned() -> None:
    on_disk = sorted(path.name for path in SCHEMAS.glob("*.json"))
    assert on_disk == NAMES


@pytest.mark.parametrize("name", NAMES)
def test_checked_in_schema_equals_the_generated_one_byte_for_byte(name: str) -> None:
    path = SCHEMAS / name
    assert path.is_file(), f"{path} is missing: run `python -m tracker.schemas`"
    committed = path.read_bytes()
    assert committed == render(name).encode("utf-8"), (
        f"{name} is stale: run `python -m tracker.schemas` and commit the result"
    )


@pytest.mark.parametrize("name", NAMES)
def test_schema_is_a_valid_draft_2020_12_schema(name: str) -> None:
    schema = json.loads((SCHEMAS / name).read_text(encoding="utf-8"))
    assert schema["$schema"] == SCHEMA_DIALECT == "https://json-schema.org/draft/2020-12/schema"
    Draft202012Validator.check_schema(schema)


def test_a_broken_schema_is_caught_by_the_meta_schema_check() -> None:
    """The check above can fail: a schema whose "type" is not a JSON type is refused."""
    schema = json.loads((SCHEMAS / NAMES[0]).read_text(encoding="utf-8"))
    schema["type"] = "loan"
    with pytest.raises(SchemaError, match="loan"):
        Draft202012Validator.check_schema(schema)
