"""Services: one function per user action, each a unit of work with exactly one ledger event.

Entry points (CLI, TUI, importers) call only these. Each write service has the
shape ``service(db, actor, request) -> Done[View]``: it validates ``request``
(a pydantic model or a plain dict), checks the domain rules, writes its rows
and its custody event in one transaction, and raises ``InputError`` (exit 2) or
``RuleViolation`` (exit 1) with nothing written when it refuses.
"""
