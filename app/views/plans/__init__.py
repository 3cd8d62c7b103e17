"""Plans compared: build scenarios for the current lake, run them, compare, save and export."""
