"""layercalc: column diagnostics by layers."""
