"""Allow ``python -m tracker``."""

from tracker.launch import main

main()
