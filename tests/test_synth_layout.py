"""Block layouts: spare outputs, buffer chains and dividers, against brute force; the monotone cost the
search's bound rests on."""

from __future__ import annotations

import itertools

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from clockplan.synth.layout import block_layout, fan_for
from clockplan.synth.library import default_library

LIBRARY = default_library()


def _chain_loads(count: int, outputs: int) -> int:
    """Loads a chain of ``count`` buffers gives one clock: each feeds the next from one output (counted by hand)."""
    loads = 1
    for _ in range(count):
        loads = loads - 1 + outputs
    return loads


@pytest.mark.parametrize("loads", range(1, 30))
def test_buffer_count_is_the_fewest_that_reach_every_load(loads):
    fan = fan_for(loads, LIBRARY.buffers)
    if loads == 1:
        assert fan.count == 0
        return
    # Fewest parts first: no buffer template needs fewer buffers than the chosen one.
    fewest = min(next(k for k in itertools.count(1) if _chain_loads(k, b.outputs) >= loads) for b in LIBRARY.buffers)
    assert fan.count == fewest
    assert _chain_loads(fan.count, fan.buffer.outputs) >= loads > _chain_loads(fan.count - 1, fan.buffer.outputs)


def _brute_force_buffers(outputs: int, loads: list[int], eligible: list[bool]) -> tuple:
    """Every way of giving the spare outputs to the classes; the cheapest buffers (cost key)."""
    spare = outputs - len(loads)
    best = None
    ranges = [range(0, min(spare, load - 1) + 1) if ok else range(1) for load, ok in zip(loads, eligible)]
    for extra in itertools.product(*ranges):
        if sum(extra) > spare:
            continue
        total = (0, 0, 0)
        for load, e in zip(loads, extra):
            key = fan_for(load - e, LIBRARY.buffers).cost.key()
            total = tuple(a + b for a, b in zip(total, key))
        best = total if best is None or total < best else best
    return best


@settings(max_examples=80, deadline=None, derandomize=True)
@given(st.integers(1, 8), st.lists(st.tuples(st.integers(1, 9), st.booleans()), min_size=1, max_size=6))
def test_spare_outputs_go_where_they_save_most(outputs, rows):
    if len(rows) > outputs:
        assert block_layout(outputs, [(i, n, low) for i, (n, low) in enumerate(rows)], [], LIBRARY.buffers, LIBRARY.divider) is None
        return
    own = [(i, n, low) for i, (n, low) in enumerate(rows)]
    layout = block_layout(outputs, own, [], LIBRARY.buffers, LIBRARY.divider)
    buffers = tuple(sum(x) for x in zip(*(plan.fan.cost.key() for plan in layout.own)))
    assert buffers == _brute_force_buffers(outputs, [n for n, _ in rows], [not low for _, low in rows])
    assert sum(plan.outputs for plan in layout.own) <= outputs


@settings(max_examples=80, deadline=None, derandomize=True)
@given(st.integers(2, 8), st.lists(st.integers(1, 6), min_size=1, max_size=5), st.integers(1, 6), st.booleans())
def test_adding_a_class_never_lowers_the_cost(outputs, counts, added, attach):
    # The search's lower bound rests on this: a block only gets dearer as classes join it.
    own = [(i, n, False) for i, n in enumerate(counts)]
    before = block_layout(outputs, own, [], LIBRARY.buffers, LIBRARY.divider)
    if attach:
        after = block_layout(outputs, own, [(len(counts), 0, 2, added)], LIBRARY.buffers, LIBRARY.divider)
    else:
        after = block_layout(outputs, own + [(len(counts), added, False)], [], LIBRARY.buffers, LIBRARY.divider)
    if before is None:
        assert after is None
    elif after is not None:
        assert after.cost.key() >= before.cost.key()


def test_an_attached_class_costs_a_divider_and_a_load_on_its_parent():
    layout = block_layout(2, [(0, 1, False)], [(1, 0, 4, 1)], LIBRARY.buffers, LIBRARY.divider)
    # The parent's clock now has two loads (its consumer and the divider): a spare output takes one.
    assert layout.own[0].outputs == 2 and layout.own[0].fan.count == 0
    assert layout.cost.parts == 1 and layout.cost.power_w == LIBRARY.divider.power_w


def test_a_block_without_an_allowed_divider_cannot_divide():
    assert block_layout(2, [(0, 1, True)], [], LIBRARY.buffers, None) is None
