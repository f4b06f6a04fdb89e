"""Anytime-valid monitoring of a game's outcome log against its declared odds (statistics core of ``watch``)."""
