"""The region view: screen many lakes at once."""
