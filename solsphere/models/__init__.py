"""Sphere models fitted to bench results: classic, graded and two-sphere."""
