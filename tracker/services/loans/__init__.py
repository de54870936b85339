"""Loans from the lender's side: terms, amendments, manifests, specimens, shipments, plans."""
