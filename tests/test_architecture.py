"""Layers point one way: domain <- db <- services <- entry points."""

from __future__ import annotations

import pkgutil
import subprocess
import sys
import tomllib
from pathlib import Path

import tracker.services


def _service_modules() -> list[str]:
    """Every module of every service package (the packages themselves included)."""
    found = pkgutil.walk_packages(tracker.services.__path__, "tracker.services.")
    return [module.name for module in found]


def test_services_never_load_ui_or_cli_toolkits() -> None:
    """Importing every service module in a fresh interpreter loads no textual, typer or rich."""
    modules = ["tracker.domain.models", "tracker.db", *_service_modules()]
    code = (
        "import sys\n"
        + "".join(f"import {m}\n" for m in modules)
        + "top = {m.split('.')[0] for m in sys.modules}\n"
        + "print(','.join(sorted(top & {'textual', 'typer', 'rich'})))\n"
    )
    result = subprocess.run(
        [sys.executable, "-c", code], capture_output=True, text=True, check=True
    )
    assert result.stdout.strip() == ""
    assert len(modules) > 40 and "tracker.services.read.reports" in modules


def test_import_contracts_hold() -> None:
    """The import-linter contracts in pyproject.toml (layers and forbidden imports)."""
    code = (
        "import sys; from importlinter.cli import lint_imports as run; sys.exit(run(no_cache=True))"
    )
    root = Path(__file__).resolve().parents[1]  # where pyproject.toml holds the contracts
    result = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, cwd=root)
    assert result.returncode == 0, result.stdout + result.stderr
    with (root / "pyproject.toml").open("rb") as config:
        contracts = tomllib.load(config)["tool"]["importlinter"]["contracts"]
    assert f"{len(contracts)} kept, 0 broken" in result.stdout  # every contract was checked
    assert "The product never imports the benchmark" in result.stdout


def test_the_command_line_and_services_load_no_rendering_library() -> None:
    """reportlab, qrcode and Pillow load only inside the label commands that draw."""
    modules = ["tracker.cli", *_service_modules()]
    code = (
        "import sys\n"
        + "".join(f"import {m}\n" for m in modules)
        + "top = {m.split('.')[0] for m in sys.modules}\n"
        + "print(','.join(sorted(top & {'reportlab', 'qrcode', 'PIL', 'pypdfium2', 'zxingcpp'})))\n"
    )
    result = subprocess.run(
        [sys.executable, "-c", code], capture_output=True, text=True, check=True
    )
    assert result.stdout.strip() == ""
    assert "tracker.services.labels.printing" in modules


def test_the_command_line_loads_textual_only_when_the_interface_opens() -> None:
    """``tracker --help`` and every command stay fast: textual is imported by tracker.ui only."""
    code = (
        "import sys\nimport tracker.cli\n"
        "print(','.join(sorted({m.split('.')[0] for m in sys.modules} & {'textual'})))\n"
    )
    result = subprocess.run(
        [sys.executable, "-c", code], capture_output=True, text=True, check=True
    )
    assert result.stdout.strip() == ""
