"""The read side: reconciliation, lineage, listings, return reports and exports."""
