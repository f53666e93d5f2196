"""Dynamic panels: annual tables to period panels, panel estimators, their diagnostics."""
