"""Reusable widgets of the terminal interface."""
