"""The invented demo data, shipped as package data (read through importlib.resources)."""
