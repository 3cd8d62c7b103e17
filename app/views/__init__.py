"""The dashboard's views, one package each: layout, callbacks and figures (plus helpers)."""
