"""Bench work on the material: drilling, solutions, column chemistry, moves and disposals."""
