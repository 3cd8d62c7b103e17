"""Turnback front end: the Dash dashboard and the command line."""
