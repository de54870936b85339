"""Which option a refusal is about: service fields named as a person typed them.

Services name the domain field a refusal is about (``location``, ``terms.max-total-mass``,
``operator``, ``anchor file``). A command's parameter is named after the field it fills
(``location`` for ``--to``, ``parent`` for ``--in``), so the option is found by name: the
field's last part, hyphens and spaces read as underscores. A parameter that fills a field
of another name says so where it is declared, with :class:`Fills` in its ``Annotated``.
The global options fill ``operator`` (``--as``) and ``database`` (``--db``). A field no
option of the running command fills is printed in words, never dropped.
"""

import inspect
import typing
from dataclasses import dataclass
from typing import Any

from tracker.domain.errors import TrackerError


@dataclass(frozen=True)
class Fills:
    """Declared beside an option: the service fields it fills besides its own name's
    (``Annotated[Path, typer.Argument(...), Fills("content", "filename")]``)."""

    fields: tuple[str, ...]

    def __init__(self, *fields: str) -> None:
        object.__setattr__(self, "fields", fields)


# The global options, by the field they fill.
GLOBAL_OPTIONS = {"operator": "--as", "database": "--db"}

# What the command line adds after a refusal's reason: (its field, or None for any field;
# words of the reason; the hint). The services say what is wrong in the domain's words.
HINTS = (
    ("operator", "no operator given", "pass --as CODE or set TRACKER_OPERATOR"),
    ("operator", "no such operator", "see `tracker operator list`"),
    ("operator", "has no registered signing key", "`tracker key new` makes one"),
    ("operator", "has no signing keys yet", "`tracker key new`, then `tracker key register`"),
    (
        "public key file",
        "then register it for yourself",
        "`tracker key new`, `tracker key register`",
    ),
    ("database", "no database here", "run `tracker init` first"),
    ("database", "not a tracker database", "run `tracker init` first"),
    ("database", "schema is older", "run `tracker db upgrade`"),
    ("database", "older schema", "`tracker db upgrade`"),
    ("database", "is bound to no operator", "`tracker db add-login OPERATOR LOGIN`"),
    ("database", "privileges again", "`tracker db workstation-grants`"),
    ("database", "print the SQL", "--print prints it"),
    ("login", "its SQL can be printed", "`tracker db add-login OPERATOR LOGIN --print`"),
    ("loan", "mark it returned first", "`tracker loan mark-returned`"),
    ("cut", "recovery changes it", "`tracker correct recovery`"),
    ("element", "no concentration of it", "`tracker concentration`"),
    ("value", "likely a typo", "if it is right, pass --confirm-implausible"),
    ("scale", "accepted value first", "`tracker reference value`"),
    (None, "the audit of the books lists them", "`tracker ledger audit`; --despite-discrepancies"),
)


def python_name(part: str) -> str:
    """A field's part as the name of the parameter that fills it."""
    return part.strip().lower().replace("-", "_").replace(" ", "_")


def declared_fills(command: Any) -> dict[str, str]:
    """Field → parameter name, for the fields the command's parameters declare with
    :class:`Fills`."""
    callback = inspect.unwrap(command.callback) if command.callback else None
    if callback is None:
        return {}
    hints = typing.get_type_hints(callback, include_extras=True)
    declared: dict[str, str] = {}
    for name, hint in hints.items():
        for extra in getattr(hint, "__metadata__", ()):
            if isinstance(extra, Fills):
                declared.update(dict.fromkeys(map(python_name, extra.fields), name))
    return declared


def typed_name(param: Any) -> str:
    """How a person typed a parameter: its long option, or its argument's name in capitals."""
    if param.param_type_name == "option":
        long = [opt for opt in param.opts if opt.startswith("--")]
        return str((long or param.opts)[0])
    return (param.metavar or param.name or "").upper()


def parameter_for(command: Any, field: str) -> Any:
    """The command's own parameter that fills ``field``, if it has one."""
    by_name = {param.name: param for param in command.params}
    declared = declared_fills(command)
    parts = field.split(".")
    for key in (field, *reversed(parts)):  # the whole path, then its parts from the last
        if python_name(key) in declared:
            return by_name[declared[python_name(key)]]
        if python_name(key) in by_name:
            return by_name[python_name(key)]
    return None


def option_for(command: Any, field: str, error_value: Any, actor: Any) -> str:
    """The option or argument of the running command a refusal about ``field`` is about.

    ``operator`` is ``--as`` when the refusal is about the operator acting (its value is
    theirs, or none was given), else the command's own argument naming another operator.
    """
    if field.startswith("-"):
        return field  # said by the command line itself
    own = parameter_for(command, field) if command is not None else None
    acting = field == "operator" and error_value in (None, actor)
    if own is not None and not acting:
        return typed_name(own)
    return GLOBAL_OPTIONS.get(field) or in_words(field)


def in_words(field: str) -> str:
    """A field no option fills, said in words (``terms.max-total-mass`` → ``terms, max
    total mass``); places in files (``list.csv, row 3, column x``) and names a person
    typed as they are (``TRACKER_BUSY_WAIT``) stay as they are."""
    if "," in field or field != field.lower():
        return field
    return ", ".join(part.replace("-", " ").replace("_", " ") for part in field.split("."))


def with_hint(error: TrackerError) -> str:
    """The command line's hint for a refusal, if it has one (added after its reason)."""
    for field, words, hint in HINTS:
        if field in (None, error.field) and words in error.reason:
            return hint
    return ""


def name_for_cli(error: TrackerError, command: Any, actor: Any) -> None:
    """Reword a refusal for the command line: the option a person typed, and a hint."""
    hint = with_hint(error)
    error.field = option_for(command, error.field, error.value, actor)
    if hint:
        error.reason = f"{error.reason}; {hint}"
