"""The screens of the terminal interface, one per file."""
