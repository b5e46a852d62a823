"""Outputs over a solved plan: text, JSON, CSV; plots and HTML import matplotlib lazily."""
