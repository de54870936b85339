"""tracker: the custody ledger of an isotope-geochemistry lab.

Layers point one way: ``tracker.domain`` (models and pure computations) ←
``tracker.db`` (engine, migrations) ← ``tracker.services`` (one function per
user action) ← entry points (``tracker.cli``, ``tracker.ui``, ``tracker.demo``).
"""

__version__ = "0.1.0"
