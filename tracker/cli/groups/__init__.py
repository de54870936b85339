"""One module per command group: the group's Typer ``app`` and every command of it.

A module named in ``tracker.cli.COMMANDS`` with a group name is that group
(``tracker loan ...`` is ``loan.py``); a module listed without one holds top-level
commands of one theme (``setup``, ``inspecting``, ``bench``, ``accounts``).
"""
