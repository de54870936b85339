"""``python -m benchmarks``, from a checkout of tracker (the benchmark is not installed)."""

from benchmarks.cli import app

app(prog_name="python -m benchmarks")
