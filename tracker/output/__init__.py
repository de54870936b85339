"""Things tracker renders for people outside the terminal: figures, labels, reports."""
