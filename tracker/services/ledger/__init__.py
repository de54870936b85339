"""The custody ledger itself: verifying the chain, anchors, audits of the books, keys."""
