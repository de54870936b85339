"""Domain layer: SQLAlchemy models and pure computations, no I/O beyond a session."""
