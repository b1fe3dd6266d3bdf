"""Model tables (increments, couplings, reagents), each row with a source column."""
