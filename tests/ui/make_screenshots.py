"""Write the README's screenshots (docs/screenshots/*.svg) from the same scenes the snapshot
tests check: ``python -m tests.ui.make_screenshots``."""

from __future__ import annotations

import asyncio
import os
import shutil
import tempfile
from pathlib import Path

from tests.ui.conftest import Lab
from tests.ui.scenes import SCENES
from tracker.io.demo import build_demo

ROOT = Path(__file__).resolve().parents[2]


async def main() -> None:
    out = ROOT / "docs" / "screenshots"
    out.mkdir(parents=True, exist_ok=True)
    with tempfile.TemporaryDirectory() as folder:
        work = Path(folder)
        os.environ["TRACKER_CONFIG_DIR"] = str(work / "config")
        template = work / "template.sqlite"
        build_demo(template)
        for scene in SCENES:
            shutil.copyfile(template, work / "demo.sqlite")
            (work / "out").mkdir(exist_ok=True)
            app = Lab(work / "demo.sqlite", work / "out").app()
            async with app.run_test(size=scene.size) as pilot:
                await scene.steps(pilot)
                app.save_screenshot(f"{scene.name}.svg", path=str(out))
            print(out / f"{scene.name}.svg")


if __name__ == "__main__":
    asyncio.run(main())
