"""Synthesis from end to end: consumer list in, verified trees out.

1. Group the consumers by frequency (:mod:`clockplan.synth.classes`).
2. For every main-reference frequency the library offers (the board may
   restrict them), search the groupings (:mod:`clockplan.synth.grouping`):
   a short probe of each frequency first (its first few groupings, to set a
   bound), then a full run of each, best probes first, every run sharing one
   list of the best trees and the time left.
3. Verify the best trees through their written board files
   (:func:`clockplan.synth.evaluate.verify_tree`): only a tree that passes is
   proposed as passing.
4. Explain what could not share a PLL, what needed a cleaner path, what the
   next tree costs -- or, with no passing tree, why
   (:mod:`clockplan.synth.explain`).

Every figure is a planning estimate from typical template figures: choose
real parts, enter their datasheet figures and audit again.
"""

from __future__ import annotations

import time
from dataclasses import dataclass, field
from fractions import Fraction
from pathlib import Path

from clockplan.deadline import CUT_RUN_NOTE
from clockplan.errors import BoardError
from clockplan.synth.evaluate import Evaluator, Verified, verify_tree
from clockplan.synth.explain import EXPLAIN_SECONDS, Explanation, explain
from clockplan.synth.grouping import BranchAndBound, Candidate, LeafJudge, SearchStats, TopTrees, exhaustive_search
from clockplan.synth.input import ConsumerList, require_conditions
from clockplan.synth.library import PartsLibrary, default_library, load_library
from clockplan.synth.tree import MainReference, Problem

__all__ = ["SynthesisOptions", "ProposedTree", "SynthesisResult", "synthesize", "library_for", "board_named_path"]

#: Trees kept beyond those shown, in case some fail verification through their board file.
_SPARE_TREES = 1
#: Groupings a probe judges per reference frequency before the full runs.
_PROBE_LEAVES = 3


@dataclass(frozen=True)
class SynthesisOptions:
    """Knobs of the synthesis.

    Parameters
    ----------
    alternatives
        Runner-up trees shown beside the best.
    time_limit_s
        Search budget; the best trees found are returned when it runs out.
    exhaustive
        Judge every grouping with no pruning (exact but slow: for small cases and tests).
    deadline
        The run's one deadline (a ``time.monotonic()`` instant, see
        :class:`clockplan.deadline.Deadline`), or None for ``time_limit_s``
        from the start of the synthesis. With it, the search stops at 70 % of
        the time to it and verification and explanation stop at it: nothing
        gets a fresh budget of its own.
    """

    alternatives: int = 2
    time_limit_s: float = 30.0
    exhaustive: bool = False
    deadline: float | None = None


@dataclass
class ProposedTree:
    """A ranked tree with its verification through the written board file."""

    rank: int
    candidate: Candidate
    verified: Verified

    @property
    def passes(self) -> bool:
        """True if the written board plans and audits with every budget met."""
        return self.verified.check.ok


@dataclass
class SynthesisResult:
    """What synthesis found: ranked trees (passing first), search figures and notes."""

    problem: Problem
    judge: LeafJudge
    trees: list[ProposedTree]
    failing: list[ProposedTree]
    stats: SearchStats
    explanation: Explanation
    notes: list[str] = field(default_factory=list)
    elapsed_s: float = 0.0

    @property
    def evaluator(self) -> Evaluator:
        """The block checker (and its cache)."""
        return self.judge.evaluator

    @property
    def feasible(self) -> bool:
        """True if at least one tree meets every budget."""
        return bool(self.trees)

    @property
    def best(self) -> ProposedTree | None:
        """The best passing tree."""
        return self.trees[0] if self.trees else None


def library_for(spec: ConsumerList, extra: str | None = None, allow_outside: bool = False) -> PartsLibrary:
    """The shipped library, plus the board's ``[synthesis] library`` and ``extra`` files, restricted by ``allow``.

    A relative ``[synthesis] library`` path is taken from the board file's folder.
    A board file is data: the path it names must stay inside the board file's
    folder (after following links), unless ``allow_outside`` (the command line's
    ``--allow-outside-paths``) says otherwise. ``extra`` is the user's own
    command-line choice and may be anywhere.

    Raises
    ------
    BoardError
        The board's library path leads outside the board file's folder.
    """
    library = default_library()
    paths = []
    if spec.settings.library:
        paths.append(board_named_path(spec.settings.library, spec.source_file, "synthesis.library", allow_outside))
    if extra:
        paths.append(Path(extra))
    for path in paths:
        library = library.merged(load_library(path))
    if spec.settings.allow is not None:
        library = library.restricted(spec.settings.allow, file=spec.source_file)
    return library


def board_named_path(text: str, board_file: str | None, key: str, allow_outside: bool = False) -> Path:
    """The path a board file names, taken from the board file's folder and kept inside it.

    Examples
    --------
    >>> board_named_path("parts.toml", "boards/a.toml", "synthesis.library")
    PosixPath('boards/parts.toml')
    """
    path = Path(text)
    folder = Path(board_file).parent if board_file else Path(".")
    if not path.is_absolute():
        path = folder / path
    if allow_outside:
        return path
    inside = path.resolve().is_relative_to(folder.resolve())
    if not inside:
        raise BoardError(
            f"the path {text!r} leads outside the board file's folder",
            file=board_file,
            key=key,
            hint="put the file beside the board file, or allow it: --allow-outside-paths "
            "(or give it on the command line with --library)",
        )
    return path


def _frequencies(problem: Problem, references: dict[Fraction, list[MainReference]]) -> list[Fraction | None]:
    """Reference frequencies, most promising first: most classes taken straight off it, then cheapest part."""

    def promise(hz: Fraction) -> tuple:
        direct = sum(1 for c in problem.classes if problem.direct_ratio(hz, c.index) is not None)
        cheapest = min(r.cost.key() for r in references[hz])
        return (-direct, cheapest, hz)

    ordered: list[Fraction | None] = sorted(references, key=promise)
    return ordered + [None]


def synthesize(spec: ConsumerList, library: PartsLibrary | None = None, options: SynthesisOptions | None = None) -> SynthesisResult:
    """Propose clock trees for a consumer list, best first, each verified through its board file.

    Examples
    --------
    >>> from clockplan.synth.input import load_consumer_list
    >>> spec = load_consumer_list("boards/synthesis/consumer-list.toml")  # doctest: +SKIP
    >>> result = synthesize(spec)  # doctest: +SKIP
    >>> result.best.candidate.cost.parts  # doctest: +SKIP
    6
    """
    options = options or SynthesisOptions()
    require_conditions(spec)
    started = time.monotonic()
    library = library if library is not None else library_for(spec)
    problem = Problem.of(spec, library)
    references: dict[Fraction, list[MainReference]] = {}
    for reference in problem.reference_candidates():
        references.setdefault(reference.hz, []).append(reference)
    evaluator = Evaluator(problem)
    run_end = options.deadline  # None: the search alone is bounded, by time_limit_s (the library's default)
    evaluator.deadline = run_end
    judge = LeafJudge(problem, evaluator, references)
    keep = options.alternatives + 1 + _SPARE_TREES
    stats = SearchStats()
    frequencies = _frequencies(problem, references)
    if options.exhaustive:
        top = exhaustive_search(judge, frequencies, keep)
    else:
        top = TopTrees(keep)
        deadline = started + options.time_limit_s
        if run_end is not None:
            deadline = min(deadline, started + 0.7 * max(0.0, run_end - started))
        search = BranchAndBound(judge, top, deadline, stats)
        # Probe every frequency first (its first few groupings) so that a good bound prunes the full runs;
        # then search each fully, the frequencies whose probe found the cheapest trees first.
        found: dict[Fraction | None, tuple] = {}
        for hz in frequencies:
            before = {id(c) for c in top.items}
            search.run(hz, deadline, leaf_limit=_PROBE_LEAVES)
            new = [c.cost.key() for c in top.items if id(c) not in before]
            found[hz] = min(new) if new else (float("inf"),)
            if stats.stopped:
                break
        ordered = sorted(frequencies, key=lambda hz: (found.get(hz, (float("inf"),)), frequencies.index(hz)))
        for position, hz in enumerate(ordered):
            if stats.stopped:
                break
            # Each run gets an even share of the time left, so one hard frequency cannot starve the rest.
            share = (deadline - time.monotonic()) / (len(ordered) - position)
            if not search.run(hz, time.monotonic() + share):
                stats.cut_runs += 1
        if stats.cut_runs:
            stats.stopped = True
    notes = []
    if stats.stopped:
        notes.append(
            f"the search stopped at its time limit ({options.time_limit_s:g} s): these are the best trees found, "
            f"not proven the best; raise --time-limit to search further ({CUT_RUN_NOTE})"
        )
    passing: list[ProposedTree] = []
    failing: list[ProposedTree] = []
    header = _header(spec)
    for candidate in top.items:
        if len(passing) > options.alternatives:
            break
        verified = verify_tree(problem, candidate.tree, header, deadline=run_end)
        proposed = ProposedTree(len(passing) + 1, candidate, verified)
        (passing if verified.check.ok else failing).append(proposed)
    explanation = explain(judge, [p.candidate for p in passing], stats.stopped, _explain_seconds(options, started))
    stats.elapsed_s = time.monotonic() - started
    return SynthesisResult(problem, judge, passing, failing, stats, explanation, notes, stats.elapsed_s)


def _explain_seconds(options: SynthesisOptions, started: float) -> float:
    """Time for explaining a list without a passing tree: what the time limit leaves, at least 1 s, at most the usual."""
    if options.exhaustive:
        return EXPLAIN_SECONDS
    left = started + options.time_limit_s - time.monotonic()
    if options.deadline is not None:  # the run's deadline: what it leaves, never a second of its own
        return max(0.0, min(EXPLAIN_SECONDS, left, options.deadline - time.monotonic()))
    return max(1.0, min(EXPLAIN_SECONDS, left))


def _header(spec: ConsumerList) -> list[str]:
    source = spec.source_file or "a consumer list"
    return [
        f"Synthesized by 'clockplan synthesize' from {source}.",
        "Parts are generic templates with typical figures (common practice), not any maker's data:",
        "choose real parts, enter their datasheet figures, and run 'clockplan audit' again.",
        "Budgets are planning estimates: the part datasheets and the governing standard decide.",
    ]
