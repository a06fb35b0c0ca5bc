"""Phase noise to RMS jitter: profiles, exact integration, loop shaping, noise chains."""

from clockplan.jitter.integrate import rms_jitter

__all__ = ["rms_jitter"]
