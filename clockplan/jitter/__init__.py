"""Phase noise to RMS jitter: profiles, exact integration, loop shaping, noise chains.

The stable entry point for other tools is :func:`rms_jitter`::

    from clockplan.jitter import rms_jitter
    sigma_t = rms_jitter([(1e3, -120), (1e6, -150)], 100e6, 12e3, 20e6)

Everything here is a planning estimate: the part datasheets and the governing
standard decide.
"""

from clockplan.jitter.chain import NoiseChain, add_buffer, add_noise, combine, divide, log_grid, pll, source_chain
from clockplan.jitter.converter import jitter_limited_snr_db, max_jitter_for_snr
from clockplan.jitter.integrate import integrated_power, profile_jitter, rms_jitter, rms_phase
from clockplan.jitter.loop import LoopResponse, loop_from_open_loop, second_order_loop
from clockplan.jitter.profile import PhaseNoiseProfile, Spur
from clockplan.jitter.result import JitterResult

__all__ = [
    "rms_jitter",
    "rms_phase",
    "integrated_power",
    "profile_jitter",
    "PhaseNoiseProfile",
    "Spur",
    "JitterResult",
    "LoopResponse",
    "second_order_loop",
    "loop_from_open_loop",
    "NoiseChain",
    "source_chain",
    "divide",
    "pll",
    "add_buffer",
    "add_noise",
    "combine",
    "log_grid",
    "jitter_limited_snr_db",
    "max_jitter_for_snr",
]
