"""Every field a command's services can refuse names an option that command has.

The commands are found by walking the Typer app; the services each one calls, by reading
its source for attributes of ``tracker.services`` modules; the fields, from the pydantic
request models those services take (nested models included). Nothing is listed by hand,
so a command added or an option renamed without its field is caught here.
"""

from __future__ import annotations

import ast
import inspect
import textwrap
import types
import typing
from collections.abc import Iterator
from typing import Any

import pytest
import typer
from pydantic import BaseModel

from tests.cli.conftest import Lab, counts, invoke, subcommands
from tracker.cli import app
from tracker.cli.fields import GLOBAL_OPTIONS, declared_fills, option_for, parameter_for
from tracker.domain.errors import InputError


def _leaves(command: Any, path: tuple[str, ...] = ()) -> Iterator[tuple[str, Any]]:
    subs = subcommands(command)
    if not subs:
        yield " ".join(path), command
    for name, sub in sorted(subs.items()):
        yield from _leaves(sub, (*path, name))


LEAVES = list(_leaves(typer.main.get_command(app)))


def _callback(command: Any) -> Any:
    assert command.callback is not None
    return inspect.unwrap(command.callback)


def _services(function: Any) -> list[Any]:
    """The service functions a command names in its body (``perform(ctx, drilling.drill,
    ...)``, ``planning.plan(db, ...)``)."""
    tree = ast.parse(textwrap.dedent(inspect.getsource(function)))
    found = []
    for node in ast.walk(tree):
        if isinstance(node, ast.Attribute) and isinstance(node.value, ast.Name):
            owner = function.__globals__.get(node.value.id)
            if isinstance(owner, types.ModuleType) and owner.__name__.startswith(
                "tracker.services"
            ):
                found.append(getattr(owner, node.attr))
    return [f for f in found if callable(f) and not isinstance(f, type)]


def _models(annotation: Any) -> Iterator[type[BaseModel]]:
    """The request models an annotation mentions (unions, Annotated, list items)."""
    if isinstance(annotation, type) and issubclass(annotation, BaseModel):
        yield annotation
        return
    for part in typing.get_args(annotation):
        yield from _models(part)


def _fields(model: type[BaseModel], prefix: str = "") -> Iterator[str]:
    """Every field path of a request model, nested models' fields by their path."""
    for name, info in model.model_fields.items():
        path = f"{prefix}{name}"
        nested = list(_models(info.annotation))
        if nested:
            for inner in nested:
                yield from _fields(inner, f"{path}.")
        else:
            yield path


def _request_fields(command: Any) -> set[str]:
    fields: set[str] = set()
    for service in _services(_callback(command)):
        hints = typing.get_type_hints(service, include_extras=True)
        for name, hint in hints.items():
            if name != "return":
                fields.update(field for model in _models(hint) for field in _fields(model))
    return fields


def _passed(command: Any) -> dict[str, bool]:
    """The request fields the command fills, the string keys of the dictionaries it builds,
    each with whether its value is spelled out as a dictionary of its own."""
    tree = ast.parse(textwrap.dedent(inspect.getsource(_callback(command))))
    keys: dict[str, bool] = {}
    for node in ast.walk(tree):
        if isinstance(node, ast.Dict):
            for key, value in zip(node.keys, node.values, strict=True):
                if isinstance(key, ast.Constant) and isinstance(key.value, str):
                    keys[key.value] = isinstance(value, ast.Dict)
    return keys


def _filled(field: str, passed: dict[str, bool]) -> bool:
    """Whether the command fills a field: by its own key, or by a key above it that it
    fills whole (a file read into ``document``), not one it spells out part by part."""
    parts = field.split(".")
    if parts[-1] in passed:
        return True
    return any(passed.get(part) is False for part in parts[:-1])


CASES = [(path, command) for path, command in LEAVES if _request_fields(command)]


def test_the_walk_finds_commands_and_their_request_models() -> None:
    # A walk that silently finds nothing would pass every case below.
    assert len(LEAVES) >= 60
    assert len(CASES) >= 40
    drill = dict(LEAVES)["drill"]
    assert {"specimen", "drilled_at", "location", "override_reason"} <= _request_fields(drill)
    loan_add = dict(LEAVES)["loan add"]
    assert "terms.max_mass_per_specimen" in _request_fields(loan_add)


@pytest.mark.parametrize(("path", "command"), CASES, ids=[path for path, _ in CASES])
def test_every_field_a_command_fills_names_one_of_its_options(path: str, command: Any) -> None:
    """A request field the command fills, or one it leaves at its default but a service
    can still refuse, names a parameter of that very command."""
    fields = _request_fields(command)
    passed = _passed(command)
    filled = {field for field in fields if _filled(field, passed)}
    unnamed = {field for field in filled if parameter_for(command, field) is None}
    assert not unnamed, f"tracker {path}: no option fills {sorted(unnamed)}"
    for field in filled:
        assert parameter_for(command, field) in command.params


def test_every_declared_field_names_the_option_declaring_it() -> None:
    """A field declared with Fills (``anchor file`` on --anchor) finds that option."""
    declaring = [(path, command) for path, command in LEAVES if declared_fills(command)]
    assert {"restore", "ledger verify", "session import"} <= {path for path, _ in declaring}
    for path, command in declaring:
        for field, name in declared_fills(command).items():
            for spelled in (field, field.replace("_", " "), field.replace("_", "-")):
                param = parameter_for(command, spelled)
                assert param is not None and param.name == name, (path, spelled)
    verify = dict(LEAVES)["ledger verify"]
    assert option_for(verify, "anchor file", "head.json", None) == "--anchor"


def test_global_fields_name_the_global_options() -> None:
    root = typer.main.get_command(app)
    typed = {opt for param in root.params for opt in param.opts}
    assert set(GLOBAL_OPTIONS.values()) <= typed
    drill = dict(LEAVES)["drill"]
    assert option_for(drill, "operator", None, None) == "--as"
    assert option_for(drill, "database", "x.sqlite", None) == "--db"


def test_another_operator_is_the_commands_own_argument() -> None:
    """``operator`` is --as when it is about the person acting, else the command's own."""
    revoke = dict(LEAVES)["key revoke"]
    assert option_for(revoke, "operator", "tomas", "amira") == "OPERATOR"
    assert option_for(revoke, "operator", "amira", "amira") == "--as"


def test_a_field_no_option_fills_is_said_in_words() -> None:
    drill = dict(LEAVES)["drill"]
    assert option_for(drill, "terms.max-total-mass", "x", None) == "terms, max total mass"
    assert option_for(drill, "list.csv, row 3, column x", None, None) == (
        "list.csv, row 3, column x"
    )


def _refused(lab: Lab, *args: str, actor: str) -> str:
    """The one line a refusal prints; nothing is written."""
    before = counts(lab.path)
    result = invoke(*args, db=lab.path, actor=actor)
    assert result.exit_code in (1, 2), (result.stdout, result.stderr)
    assert counts(lab.path) == before
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1, result.stderr
    return lines[0]


def test_a_refusal_names_the_option_its_field_was_typed_in(lab: Lab) -> None:
    """The services say ``parent`` and ``location``; a person typed --in and --to."""
    missing = "LC-00999-Z"
    said = _refused(lab, "location", "add", "box", "Box 9", "--in", missing, actor=lab.manager)
    assert said.startswith(f"error: --in: '{missing}': ")
    drill = ("drill", lab.on_hand, "--tissue", "enamel", "--tare", "1 mg", "--gross", "2 mg")
    said = _refused(lab, *drill, "--to", missing, actor=lab.technician)
    assert said.startswith(f"error: --to: '{missing}': ")


def test_the_operator_acting_is_as_and_another_is_the_argument(lab: Lab) -> None:
    said = _refused(lab, "location", "add", "box", "Box 9", actor="nobody")
    assert said == "error: --as: 'nobody': no such operator; see `tracker operator list`"
    said = _refused(lab, "key", "revoke", "ghost", "--reason", "gone", actor=lab.manager)
    assert said.startswith("error: OPERATOR: 'ghost': ")
    said = _refused(lab, "key", "revoke", lab.manager, "--reason", "lost it", actor=lab.technician)
    assert said.startswith(f"error: --as: '{lab.technician}': ")
    assert "manager" in said


def test_option_for_passes_what_the_command_line_said_itself() -> None:
    drill = dict(LEAVES)["drill"]
    assert option_for(drill, "--out", None, None) == "--out"
    error = InputError("location", "LC-1", "no such location")
    assert option_for(drill, error.field, error.value, None) == "--to"
