"""Importing tracker's modules builds no query and configures no mapper: a command pays for
the SQLAlchemy work it does, when it does it, never for what every module might need."""

from __future__ import annotations

import subprocess
import sys

CODE = """
import importlib, pkgutil, sys
import tracker
skip = ("tracker.ui", "tracker.__main__")  # the interface: a Textual app, loaded when it opens
for module in pkgutil.walk_packages(tracker.__path__, "tracker."):
    if not module.name.startswith(skip) and ".migrations" not in module.name:
        importlib.import_module(module.name)
from tracker.domain.base import Base
configured = sorted(m.class_.__name__ for m in Base.registry.mappers if m.configured)
print(len(Base.registry.mappers), " ".join(configured))
"""


def test_importing_every_module_configures_no_mapper() -> None:
    result = subprocess.run([sys.executable, "-c", CODE], capture_output=True, text=True)
    assert result.returncode == 0, result.stderr[-2000:]
    mappers, *configured = result.stdout.split()
    assert int(mappers) > 20  # the models were imported
    assert configured == [], configured
