"""Regime map: the lake in the (load, parameter) plane, with the fitted cloud."""
