"""Bench basins."""
