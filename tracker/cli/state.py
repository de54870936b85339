"""Shared CLI plumbing: global options, opening the database, printing, refusals.

Commands stay thin: they build a request from their options, call one service
and hand the answer to :func:`emit`, which prints either for people (rich) or
exactly one JSON document for scripts (``--json``).
"""

import json
import os
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import typer
from pydantic import BaseModel
from rich.console import Console, RenderableType
from typer.core import TyperGroup

from tracker.domain.errors import TrackerError

console = Console(highlight=False)
errors = Console(stderr=True, highlight=False)


def default_database() -> Path:
    """The per-user default database file (TRACKER_DB and --db override it)."""
    from platformdirs import user_data_dir

    return Path(user_data_dir("tracker", appauthor=False)) / "tracker.sqlite"


@dataclass
class State:
    db: str | None
    actor: str | None
    as_json: bool

    @property
    def target(self) -> str:
        return self.db or str(default_database())


def state(ctx: typer.Context) -> State:
    root = ctx.find_root()
    if not isinstance(root.obj, State):  # pragma: no cover - the root callback always sets it
        root.obj = State(None, os.environ.get("TRACKER_OPERATOR"), False)
    return root.obj


@contextmanager
def database(ctx: typer.Context) -> Iterator[Any]:
    """Open the selected database for one command and close it afterwards."""
    from tracker.db.database import open_database

    db = open_database(state(ctx).target)
    try:
        yield db
    finally:
        db.close()


def jsonable(data: Any) -> Any:
    if isinstance(data, BaseModel):
        return data.model_dump(mode="json")
    if isinstance(data, list | tuple):
        return [jsonable(item) for item in data]
    if isinstance(data, dict):
        return {key: jsonable(value) for key, value in data.items()}
    return data


def emit(ctx: typer.Context, data: Any, human: Callable[[], RenderableType | str]) -> None:
    """Print ``data`` as one JSON document with --json, else the human rendering."""
    if state(ctx).as_json:
        typer.echo(json.dumps(jsonable(data), ensure_ascii=False, indent=2))
    else:
        console.print(human())


class TrackerGroup(TyperGroup):
    """Turns a service's refusal into one line on stderr and the documented exit code."""

    def invoke(self, ctx: Any) -> Any:
        try:
            return super().invoke(ctx)
        except TrackerError as error:
            if isinstance(ctx.obj, State) and ctx.obj.as_json:
                typer.echo(json.dumps(error.as_dict(), ensure_ascii=False))
            errors.print(f"error: {error.one_line()}", markup=False, soft_wrap=True)
            raise typer.Exit(error.exit_code) from None
