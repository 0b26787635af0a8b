"""Prefect flows and tasks: thin wrappers around valvol functions, no formulas."""
