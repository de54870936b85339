"""Per-person logins through the command line: the set-up commands, and what a technician's
login is told when it reaches for another person's name or a manager's action."""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from typer.testing import Result

from tests.cli.conftest import counts, invoke
from tests.logins import Lab, cli

SPECIMEN = "SP-00010-U"  # a demo specimen on hand, with allowance left


def _one_line(result: Result, code: int, *said: str) -> str:
    assert result.exit_code == code, result.output
    (line,) = result.stderr.strip().splitlines()
    assert all(part in line for part in said), line
    return line


@pytest.mark.parametrize(
    "args",
    [
        ["db", "add-login", "bram", "bram_h"],
        ["db", "add-login", "bram", "bram_h", "--print"],
        ["db", "workstation-grants"],
        ["db", "workstation-grants", "--print"],
    ],
)
def test_a_sqlite_file_has_no_logins(tmp_path: Path, args: list[str]) -> None:
    path = tmp_path / "lab.sqlite"
    assert invoke("init", "--code", "ysolde", "--name", "Ysolde Marrin", db=path).exit_code == 0
    before = counts(path)
    result = invoke(*args, db=path, actor="ysolde")
    _one_line(result, 2, "--db", "logins belong to a shared PostgreSQL database")
    assert counts(path) == before


def _drill(lab: Lab, login: str, actor: str, *extra: str) -> Result:
    return cli(
        "--db",
        lab.url(login),
        "--as",
        actor,
        "drill",
        SPECIMEN,
        "--tissue",
        "enameloid",
        "--tare",
        "1200.000 mg",
        "--gross",
        "1200.300 mg",
        *extra,
    )


@pytest.mark.postgresql
def test_a_technicians_login_is_refused_another_name_and_a_managers_action(
    demo_lab: Lab,
) -> None:
    lab = demo_lab
    before = lab.rows()
    _one_line(_drill(lab, "tomas", "ines"), 1, "--as: 'ines'", "records as tomas only")
    reason = ["--override", "the lender agreed by telephone"]
    _one_line(_drill(lab, "tomas", "tomas", "--gross", "1205.000 mg", *reason), 1, "manager")
    tomas = ["--db", lab.url("tomas"), "--as", "tomas"]
    promote = [*tomas, "operator", "add", "mallory", "--name", "Mal Lory", "--role", "manager"]
    _one_line(cli(*promote), 1, "manager role")
    _one_line(cli(*tomas, "db", "workstation-grants"), 1, "only the owner of the tables")
    group = ["--group", lab.cluster.group]
    _one_line(cli(*tomas, "db", "add-login", "priya", "someone", *group), 1, "may not create")
    stranger = ["--db", lab.url("stranger"), "--as", "tomas", "drill", SPECIMEN]
    _one_line(
        cli(*stranger, "--tissue", "enameloid", "--tare", "1200 mg", "--gross", "1201 mg"),
        1,
        "bound to no operator",
    )
    refusal = cli("--json", *promote)
    assert json.loads(refusal.stdout)["exit_code"] == 1
    assert lab.rows() == before
    assert _drill(lab, "tomas", "tomas").exit_code == 0  # their own name, within the terms


@pytest.mark.postgresql
def test_the_set_up_commands_print_their_sql_and_the_operators_show_their_logins(
    demo_lab: Lab,
) -> None:
    owner = ["--db", demo_lab.url(), "--json"]
    grants = json.loads(cli(*owner, "db", "workstation-grants", "--print").stdout)
    assert not grants["ran"]
    statements = "\n".join(grants["statements"])
    assert "GRANT UPDATE (" in statements and "GRANT SELECT ON ALL TABLES" in statements
    assert "DELETE" not in statements and "TRUNCATE" not in statements
    shown = cli("--db", demo_lab.url(), "db", "add-login", "tomas", "tomas_new", "--print")
    assert 'CREATE ROLE "tomas_new" LOGIN' in shown.stdout
    assert 'GRANT "tracker_staff" TO "tomas_new"' in shown.stdout
    bad = cli("--db", demo_lab.url(), "db", "add-login", "tomas", "Tomas!", "--print")
    _one_line(bad, 2, "LOGIN: 'Tomas!'", "lower-case letters")
    listed = json.loads(cli(*owner, "operator", "list").stdout)
    logins = {row["code"]: row["login"] for row in listed}
    assert logins == {person: demo_lab.cluster.login(person) for person in logins}
    table = cli("--db", demo_lab.url(), "operator", "list").stdout
    assert "login" in table and demo_lab.cluster.login("priya") in table
