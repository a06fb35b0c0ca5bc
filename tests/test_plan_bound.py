"""The cascade search bound: a warning only when the bounded trial may have missed a better plan.

The reference is an exhaustive search, written here without the planner: every
R, N and output divider of a small two-PLL cascade, scored on the objective's
first four criteria (docs/planning.md: feasibility, worst synthesis error,
fractional-N count, PFD product) with Fractions.
"""

from __future__ import annotations

from fractions import Fraction

import pytest

from clockplan.boardfile import parse_board
from clockplan.plan.board_planner import PlanOptions, SubPlan, _proven_criteria, plan_board
from clockplan.plan.objective import Score
from clockplan.plan.output import plan_findings

MHZ = 1_000_000

# Invented for this test: a small integer-N PLL feeding another, whose two outputs make the
# 10GBASE-R reference, 10.3125 GBd / 66 = 156.25 MHz (IEEE 802.3 clause 49), and a second clock.
CASCADE = """
[board]
name = "cascade"

[[reference]]
id = "ref"
frequency = "10 MHz"
# An ideal reference: no error band, so the planner keeps no margin from the range edges and the
# exhaustive search below (which knows no margin) stays the reference (docs/planning.md, Ranges).
kind = "xo"
tolerance = "±0 ppm"

[[pll]]
id = "up"
input = "ref"
vco = ["300 MHz", "400 MHz"]
pfd = ["2.5 MHz", "10 MHz"]
r = [1, 4]
n = [30, 160]
mode = "integer"
outputs.o = {{ divider = [1, 16] }}

[[pll]]
id = "down"
input = "up.o"
input_range = ["5 MHz", "100 MHz"]
vco = ["600 MHz", "800 MHz"]
pfd = ["5 MHz", "25 MHz"]
r = [1, 4]
n = [24, 160]
mode = "integer"
outputs.a = {{ divider = [1, 16] }}
outputs.b = {{ divider = [1, 16] }}

[[consumer]]
id = "serdes"
source = "down.a"
frequency = "156.25 MHz"

[[consumer]]
id = "other"
source = "down.b"
frequency = "{other}"
"""

REF, UP_VCO, UP_PFD, UP_R, UP_N, UP_D = 10 * MHZ, (300 * MHZ, 400 * MHZ), (Fraction(5, 2) * MHZ, 10 * MHZ), 4, (30, 160), 16
DOWN_IN, DOWN_VCO, DOWN_PFD, DOWN_R, DOWN_N, DOWN_D = (5 * MHZ, 100 * MHZ), (600 * MHZ, 800 * MHZ), (5 * MHZ, 25 * MHZ), 4, (24, 160), 16


def _best_error(vco: Fraction, target: Fraction) -> Fraction:
    """Smallest |vco / D / target - 1| over D in 1..16: the error is monotonic on each side of vco / target."""
    x = vco / target
    candidates = {min(max(int(x), 1), DOWN_D), min(max(int(x) + 1, 1), DOWN_D)}
    return min(abs(vco / d / target - 1) for d in candidates)


def exhaustive_key(targets: tuple[Fraction, Fraction]) -> tuple:
    """The best (worst error, -PFD product) over every setting of the cascade (all integer-N, all feasible here)."""
    downstream: dict[Fraction, tuple] = {}
    best = None
    for r1 in range(1, UP_R + 1):
        pfd1 = Fraction(REF, r1)
        if not UP_PFD[0] <= pfd1 <= UP_PFD[1]:
            continue
        first, last = max(UP_N[0], -(-UP_VCO[0] // pfd1)), min(UP_N[1], UP_VCO[1] // pfd1)
        for n1 in range(int(first), int(last) + 1):
            vco1 = pfd1 * n1
            if not UP_VCO[0] <= vco1 <= UP_VCO[1]:
                continue
            for d1 in range(1, UP_D + 1):
                f = vco1 / d1
                if not DOWN_IN[0] <= f <= DOWN_IN[1]:
                    continue
                if f not in downstream:
                    downstream[f] = _downstream_best(f, targets)
                below = downstream[f]
                if below is None:
                    continue
                key = (below[0], below[1] * pfd1)  # (worst error, -PFD product)
                best = key if best is None or key < best else best
    return best


def _downstream_best(f: Fraction, targets: tuple[Fraction, Fraction]) -> tuple | None:
    best = None
    for r2 in range(1, DOWN_R + 1):
        pfd2 = f / r2
        if not DOWN_PFD[0] <= pfd2 <= DOWN_PFD[1]:
            continue
        # Only the N that put the VCO in range (every other N is refused below anyway).
        first, last = max(DOWN_N[0], -(-DOWN_VCO[0] // pfd2)), min(DOWN_N[1], DOWN_VCO[1] // pfd2)
        for n2 in range(int(first), int(last) + 1):
            vco2 = pfd2 * n2
            if not DOWN_VCO[0] <= vco2 <= DOWN_VCO[1]:
                continue
            key = (max(_best_error(vco2, t) for t in targets), -pfd2)
            best = key if best is None or key < best else best
    return best


def _plan(other: str, **options):
    board = parse_board(CASCADE.format(other=other), "cascade.toml")
    return plan_board(board, PlanOptions(max_cascade_solves=1, cascade_patience=1, **options))


def _findings(plan):
    from clockplan.analysis import analyze

    return [f for f in plan_findings(plan, analyze(plan.board, plan.settings)) if f.code == "search-bound"]


def test_a_cut_trial_whose_plans_are_exact_is_info_and_the_plan_is_best_on_the_leading_criteria():
    # 156.25 MHz and 125 MHz (1000BASE-X reference, IEEE 802.3 clause 36) share a 625 MHz VCO.
    plan = _plan("125 MHz")
    findings = _findings(plan)
    assert findings and all(f.severity.value == "info" for f in findings)
    assert "criteria 1-5" in findings[0].message and not plan.notes
    worst, pfd = exhaustive_key((Fraction(156_250_000), Fraction(125 * MHZ)))
    score = plan.best.score
    # Exhaustive search over every R, N and divider: the planner's plan ties it on criteria 1-4.
    assert score.feasible and score.fractional == 0
    assert (score.worst_error, -score.pfd_product) == (worst, pfd) == (0, -(10 * MHZ) * (25 * MHZ))


def test_a_cut_trial_without_an_exact_plan_stays_a_warning():
    # 156.25 MHz and 100 MHz need a 2.5 GHz multiple: no exact plan exists in 600-800 MHz.
    plan = _plan("100 MHz")
    worst, _ = exhaustive_key((Fraction(156_250_000), Fraction(100 * MHZ)))
    assert worst > 0  # exhaustive search: nothing can be exact, so nothing proves the trial sufficient
    findings = _findings(plan)
    assert findings and all(f.severity.value == "warning" for f in findings)
    assert "an untried one may give a better plan" in findings[0].message
    assert plan.best.score.worst_error >= worst


def _sub(worst=Fraction(0), fractional=0, pfd=Fraction(25 * MHZ), plls=("down",)):
    from clockplan.parts import PllSetting

    return SubPlan(Score(worst_error=worst, fractional=fractional, pfd_product=pfd),
                   plls={p: PllSetting(1, Fraction(25), {"a": 4, "b": 5}) for p in plls})


@pytest.mark.parametrize("plans, keep, proven", [
    ([_sub()], 1, 5),                                     # exact, integer-N, top PFD: criteria 1-5
    ([_sub(pfd=Fraction(20 * MHZ))], 1, 3),               # below the PFD ceiling: only 1-3
    ([_sub(worst=Fraction(1, 10**6))], 1, 0),             # not exact: nothing proven
    ([_sub(fractional=1)], 1, 0),                         # fractional-N: nothing proven
    ([_sub()], 2, 0),                                     # two plans asked for, one found
    ([_sub(), _sub(pfd=Fraction(20 * MHZ))], 2, 3),       # the runner-up decides too
])
def test_the_rule_on_its_own(plans, keep, proven):
    board = parse_board(CASCADE.format(other="125 MHz"), "cascade.toml")
    assert _proven_criteria(plans, keep, board) == proven
