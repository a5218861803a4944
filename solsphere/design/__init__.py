"""Designing with a sphere: ranking untried solvents, pair and triple blends, replacements."""
