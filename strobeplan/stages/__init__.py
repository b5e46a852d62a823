"""Solver stages: each reads the rig and earlier sections and stores its own sections.

``solve.py`` calls them in a fixed order; see DEVELOPERS.md for adding one.
"""
