"""Presentation: text tables, figures and the share page."""
