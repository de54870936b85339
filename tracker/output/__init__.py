"""Rendering for people outside the terminal: figures, labels (stocks, QR, PDF/PNG, print
jobs) and reports.

This layer draws; it never decides. It may call services (to read, and to record a print
job through the service that holds the ledger's writer lock) and use the domain, never the
CLI. reportlab, qrcode, Pillow and matplotlib are imported here only, so services and
``tracker --help`` stay fast.
"""
