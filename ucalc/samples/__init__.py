"""Results for tables of samples: per-sample U and statements (table), decisions against limits (decisions)."""
