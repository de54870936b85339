"""Rendering: label stocks, QR codes, layout, PDF and PNG, and print jobs.

This layer draws; it never decides. It may call services (to read, and to
record a print job through the service that holds the ledger's writer lock)
and use the domain, never the CLI. reportlab, qrcode and Pillow are imported
here only, so services and ``tracker --help`` stay fast.
"""
