"""Synthesis: draw the clock tree for a list of consumers (docs/synthesis.md).

A consumer-list board names only the clocks a product needs; synthesis
chooses the reference and its grade, the PLLs and which consumers share each
VCO, dividers and fanout buffers, plans every setting and checks every ppm
and jitter budget, minimizing parts, then power, then cost, then the worst
margin. Parts come from a library of generic templates (typical figures,
common practice).

Examples
--------
>>> from clockplan.synth import load_consumer_list, synthesize  # doctest: +SKIP
>>> result = synthesize(load_consumer_list("boards/synthesis/consumer-list.toml"))  # doctest: +SKIP
>>> print(result.best.verified.text)  # doctest: +SKIP
"""

from clockplan.synth.input import ConsumerList, load_consumer_list, parse_consumer_list
from clockplan.synth.library import PartsLibrary, default_library, load_library, parse_library
from clockplan.synth.synthesize import ProposedTree, SynthesisOptions, SynthesisResult, library_for, synthesize

__all__ = [
    "ConsumerList",
    "load_consumer_list",
    "parse_consumer_list",
    "PartsLibrary",
    "default_library",
    "load_library",
    "parse_library",
    "SynthesisOptions",
    "SynthesisResult",
    "ProposedTree",
    "library_for",
    "synthesize",
]
