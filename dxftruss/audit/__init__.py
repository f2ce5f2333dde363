"""Audit stages: topology of the line work, stability of each part, zero-force rules."""
