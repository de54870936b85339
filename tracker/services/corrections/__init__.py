"""Corrections of recorded values, each with a reason, and what they change downstream."""
