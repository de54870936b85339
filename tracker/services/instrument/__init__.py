"""Instrument sessions: importing exports, matching rows, reduction, results, screening."""
