"""The dashboard's stylesheet, shipped as package data (read through importlib.resources)."""
