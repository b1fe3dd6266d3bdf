"""Data tables of the workflow (solvent signals, impurities, report styles)."""
