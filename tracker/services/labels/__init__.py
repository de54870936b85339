"""Vial labels: queued inside actions, worded, printed, and read back when scanned."""
