"""Shared CLI plumbing: global options, opening the database, printing, refusals.

Commands stay thin: they build a request from their options, call one service
and hand the answer to :func:`emit`, which prints either for people (rich) or
exactly one JSON document for scripts (``--json``).
"""

import json
import os
import re
import shutil
import sys
from collections.abc import Callable, Iterator, Sequence
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import typer
from pydantic import BaseModel
from rich.console import Console, ConsoleOptions, RenderableType, RenderResult
from rich.segment import Segment
from typer.core import TyperGroup

from tracker.cli.fields import name_for_cli
from tracker.db.location import default_database
from tracker.db.uploads import read_upload as read_upload  # the commands' one file reader
from tracker.domain.errors import TrackerError
from tracker.domain.text_rules import json_visible, visible


class Shown:
    """Any rendering, with every character a terminal would act on written visibly.

    Stored text can hold what an older release let in (an ESC sequence in a lender's
    name, a bidi override in a catalogue number): every segment of text passes through
    :func:`tracker.domain.text_rules.visible` on its way out; only rich's own control
    segments (cursor moves it makes itself) pass as they are.
    """

    def __init__(self, inner: RenderableType) -> None:
        self.inner = inner

    def __rich_console__(self, console: Console, options: ConsoleOptions) -> RenderResult:
        for segment in console.render(self.inner, options):
            if segment.control:
                yield segment
            else:
                yield Segment(visible(segment.text), segment.style)


class PlainConsole(Console):
    """The CLI's console: no markup, no emoji codes, no highlighting, stored text shown.

    ``[red]`` or ``:warning:`` in a stored name prints as written; renderers style with
    ``Text`` spans, never with markup in strings.
    """

    def __init__(self, **options: Any) -> None:
        super().__init__(highlight=False, markup=False, emoji=False, **options)

    def print(self, *objects: Any, **options: Any) -> None:
        super().print(*(Shown(item) for item in objects), **options)

    def render_str(self, text: str, **options: Any) -> Any:
        """Every string printed or put in a table cell, shown (and measured) visibly."""
        return super().render_str(visible(text), **options)


console = PlainConsole()
errors = PlainConsole(stderr=True)


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
    """Open the selected database for one command."""
    from tracker.db.database import open_database

    db = open_database(state(ctx).target)
    try:
        yield db
    finally:
        db.close()


@contextmanager
def writing(ctx: typer.Context, *, first_key: str | None = None) -> Iterator[Any]:
    """The selected database for a command that records, with the selected operator's key
    unlocked (:func:`unlock`) before any work."""
    with database(ctx) as db:
        unlock(db, state(ctx).actor, first_key=first_key)
        yield db


def perform(ctx: typer.Context, service: Callable[..., Any], request: dict[str, Any]) -> Any:
    """Call one write service on the selected database as the selected operator."""
    with writing(ctx) as db:
        return service(db, state(ctx).actor, request)


# Scripts that cannot type a passphrase: a file readable by its owner only (preferred), or
# the variable itself (any process of the same user can read a process's environment).
PASSPHRASE_FILE_ENV = "TRACKER_PASSPHRASE_FILE"
PASSPHRASE_ENV = "TRACKER_PASSPHRASE"


def passphrase(what: str, *, new: bool = False) -> str:
    """The passphrase for ``what``: from TRACKER_PASSPHRASE_FILE (its first line; the file
    must be private), from TRACKER_PASSPHRASE, or asked for on the terminal (hidden; a new
    one twice). The question goes to stderr, so ``--json`` output stays one document."""
    from tracker.db.keyfiles import read_private

    named = os.environ.get(PASSPHRASE_FILE_ENV)
    if named:
        data = read_private(Path(named), PASSPHRASE_FILE_ENV)
        lines = data.decode("utf-8", "replace").splitlines()
        return lines[0] if lines else ""
    given = os.environ.get(PASSPHRASE_ENV)
    if given is not None:
        return given
    asked: str = typer.prompt(
        f"passphrase for {what}", hide_input=True, confirmation_prompt=new, err=True
    )
    return asked


def unlock(db: Any, actor: str | None, *, first_key: str | None = None) -> None:
    """Unlock ``actor``'s signing key for ``db`` (asking for its passphrase) unless it is
    unlocked already; a key that may not sign is refused in one line before any work."""
    if not actor:
        return  # the service says an operator is needed
    from tracker.services.admin import keys

    key_file = keys.key_to_unlock(db, actor, first_key=first_key)
    if key_file is not None:
        said = f"{key_file.operator}'s key {key_file.key_id}"
        keys.unlock_file(db, key_file, passphrase(said))


def program() -> str:
    """How to type tracker again, for a hint: ``tracker`` when the shell finds this very
    program by that name, else the path it was started by (``.venv/bin/tracker`` before the
    virtualenv is activated)."""
    typed = sys.argv[0] if sys.argv else ""
    if Path(typed).name != "tracker":
        return "tracker"  # python -m tracker, or a test runner
    found = shutil.which("tracker")
    if found is not None and Path(found).resolve() == Path(typed).resolve():
        return "tracker"
    return typed


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
        typer.echo(json_visible(json.dumps(jsonable(data), ensure_ascii=False, indent=2)))
    else:
        rendered = human()
        console.print(rendered, soft_wrap=isinstance(rendered, str))  # paths stay whole


def refuse(error: TrackerError, as_json: bool) -> int:
    """Print a refusal: one line on stderr, and with --json one JSON object on stdout."""
    if as_json:
        typer.echo(json_visible(json.dumps(error.as_dict(), ensure_ascii=False)))
    errors.print(f"error: {visible(error.one_line(), keep_lines=False)}", soft_wrap=True)
    return error.exit_code


class UsageProblem(TrackerError):
    """A command line the parser could not read (unknown option, a number that is not one)."""

    exit_code = 2


# Where the command being run is kept (Click shares ``meta`` among nested contexts).
RUNNING = "tracker.command"


class CommandGroup(TyperGroup):
    """Every group of the CLI: it notes the command it runs, so a refusal can name that
    command's options (:mod:`tracker.cli.fields`)."""

    def resolve_command(self, ctx: Any, args: list[str]) -> Any:
        name, command, rest = super().resolve_command(ctx, args)
        ctx.meta[RUNNING] = command
        return name, command, rest


class TrackerGroup(CommandGroup):
    """Gives every refusal the same shape: one line naming field and value, exit 1 or 2.

    Service refusals arrive as TrackerError from ``invoke`` and are reworded once, here,
    for the command that ran (the option a person typed, the command line's hint); the
    parser's own complaints (a date that is not one, a missing option) are caught in
    ``main`` and reshaped the same way instead of Click's multi-line usage text.
    """

    def invoke(self, ctx: Any) -> Any:
        try:
            return super().invoke(ctx)
        except TrackerError as error:
            settings = ctx.obj if isinstance(ctx.obj, State) else None
            name_for_cli(error, ctx.meta.get(RUNNING), settings and settings.actor)
            raise typer.Exit(refuse(error, settings is not None and settings.as_json)) from None

    def main(
        self,
        args: Sequence[str] | None = None,
        prog_name: str | None = None,
        complete_var: str | None = None,
        standalone_mode: bool = True,
        windows_expand_args: bool = True,
        **extra: Any,
    ) -> Any:
        argv = list(sys.argv[1:] if args is None else args)
        try:
            outcome = super().main(
                argv, prog_name, complete_var, False, windows_expand_args, **extra
            )
            code = outcome if isinstance(outcome, int) else 0  # Click returns Exit's code
        except typer.Exit as done:
            code = done.exit_code
        except typer.Abort:
            errors.print("aborted")
            code = 1
        except typer.TyperException as problem:  # the parser's own complaints
            if type(problem).__name__ == "NoArgsIsHelpError":  # a group typed alone: its help
                problem.show()  # type: ignore[attr-defined]
                code = 2
            else:
                code = refuse(_usage_problem(problem, argv), "--json" in argv)
        if not standalone_mode:
            return code
        sys.exit(code)


def _usage_problem(problem: Any, argv: list[str]) -> UsageProblem:
    """Reshape a parser error: the option, the value typed for it, and Click's reason."""
    param = getattr(problem, "param", None)
    field = param.opts[0] if param is not None and param.opts else "command line"
    message = " ".join(problem.format_message().split())
    message = re.sub(r"^Invalid value for '[^']*': (Value error, )?", "", message)
    value = _typed_value(argv, param.opts) if param is not None and param.opts else None
    context = getattr(problem, "ctx", None)
    command = context.command_path if context is not None else "tracker"
    misplaced = _global_option(problem, context)
    if misplaced is not None:
        name = misplaced.opts[0]
        typed = None if misplaced.is_flag else _typed_value(argv[::-1], [name], after=False)
        return UsageProblem(name, typed, _put_first(name, command))
    return UsageProblem(field, value, f"{message} (see `{command} --help`)")


def _global_option(problem: Any, context: Any) -> Any:
    """The option of ``tracker`` itself (``--db``, ``--as`` …) typed after a command, if
    that is what the parser could not place; None otherwise."""
    name = getattr(problem, "option_name", None)
    if not name or context is None:
        return None
    root = context.find_root().command
    return next((p for p in root.params if name in p.opts), None)


def _put_first(option: str, command: str) -> str:
    after = " ".join(command.split()[1:]) or "<command>"
    return (
        f"is an option of tracker itself and goes before the command: tracker {option} … {after} …"
    )


def _typed_value(argv: list[str], options: list[str], *, after: bool = True) -> str | None:
    """What followed the option on the command line (``--x v`` or ``--x=v``), if anything;
    ``after=False`` reads a reversed command line (the last time the option was typed)."""
    step = 1 if after else -1
    for index, token in enumerate(argv):
        for option in options:
            if token == option and 0 <= index + step < len(argv):
                return argv[index + step]
            if token.startswith(option + "="):
                return token.split("=", 1)[1]
    return None
