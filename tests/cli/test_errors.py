"""Refusals: exit 2 for bad input, 1 for a domain rule; one line naming field and value; no write.

Every case runs twice, once for people and once with ``--json``, against the same
database, and the row counts of every table and the ledger head are compared
before and after.
"""

from __future__ import annotations

import json
import re
from dataclasses import dataclass

import pytest
from stdnum.iso7064 import mod_37_2  # independent ISO/IEC 7064 implementation
from typer.testing import Result

from tests.cli.conftest import Lab, counts, invoke

ERROR_KEYS = {"error", "field", "value", "reason", "exit_code"}
GOOD_DRILL = ("--tissue", "enamel", "--tare", "1.000 mg", "--gross", "2.000 mg")


def valid_id(prefix: str, number: int) -> str:
    body = f"{prefix}{number:05d}"
    return f"{prefix}-{number:05d}-{mod_37_2.calc_check_digit(body)}"


def wrong_check(public_id: str) -> str:
    last = public_id[-1]
    return public_id[:-1] + ("0" if last != "0" else "1")


@dataclass(frozen=True)
class Case:
    name: str
    args: tuple[str, ...]  # "{on_hand}" etc. are filled from the Lab
    actor: str | None  # "{technician}", "{manager}", a literal code, or None
    exit_code: int
    field: str
    value: str | None  # regular expression the offending value must match; None: no value

    def argv(self, lab: Lab) -> list[str]:
        return [arg.format(**names(lab)) for arg in self.args]

    def pattern(self, lab: Lab) -> str | None:
        """The value's regular expression, placeholders filled with escaped literals."""
        escaped = {key: re.escape(str(text)) for key, text in names(lab).items()}
        return None if self.value is None else self.value.format(**escaped)

    def who(self, lab: Lab) -> str | None:
        return None if self.actor is None else self.actor.format(**lab.__dict__)


def names(lab: Lab) -> dict[str, object]:
    empty = lab.path.with_name("empty.csv")
    empty.touch()
    return {
        **lab.__dict__,
        "empty": str(empty),
        "unknown_specimen": valid_id("SP", 9999),
        "unknown_location": valid_id("LC", 9999),
        "bad_check": wrong_check(lab.on_hand),
    }


def drill(*extra: str, specimen: str = "{on_hand}") -> tuple[str, ...]:
    return ("drill", specimen, "--tissue", "enamel", *extra)


T = "{technician}"
M = "{manager}"
FUTURE = "2099-01-01"
BAD_INPUT = [
    Case(
        "negative mass",
        drill("--tare", "-1.000 mg", "--gross", "2.000 mg"),
        T,
        2,
        "--tare",
        re.escape("-1.000 mg"),
    ),
    Case("zero reading", drill("--tare", "1.000 mg", "--gross", "0 mg"), T, 2, "--gross", "0 mg"),
    Case(
        "zero net mass",
        drill("--tare", "1.000 mg", "--gross", "1.000 mg"),
        T,
        2,
        "--gross",
        re.escape("1.000 mg"),
    ),
    Case(
        "gross lighter than tare",
        drill("--tare", "3.000 mg", "--gross", "2.000 mg"),
        T,
        2,
        "--gross",
        re.escape("2.000 mg"),
    ),
    Case("unknown unit", drill("--tare", "2 kgz", "--gross", "2.000 mg"), T, 2, "--tare", "2 kgz"),
    Case(
        "decimal comma",
        drill("--tare", "1,000 mg", "--gross", "2.000 mg"),
        T,
        2,
        "--tare",
        "1,000 mg",
    ),
    # An empty file, for every command that reads one: named by the file, never its bytes.
    Case(
        "empty instrument export",
        (
            "session",
            "import",
            "{empty}",
            "--profile",
            "none-saved",
            "--name",
            "run",
            "--instrument",
            "MC-ICP-MS",
            "--element",
            "Ca",
            "--standard",
            "SRM 915b",
        ),
        T,
        2,
        "FILE",
        ".*empty.csv",
    ),
    Case(
        "empty manifest", ("manifest", "import", "{loan}", "{empty}"), M, 2, "FILE", ".*empty.csv"
    ),
    Case(
        "empty column sheet",
        ("batch", "sheet", "CB-00001-G", "{empty}"),
        T,
        2,
        "FILE",
        ".*empty.csv",
    ),
    Case("empty curve", ("curve", "add", "flat", "{empty}"), M, 2, "FILE", ".*empty.csv"),
    Case(
        "empty loan document",
        ("loan", "attach", "{loan}", "{empty}", "--role", "agreement"),
        M,
        2,
        "FILE",
        ".*empty.csv",
    ),
    Case(
        "empty photo",
        ("specimen", "photo", "{on_hand}", "{empty}", "--stage", "receipt"),
        T,
        2,
        "FILE",
        ".*empty.csv",
    ),
    Case(
        "text for a number",
        drill("--tare", "heavy", "--gross", "2.000 mg"),
        T,
        2,
        "--tare",
        "heavy",
    ),
    Case(
        "unknown specimen ID",
        ("drill", "{unknown_specimen}", *GOOD_DRILL),
        T,
        2,
        "SPECIMEN",
        "{unknown_specimen}",
    ),
    Case(
        "unknown location ID",
        ("move", "{powder}", "--to", "{unknown_location}"),
        T,
        2,
        "--to",
        "{unknown_location}",
    ),
    Case(
        "malformed ID", ("drill", "SP-12-??", *GOOD_DRILL), T, 2, "SPECIMEN", re.escape("SP-12-??")
    ),
    Case(
        "wrong check character",
        ("drill", "{bad_check}", *GOOD_DRILL),
        T,
        2,
        "SPECIMEN",
        "{bad_check}",
    ),
    Case(
        "future drill time",
        drill(*GOOD_DRILL[2:], "--at", f"{FUTURE}T00:00:00Z"),
        T,
        2,
        "--at",
        f"{FUTURE}T00:00:00(\\.0+)?Z",
    ),
    Case(
        "future receipt time",
        ("checkin", "{expected}", "--condition", "ok", "--at", f"{FUTURE}T08:00:00+02:00"),
        T,
        2,
        "--at",
        f"{FUTURE}T06:00:00(\\.0+)?Z",
    ),
    Case("missing --as", ("drill", "{on_hand}", *GOOD_DRILL), None, 2, "--as", None),
    Case("unknown operator", ("drill", "{on_hand}", *GOOD_DRILL), "ghost", 2, "--as", "ghost"),
]
RULES = [
    Case(
        "checking in twice",
        ("checkin", "{on_hand}", "--condition", "again"),
        T,
        1,
        "SPECIMEN",
        "{on_hand}",
    ),
    Case(
        "drilling before check-in",
        ("drill", "{expected}", *GOOD_DRILL),
        T,
        1,
        "SPECIMEN",
        "{expected}",
    ),
    Case(
        "technician adds an operator",
        ("operator", "add", "kit", "--name", "Kit Ambery"),
        T,
        1,
        "--as",
        "{technician}",
    ),
    # The powder has 2.561 mg, 1.500 mg of it already dissolved: 1.061 mg remain.
    Case(
        "dissolving more than remains",
        (
            "dissolve",
            "{powder}",
            "--acid",
            "2 M HNO3",
            "--powder-taken",
            "2.000 mg",
            "--vial-tare",
            "5.0000 g",
            "--vial-gross",
            "6.0000 g",
        ),
        T,
        1,
        "--powder-taken",
        re.escape("2.000 mg"),
    ),
    # The solution holds 1.0000 g; the gross reading as typed is named, the reason gives
    # the aliquot's mass (gross - tare).
    Case(
        "aliquot larger than the solution",
        ("aliquot", "{solution}", "--tare", "3.1000 g", "--gross", "4.6000 g"),
        T,
        1,
        "--gross",
        r"4\.60*\s*g",
    ),
]


def one_error_line(stderr: str) -> str:
    lines = stderr.splitlines()
    assert len(lines) == 1, stderr
    assert lines[0].startswith("error: "), stderr
    return lines[0]


def check_refusal(case: Case, lab: Lab) -> None:
    argv, actor = case.argv(lab), case.who(lab)
    value = case.pattern(lab)
    before = counts(lab.path)

    plain: Result = invoke(*argv, db=lab.path, actor=actor)
    assert plain.exit_code == case.exit_code, (plain.stdout, plain.stderr)
    assert plain.stdout == ""
    line = one_error_line(plain.stderr)
    assert line.startswith(f"error: {case.field}: "), line
    if value is not None:
        assert re.search(value, line), line

    scripted = invoke(*argv, db=lab.path, actor=actor, as_json=True)
    assert scripted.exit_code == case.exit_code
    doc = json.loads(scripted.stdout)
    assert isinstance(doc, dict) and set(doc) == ERROR_KEYS, doc
    assert (doc["field"], doc["exit_code"]) == (case.field, case.exit_code)
    if value is None:
        assert doc["value"] is None
    else:
        assert re.fullmatch(value, doc["value"]), doc["value"]
    # The JSON carries the same reason as the human line printed alongside it.
    assert doc["error"] and doc["reason"] and doc["reason"] in one_error_line(scripted.stderr)

    assert counts(lab.path) == before


@pytest.mark.parametrize("case", BAD_INPUT, ids=[c.name for c in BAD_INPUT])
def test_bad_input_exits_2_and_writes_nothing(case: Case, lab: Lab) -> None:
    check_refusal(case, lab)


@pytest.mark.parametrize("case", RULES, ids=[c.name for c in RULES])
def test_domain_rule_exits_1_and_writes_nothing(case: Case, lab: Lab) -> None:
    check_refusal(case, lab)


def test_the_good_version_of_the_refused_commands_is_accepted(lab: Lab) -> None:
    # Control: the cases above differ from this command only by their one bad part.
    before = counts(lab.path)
    result = invoke("drill", lab.on_hand, *GOOD_DRILL, db=lab.path, actor=lab.technician)
    assert result.exit_code == 0, result.stderr
    after = counts(lab.path)
    assert after["powder"] == before["powder"] + 1
    assert after["ledger_head"] == before["ledger_head"] + 1


PARSER_CASES = [
    pytest.param(
        Case(
            "text for a number option",
            (
                "concentration",
                "{solution}",
                "--element",
                "Ca",
                "--value",
                "450 ug/g",
                "--rel-u",
                "abc",
            ),
            T,
            2,
            "--rel-u",
            "abc",
        ),
        id="text for --rel-u",
    ),
    pytest.param(
        Case(
            "impossible date",
            (
                "batch",
                "create",
                "--name",
                "B1",
                "--date",
                "2026-13-45",
                "--element",
                "Ca",
                "--resin",
                "DGA",
                "--scheme",
                "x",
                "--cuts",
                "Ca",
            ),
            T,
            2,
            "--date",
            "2026-13-45",
        ),
        id="impossible --date",
    ),
]


@pytest.mark.parametrize("case", PARSER_CASES)
def test_option_type_errors_follow_the_same_contract(case: Case, lab: Lab) -> None:
    check_refusal(case, lab)


def test_drilling_a_tissue_the_loan_does_not_permit_is_refused(lab: Lab) -> None:
    # The lab's loan permits enamel only.
    case = Case(
        "tissue not permitted",
        ("drill", "{on_hand}", "--tissue", "bone", *GOOD_DRILL[2:]),
        T,
        1,
        "--tissue",
        "bone",
    )
    check_refusal(case, lab)


def test_drilling_beyond_the_per_specimen_limit_is_refused(lab: Lab) -> None:
    # 2.561 mg already drilled; 4.000 mg more passes the loan's 6 mg per specimen.
    before = counts(lab.path)
    argv = ("drill", lab.on_hand, "--tissue", "enamel", "--tare", "1.000 mg", "--gross", "5.000 mg")
    result = invoke(*argv, db=lab.path, actor=lab.technician, as_json=True)
    assert result.exit_code == 1, result.stdout
    assert json.loads(result.stdout)["exit_code"] == 1
    one_error_line(result.stderr)
    assert counts(lab.path) == before


GLOBAL_AFTER = [
    Case(
        "--as after the command",
        (*drill(*GOOD_DRILL[2:]), "--as", "{technician}"),
        T,
        2,
        "--as",
        "{technician}",
    ),
    Case(
        "--db after the command",
        ("lookup", "{on_hand}", "--db", "other.sqlite"),
        T,
        2,
        "--db",
        "other.sqlite",
    ),
]


@pytest.mark.parametrize("case", GLOBAL_AFTER, ids=[c.name for c in GLOBAL_AFTER])
def test_a_global_option_after_the_command_says_where_it_goes(case: Case, lab: Lab) -> None:
    check_refusal(case, lab)
    line = one_error_line(invoke(*case.argv(lab), db=lab.path, actor=case.who(lab)).stderr)
    assert "goes before the command: tracker " + case.field in line, line


def test_json_after_the_command_is_answered_in_json_with_where_it_goes(lab: Lab) -> None:
    result = invoke("loan", "list", "--json", db=lab.path)
    assert result.exit_code == 2
    doc = json.loads(result.stdout)  # asked for JSON: the refusal is one
    assert doc["field"] == "--json" and "goes before the command: tracker --json" in doc["reason"]
