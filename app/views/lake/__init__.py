"""The lake now: the load slider, the equilibrium and time figures, the readout, removal and settings."""
