"""The lab the file-level reliability tests import into, set up once per test module.

The command-line lab (tests/cli/conftest.py) plus what importers need before a file can
arrive: an instrument mapping profile saved for CSV exports (``mc-csv``) and for XLSX
exports (``mc-xlsx``), and an empty column batch for batch sheets. The fixtures below
(shared through tests/reliability/conftest.py) build it once per test module and hand each
test its own copy; a module whose exports carry more columns overrides ``bench_profile``.
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from pathlib import Path
from typing import Any

import pytest

from tests.cli.conftest import Lab, copy_sqlite, invoke, ok_json

# The columns of an export with one ratio (Run, Name, r4440); ``{fmt}`` is csv or xlsx.
PROFILE = (
    'format = "{fmt}"\n[columns]\nrun_order = "Run"\nsample_name = "Name"\n'
    '[columns.ratios]\n"44/40" = "r4440"\n'
)


@dataclass(frozen=True)
class Bench:
    path: Path  # the database file
    lab: Lab  # the IDs the lab was built with (its own path is the template's)
    batch: str  # an empty column batch

    def copy_into(self, folder: Path) -> Bench:
        """A private copy of the database for one test."""
        return replace(self, path=copy_sqlite(self.path, folder / "lab.sqlite"))


def profile_name(fmt: str) -> str:
    """The saved mapping profile for exports in ``fmt`` (csv or xlsx)."""
    return f"mc-{fmt}"


def session_import(export: Path, fmt: str) -> list[str]:
    """The arguments that import ``export`` (csv or xlsx) as a session on the bench."""
    return [
        *("session", "import", str(export), "--profile", profile_name(fmt), "--name", "bench"),
        *("--instrument", "MC", "--element", "Ca", "--standard", "STD-X"),
    ]


def build_bench(lab: Lab, folder: Path, profile: str = PROFILE) -> Bench:
    """Copy the lab into ``folder``, save ``profile`` for both formats and create a batch,
    all through the command line as the lab's technician."""
    path = copy_sqlite(lab.path, folder / "lab.sqlite")

    def run(*args: str) -> Any:
        return ok_json(invoke(*args, db=path, actor=lab.technician, as_json=True))

    for fmt in ("csv", "xlsx"):
        definition = folder / f"{profile_name(fmt)}.toml"
        definition.write_text(profile.format(fmt=fmt), encoding="utf-8")
        run("profile", "save", profile_name(fmt), str(definition))
    created = run(
        *("batch", "create", "--name", "bench", "--date", "2026-01-05", "--element", "Ca"),
        *("--resin", "DGA", "--scheme", "load; rinse; elute", "--cuts", "matrix,Ca"),
    )
    return Bench(path, lab, created["item"]["id"])


@pytest.fixture(scope="module")
def bench_profile() -> str:
    """The mapping profile the bench saves (``{fmt}`` left to fill in)."""
    return PROFILE


@pytest.fixture(scope="module")
def bench_template(
    lab_template: Lab, bench_profile: str, tmp_path_factory: pytest.TempPathFactory
) -> Bench:
    return build_bench(lab_template, tmp_path_factory.mktemp("bench"), bench_profile)


@pytest.fixture
def bench(bench_template: Bench, tmp_path: Path) -> Bench:
    return bench_template.copy_into(tmp_path)
