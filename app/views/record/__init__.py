"""Monitoring record: load a CSV, fit the lake model to it in the background, warning signs."""
