"""Synthesis: draw the clock tree for a list of consumers (docs/synthesis.md)."""
