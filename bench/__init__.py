"""The benchmarks: scripts that print figures, each runnable alone, all at once with ``python -m bench``."""
