"""Allow ``python -m tracker``."""

from tracker.cli import main

main()
