"""The plumbing every service shares: the unit of work, inputs, lookups, views, who signs."""
